// libFuzzer target: the data CSV reader (parse_csv, the text entry point of read_csv), under
// each column-kind choice, with incomplete rows dropped or refused, and with a column named "a"
// binned and a column named "n" read as counts.
#include <cstddef>
#include <cstdint>
#include <string>

#include "covey/core/error.hpp"
#include "covey/data/data.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size == 0) return 0;
  // The first byte picks the options, the rest is the file.
  const std::uint8_t mode = data[0];
  covey::CsvOptions options;
  options.kind = mode % 3 == 0   ? covey::ColumnKindChoice::kInfer
                 : mode % 3 == 1 ? covey::ColumnKindChoice::kDiscrete
                                 : covey::ColumnKindChoice::kGaussian;
  options.drop_incomplete = (mode & 0x10) != 0;
  options.allow_constant = (mode & 0x20) != 0;
  if (mode & 0x40) options.bins = {covey::parse_bin_spec("a=quantile:3")};
  if (mode & 0x80) options.count_column = "n";
  options.memory_limit = std::uint64_t{1} << 28;  // counts can ask for much
  try {
    covey::DataTable table = covey::parse_csv(
        std::string(reinterpret_cast<const char*>(data + 1), size - 1), "fuzz.csv", options);
    // A table that was accepted must be consistent (column by column: a table may be mixed).
    for (int v = 0; v < table.num_variables(); ++v) {
      if (table.variables()[v].kind == covey::VariableKind::kDiscrete) {
        if (table.codes(v).size() != table.num_rows()) __builtin_trap();
        for (auto c : table.codes(v))
          if (c >= table.num_levels(v)) __builtin_trap();
      } else if (table.values(v).size() != table.num_rows()) {
        __builtin_trap();
      }
    }
  } catch (const covey::InputError&) {
  } catch (const covey::ResourceError&) {
  }
  return 0;
}
