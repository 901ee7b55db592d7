#include "covey/data/data.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <memory>
#include <string_view>
#include <unordered_map>
#include <unordered_set>

#include "core/csv_tokenizer.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"

namespace covey {

DataTable DataTable::discrete(std::vector<Variable> variables,
                              std::vector<std::vector<std::uint16_t>> codes) {
  if (codes.size() != variables.size())
    throw InputError("data table: " + std::to_string(codes.size()) + " columns for " +
                     std::to_string(variables.size()) + " variables");
  DataTable t;
  t.rows_ = codes.empty() ? 0 : codes[0].size();
  for (std::size_t v = 0; v < codes.size(); ++v) {
    variables[v].kind = VariableKind::kDiscrete;
    if (codes[v].size() != t.rows_) throw InputError("data table: columns differ in length");
    const std::size_t r = variables[v].levels.size();
    if (r == 0 || r > std::size_t(kMaxLevels))
      throw InputError("data table: column '" + variables[v].name + "' has " + std::to_string(r) +
                       " levels");
    for (std::uint16_t c : codes[v])
      if (c >= r) throw InputError("data table: code out of range in '" + variables[v].name + "'");
  }
  t.kind_ = VariableKind::kDiscrete;
  t.variables_ = std::move(variables);
  t.codes_ = std::move(codes);
  return t;
}

DataTable DataTable::gaussian(std::vector<std::string> names,
                              std::vector<std::vector<double>> values) {
  if (values.size() != names.size())
    throw InputError("data table: " + std::to_string(values.size()) + " columns for " +
                     std::to_string(names.size()) + " variables");
  DataTable t;
  t.rows_ = values.empty() ? 0 : values[0].size();
  for (std::size_t v = 0; v < values.size(); ++v) {
    if (values[v].size() != t.rows_) throw InputError("data table: columns differ in length");
    for (double x : values[v])
      if (!std::isfinite(x)) throw InputError("data table: non-finite value in '" + names[v] + "'");
    t.variables_.push_back({std::move(names[v]), VariableKind::kGaussian, {}});
  }
  t.kind_ = VariableKind::kGaussian;
  t.values_ = std::move(values);
  return t;
}

namespace {

// A finite number in the whole of [b, e) (an optional leading '+' is accepted).
bool parse_number(const char* b, const char* e, double& out) {
  if (b < e && *b == '+') ++b;
  if (b == e) return false;
  auto [ptr, ec] = std::from_chars(b, e, out);
  return ec == std::errc() && ptr == e && std::isfinite(out);
}

// Levels of one discrete column while reading: codes in first-appearance order, found by a short
// linear scan while there are few levels and by hashing beyond that. Labels of up to 7 bytes are
// compared as one packed integer (bytes plus length), the common case of short labels.
class LevelIndex {
 public:
  // Returns the code of `text`, adding it when new; -1 when the column has too many levels.
  int code_of(std::string_view text) {
    if (map_.empty()) {
      const std::uint64_t key = pack(text);
      for (std::size_t i = 0; i < levels_.size(); ++i)
        if (packed_[i] == key && (key != kLong || levels_[i] == text)) return static_cast<int>(i);
    } else {
      auto it = map_.find(text);
      if (it != map_.end()) return it->second;
    }
    if (levels_.size() >= std::size_t(kMaxLevels)) return -1;
    levels_.push_back(text);
    packed_.push_back(pack(text));
    const int code = static_cast<int>(levels_.size() - 1);
    if (!map_.empty() || levels_.size() > kLinearLevels) {
      if (map_.empty())
        for (std::size_t i = 0; i < levels_.size(); ++i) map_.emplace(levels_[i], int(i));
      else
        map_.emplace(text, code);
    }
    return code;
  }
  const std::vector<std::string_view>& levels() const { return levels_; }

 private:
  static constexpr std::size_t kLinearLevels = 16;
  static constexpr std::uint64_t kLong = ~std::uint64_t{0};  // longer labels: compare the text
  static std::uint64_t pack(std::string_view text) {
    if (text.size() > 7) return kLong;
    std::uint64_t key = 0;
    std::memcpy(&key, text.data(), text.size());
    return key << 8 | text.size();
  }
  std::vector<std::string_view> levels_;
  std::vector<std::uint64_t> packed_;
  std::unordered_map<std::string_view, int> map_;
};

std::string list_names(const std::vector<std::string>& names) {
  std::string out;
  const std::size_t shown = std::min<std::size_t>(names.size(), 8);
  for (std::size_t i = 0; i < shown; ++i) out += (i ? ", '" : "'") + names[i] + "'";
  if (names.size() > shown) out += " and " + std::to_string(names.size() - shown) + " more";
  return out;
}

std::string show_cell(std::string_view text) {
  std::string s(text.substr(0, 40));
  if (text.size() > 40) s += "...";
  return "'" + s + "'";
}

struct Column {
  std::string name;
  bool numeric = true;  // every present cell so far is a finite number
  std::vector<double> values;
  long first_label_line = 0;  // first line with a cell that is not a number
  std::string first_label;
  std::vector<std::uint16_t> codes;
};

}  // namespace

void sort_levels(std::vector<std::string>& levels) {
  std::vector<double> numbers(levels.size());
  bool all_numeric = true;
  for (std::size_t i = 0; i < levels.size() && all_numeric; ++i)
    all_numeric = parse_number(levels[i].data(), levels[i].data() + levels[i].size(), numbers[i]);
  if (!all_numeric) {
    std::sort(levels.begin(), levels.end());
    return;
  }
  std::vector<std::size_t> order(levels.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    return numbers[a] != numbers[b] ? numbers[a] < numbers[b] : levels[a] < levels[b];
  });
  std::vector<std::string> sorted;
  sorted.reserve(levels.size());
  for (std::size_t i : order) sorted.push_back(std::move(levels[i]));
  levels = std::move(sorted);
}

DataTable parse_csv(std::string text, const std::string& name, const CsvOptions& options) {
  char* const begin = text.data();
  char* const end = begin + text.size();
  char* const start = csv::skip_bom(begin, end);
  csv::Tokenizer tok(start, end, name);
  auto fail = [&](long line, const std::string& msg) {
    return InputError(name + ":" + std::to_string(line) + ": " + msg);
  };

  // Header: the first non-blank row.
  std::vector<Column> columns;
  {
    csv::Field f;
    for (;;) {
      if (tok.at_end()) throw InputError(name + ": empty file (expected a header row of names)");
      const long line = tok.line();
      columns.clear();
      bool last = false;
      while (!last) {
        last = tok.next(f);
        Column c;
        c.name = std::string(f.unescape());
        columns.push_back(std::move(c));
      }
      if (columns.size() == 1 && columns[0].name.empty() && !f.quoted) continue;  // blank line
      std::unordered_set<std::string> seen;
      for (std::size_t j = 0; j < columns.size(); ++j) {
        if (columns[j].name.empty())
          throw fail(line, "column " + std::to_string(j + 1) + " of the header has no name");
        if (!seen.insert(columns[j].name).second)
          throw fail(line, "column name '" + columns[j].name + "' appears twice in the header");
      }
      break;
    }
  }
  const std::size_t n = columns.size();
  const bool infer_numbers = options.kind != ColumnKindChoice::kDiscrete;
  const std::size_t row_bound = static_cast<std::size_t>(std::count(start, end, '\n')) + 1;
  if (infer_numbers)
    for (Column& c : columns) c.values.reserve(row_bound);

  // Pass 1: structure, missing cells, numbers. Values of numeric columns are kept; the starts of
  // the kept rows are recorded for pass 2, which codes the label columns.
  std::vector<char*> kept_rows;
  std::size_t dropped = 0;
  std::vector<csv::Field> fields(n);
  while (!tok.at_end()) {
    char* const row_start = tok.position();
    const long line = tok.line();
    std::size_t count = 0;
    bool last = false;
    csv::Field extra;
    while (!last) {
      last = tok.next(count < n ? fields[count] : extra);
      ++count;
    }
    if (count == 1 && fields[0].begin == fields[0].end && !fields[0].quoted) continue;  // blank
    if (count != n)
      throw fail(line, "row has " + std::to_string(count) + " fields but the header has " +
                           std::to_string(n));
    bool complete = true;
    for (std::size_t j = 0; j < n; ++j) {
      if (fields[j].missing()) {
        if (!options.drop_incomplete)
          throw fail(line, "missing value in column '" + columns[j].name + "' (data row " +
                               std::to_string(kept_rows.size() + dropped + 1) +
                               "); use --drop-incomplete to drop incomplete rows");
        complete = false;
        break;
      }
    }
    if (!complete) {
      ++dropped;
      continue;
    }
    if (infer_numbers) {
      for (std::size_t j = 0; j < n; ++j) {
        Column& c = columns[j];
        if (!c.numeric) continue;
        double x;
        if (!fields[j].escaped && parse_number(fields[j].begin, fields[j].end, x)) {
          c.values.push_back(x);
          continue;
        }
        if (options.kind == ColumnKindChoice::kGaussian)
          throw fail(line, "column '" + c.name + "': " + show_cell(fields[j].view()) +
                               " is not a finite number (--gaussian)");
        c.numeric = false;
        c.first_label_line = line;
        c.first_label = show_cell(fields[j].view());
        std::vector<double>().swap(c.values);
      }
    }
    kept_rows.push_back(row_start);
  }
  const std::size_t rows = kept_rows.size();
  if (rows == 0)
    throw InputError(dropped ? name + ": every one of the " + std::to_string(dropped) +
                                   " data rows has a missing cell"
                             : name + ": no data rows after the header");

  // Kinds: the table must be all numbers or all labels.
  bool gaussian = false;
  if (options.kind == ColumnKindChoice::kGaussian) {
    gaussian = true;
  } else if (options.kind == ColumnKindChoice::kInfer) {
    std::vector<std::string> numeric, labels;
    const Column* example = nullptr;
    for (const Column& c : columns) {
      (c.numeric ? numeric : labels).push_back(c.name);
      if (!c.numeric && !example) example = &c;
    }
    if (!numeric.empty() && !labels.empty())
      throw InputError(
          name + ": the table mixes kinds: numeric columns " + list_names(numeric) +
          "; label columns " + list_names(labels) + " (e.g. " + example->first_label + " on line " +
          std::to_string(example->first_label_line) +
          "); covey scores all-discrete (BDeu) or all-Gaussian (BGe) tables: use --discrete to "
          "read every column as labels, or fix the label columns");
    gaussian = labels.empty();
  }

  if (gaussian) {
    std::vector<std::string> names;
    std::vector<std::vector<double>> values;
    for (Column& c : columns) {
      names.push_back(std::move(c.name));
      values.push_back(std::move(c.values));
    }
    DataTable t = DataTable::gaussian(std::move(names), std::move(values));
    t.set_provenance(name, dropped);
    return t;
  }

  // Pass 2: code the label columns over the kept rows, in first-appearance order first.
  for (Column& c : columns) {
    std::vector<double>().swap(c.values);
    c.codes.reserve(rows);
  }
  std::vector<LevelIndex> index(n);
  for (std::size_t i = 0; i < rows; ++i) {
    tok.seek(kept_rows[i]);
    for (std::size_t j = 0; j < n; ++j) {
      csv::Field f;
      tok.next(f);
      const int code = index[j].code_of(f.unescape());
      if (code < 0)
        throw InputError(name + ": column '" + columns[j].name + "' has more than " +
                         std::to_string(kMaxLevels) + " distinct labels");
      columns[j].codes.push_back(static_cast<std::uint16_t>(code));
    }
  }
  // Recode to the sorted level order.
  std::vector<Variable> variables(n);
  std::vector<std::vector<std::uint16_t>> codes(n);
  for (std::size_t j = 0; j < n; ++j) {
    const auto& seen = index[j].levels();
    std::vector<std::string> levels(seen.begin(), seen.end());
    if (levels.size() == 1 && !options.allow_constant)
      throw InputError(name + ": column '" + columns[j].name + "' has a single level '" +
                       levels[0] + "' (a constant column; use --allow-constant to keep it)");
    sort_levels(levels);
    std::unordered_map<std::string_view, std::uint16_t> rank;
    for (std::size_t k = 0; k < levels.size(); ++k) rank.emplace(levels[k], std::uint16_t(k));
    std::vector<std::uint16_t> recode(seen.size());
    for (std::size_t k = 0; k < seen.size(); ++k) recode[k] = rank.at(seen[k]);
    for (std::uint16_t& code : columns[j].codes) code = recode[code];
    variables[j] = {std::move(columns[j].name), VariableKind::kDiscrete, std::move(levels)};
    codes[j] = std::move(columns[j].codes);
  }
  DataTable t = DataTable::discrete(std::move(variables), std::move(codes));
  t.set_provenance(name, dropped);
  return t;
}

double csv_load_bytes(double file_bytes) {
  return 2.0 * file_bytes;
}

DataTable read_csv(const std::string& path, const CsvOptions& options) {
  require_readable(path);
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> file(std::fopen(path.c_str(), "rb"), std::fclose);
  if (!file) throw InputError(path + ": cannot open for reading");
  std::string text;
  char chunk[1 << 16];
  std::fseek(file.get(), 0, SEEK_END);
  const long size = std::ftell(file.get());
  std::fseek(file.get(), 0, SEEK_SET);
  if (size > 0) {
    require_memory(csv_load_bytes(static_cast<double>(size)), options.memory_limit,
                   "reading " + path + " (" + format_bytes(static_cast<double>(size)) + ")",
                   "fewer rows or columns per file shrink it, or raise --memory-limit");
    text.reserve(static_cast<std::size_t>(size));
  }
  for (;;) {
    const std::size_t got = std::fread(chunk, 1, sizeof chunk, file.get());
    text.append(chunk, got);
    if (got < sizeof chunk) break;
  }
  if (std::ferror(file.get())) throw InputError(path + ": read error");
  return parse_csv(std::move(text), path, options);
}

}  // namespace covey
