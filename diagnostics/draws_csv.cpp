// Reading draws of named quantities from CSV (see draws_csv.hpp for the layout).
#include "covey/diagnostics/draws_csv.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <fstream>
#include <iterator>
#include <map>
#include <numeric>
#include <optional>

#include "core/csv_tokenizer.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"

namespace covey {

namespace {

// Rows of the file through the shared tokenizer, with the line of the current row for messages.
class CsvReader {
 public:
  explicit CsvReader(const std::string& path) : path_(path) {
    require_readable(path);
    std::ifstream in(path, std::ios::binary);
    if (!in) throw FileError(path + ": cannot open for reading");
    text_.assign(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
    char* const begin = text_.data();
    char* const end = begin + text_.size();
    tokenizer_.emplace(csv::skip_bom(begin, end), end, path_);
  }

  // Reads the next non-blank row; false at the end of the file.
  bool next(std::vector<std::string>& fields) { return tokenizer_->next_row(fields, line_number_); }

  long line_number() const { return line_number_; }

  [[noreturn]] void fail(const std::string& what) const {
    throw InputError(path_ + ":" + std::to_string(line_number_) + ": " + what);
  }

 private:
  std::string path_;
  std::string text_;
  std::optional<csv::Tokenizer> tokenizer_;
  long line_number_ = 0;
};

std::string_view without_plus(const std::string& text) {
  std::string_view v(text);
  if (v.size() > 1 && v[0] == '+') v.remove_prefix(1);
  return v;
}

double parse_value(const CsvReader& reader, const std::string& column, const std::string& text) {
  const std::string_view v = without_plus(text);
  double value = 0;
  const auto [end, ec] = std::from_chars(v.data(), v.data() + v.size(), value);
  if (ec != std::errc() || end != v.data() + v.size() || v.empty())
    reader.fail("column '" + column + "': '" + text + "' is not a number");
  if (!std::isfinite(value)) reader.fail("column '" + column + "': '" + text + "' is not finite");
  return value;
}

long long parse_integer(const CsvReader& reader, const std::string& column,
                        const std::string& text) {
  const std::string_view v = without_plus(text);
  long long value = 0;
  const auto [end, ec] = std::from_chars(v.data(), v.data() + v.size(), value);
  if (ec != std::errc() || end != v.data() + v.size() || v.empty())
    reader.fail("column '" + column + "': '" + text + "' is not an integer");
  return value;
}

struct Row {
  long long chain;
  long long iteration;
  long line;
  std::size_t offset;  // of the row's quantity values in the flat value store
};

struct Header {
  std::size_t chain_column = 0;
  std::size_t iteration_column = 0;
  std::vector<std::size_t> quantity_columns;
  std::vector<std::string> names;  // of all columns
};

Header read_header(CsvReader& reader, const std::string& path) {
  Header h;
  if (!reader.next(h.names))
    throw InputError(path +
                     ": empty file; expected a header line naming the columns chain, "
                     "iteration and one column per quantity");
  std::map<std::string, std::size_t> seen;
  for (std::size_t c = 0; c < h.names.size(); ++c) {
    if (h.names[c].empty()) reader.fail("column " + std::to_string(c + 1) + " has no name");
    if (!seen.emplace(h.names[c], c).second)
      reader.fail("column '" + h.names[c] + "' appears twice in the header");
  }
  // R's posterior names them .chain and .iteration (with a .draw column numbering all draws),
  // as `covey export --edge-draws` writes them.
  const bool dotted = seen.count(".chain") && seen.count(".iteration");
  const std::string chain = dotted ? ".chain" : "chain",
                    iteration = dotted ? ".iteration" : "iteration";
  for (const std::string& required : {chain, iteration})
    if (!seen.count(required))
      reader.fail("no column '" + required +
                  "' in the header (expected chain, iteration and one column per quantity)");
  h.chain_column = seen[chain];
  h.iteration_column = seen[iteration];
  for (std::size_t c = 0; c < h.names.size(); ++c)
    if (c != h.chain_column && c != h.iteration_column && !(dotted && h.names[c] == ".draw"))
      h.quantity_columns.push_back(c);
  if (h.quantity_columns.empty()) reader.fail("no quantity columns besides chain and iteration");
  return h;
}

}  // namespace

DrawsTable read_draws_csv(const std::string& path) {
  CsvReader reader(path);
  const Header header = read_header(reader, path);
  const std::size_t q = header.quantity_columns.size();

  std::vector<Row> rows;
  std::vector<double> store;  // row-major quantity values
  std::vector<std::string> fields;
  while (reader.next(fields)) {
    if (fields.size() != header.names.size())
      reader.fail(std::to_string(fields.size()) + " fields, but the header has " +
                  std::to_string(header.names.size()));
    Row row{parse_integer(reader, "chain", fields[header.chain_column]),
            parse_integer(reader, "iteration", fields[header.iteration_column]),
            reader.line_number(), store.size()};
    for (std::size_t c : header.quantity_columns)
      store.push_back(parse_value(reader, header.names[c], fields[c]));
    rows.push_back(row);
  }
  if (rows.empty()) throw InputError(path + ": no draws after the header");

  std::sort(rows.begin(), rows.end(), [](const Row& a, const Row& b) {
    return a.chain != b.chain ? a.chain < b.chain : a.iteration < b.iteration;
  });
  DrawsTable table;
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (i > 0 && rows[i].chain == rows[i - 1].chain && rows[i].iteration == rows[i - 1].iteration)
      throw InputError(path + ":" + std::to_string(std::max(rows[i].line, rows[i - 1].line)) +
                       ": chain " + std::to_string(rows[i].chain) + " iteration " +
                       std::to_string(rows[i].iteration) + " appears twice (also on line " +
                       std::to_string(std::min(rows[i].line, rows[i - 1].line)) + ")");
    if (i == 0 || rows[i].chain != rows[i - 1].chain) table.chain_labels.push_back(rows[i].chain);
  }
  table.chains = static_cast<int>(table.chain_labels.size());
  std::vector<std::size_t> lengths(table.chains, 0);
  for (std::size_t i = 0, c = 0; i < rows.size(); ++i) {
    if (rows[i].chain != table.chain_labels[c]) ++c;
    ++lengths[c];
  }
  for (int c = 1; c < table.chains; ++c)
    if (lengths[c] != lengths[0])
      throw InputError(path + ": chain " + std::to_string(table.chain_labels[c]) + " has " +
                       std::to_string(lengths[c]) + " draws but chain " +
                       std::to_string(table.chain_labels[0]) + " has " +
                       std::to_string(lengths[0]) + "; all chains need the same number");
  table.iterations = static_cast<int>(lengths[0]);
  check_draws_shape(table.chains, table.iterations, path);

  for (std::size_t c : header.quantity_columns) table.names.push_back(header.names[c]);
  table.columns.assign(q, std::vector<double>(rows.size()));
  for (std::size_t i = 0; i < rows.size(); ++i)  // rows are in chain-major order now
    for (std::size_t k = 0; k < q; ++k) table.columns[k][i] = store[rows[i].offset + k];
  return table;
}

}  // namespace covey
