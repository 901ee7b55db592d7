// libFuzzer target: the draws CSV reader of `covey check --draws` (read_draws_csv).
#include "covey/diagnostics/draws_csv.hpp"
#include "fuzz_util.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  return covey::fuzz::run_reader(data, size, ".csv", [](const std::string& path) {
    covey::DrawsTable draws = covey::read_draws_csv(path);
    for (const auto& column : draws.columns)
      if (column.size() != static_cast<std::size_t>(draws.chains) * draws.iterations)
        __builtin_trap();
  });
}
