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

DataTable DataTable::mixed(std::vector<Variable> variables,
                           std::vector<std::vector<std::uint16_t>> codes,
                           std::vector<std::vector<double>> values) {
  const std::size_t n = variables.size();
  if (codes.size() != n || values.size() != n)
    throw InputError("data table: columns do not match the variables");
  std::vector<Variable> discrete_variables;
  std::vector<std::vector<std::uint16_t>> discrete_codes;
  std::vector<std::string> gaussian_names;
  std::vector<std::vector<double>> gaussian_values;
  for (std::size_t v = 0; v < n; ++v) {
    if (variables[v].kind == VariableKind::kDiscrete) {
      discrete_variables.push_back(variables[v]);
      discrete_codes.push_back(codes[v]);
    } else {
      gaussian_names.push_back(variables[v].name);
      gaussian_values.push_back(values[v]);
    }
  }
  if (discrete_variables.empty() || gaussian_names.empty())
    throw InputError("data table: a mixed table needs columns of both kinds");
  // The single-kind factories check the columns; their row counts must agree.
  const DataTable d = discrete(std::move(discrete_variables), std::move(discrete_codes));
  const DataTable g = gaussian(std::move(gaussian_names), std::move(gaussian_values));
  if (d.num_rows() != g.num_rows()) throw InputError("data table: columns differ in length");
  DataTable t;
  t.rows_ = d.num_rows();
  t.mixed_ = true;
  t.variables_ = std::move(variables);
  for (std::size_t v = 0; v < n; ++v) {
    if (t.variables_[v].kind == VariableKind::kGaussian) {
      t.variables_[v].levels.clear();
      codes[v].clear();
    } else {
      values[v].clear();
    }
  }
  t.codes_ = std::move(codes);
  t.values_ = std::move(values);
  return t;
}

namespace {

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

// What the reader does with a column.
enum class Rule {
  kInfer,    // numbers if every cell is an unquoted number, else labels
  kLabels,   // labels whatever the cells hold (--discrete, --discrete-columns)
  kNumbers,  // finite numbers required (--gaussian, a binned column, the count column)
  kSkip,     // R's row names
};

struct Column {
  std::string name;
  Rule rule = Rule::kInfer;
  std::string because;           // the option behind kLabels or kNumbers, for messages
  const BinSpec* bin = nullptr;  // cut into bins
  bool is_count = false;
  bool numeric = true;  // every present cell so far is a number
  std::vector<double> values;
  long first_label_line = 0;  // first line with a cell that is not a number
  std::string first_label;
  bool quoted_number = false;  // the first label was a quoted number
  long first_non_finite_line = 0;
  std::string first_non_finite;
  std::vector<std::uint16_t> codes;
  std::vector<std::string> levels;  // binned columns, in bin order
  std::string origin;               // what the column became
  bool is_variable() const { return rule != Rule::kSkip && !is_count; }
};

enum class NumberText { kNotNumber, kFinite, kNonFinite };

// Whether [b, e) is a number (an optional leading '+' is accepted); inf, nan and numbers beyond
// the double range are numbers, but not finite ones.
NumberText read_number(const char* b, const char* e, double& out) {
  if (b < e && *b == '+') ++b;
  if (b == e) return NumberText::kNotNumber;
  auto [ptr, ec] = std::from_chars(b, e, out);
  if (ptr != e) return NumberText::kNotNumber;
  if (ec == std::errc::result_out_of_range) return NumberText::kNonFinite;
  if (ec != std::errc()) return NumberText::kNotNumber;
  return std::isfinite(out) ? NumberText::kFinite : NumberText::kNonFinite;
}

// A number written with a decimal comma ("80,2", as R's write.csv2 writes with ';' between
// fields): read as one with a decimal point.
NumberText read_decimal_comma(const char* b, const char* e, double& out) {
  char buffer[64];
  const std::size_t size = static_cast<std::size_t>(e - b);
  if (size >= sizeof buffer || std::count(b, e, ',') != 1 || std::find(b, e, '.') != e)
    return NumberText::kNotNumber;
  std::copy(b, e, buffer);
  *std::find(buffer, buffer + size, ',') = '.';
  return read_number(buffer, buffer + size, out);
}

// The shortest text that reads back as x (distinct edges never print alike).
std::string format_edge(double x) {
  char text[32];
  const auto [end, ec] = std::to_chars(text, text + sizeof text, x);
  return ec == std::errc() ? std::string(text, end) : std::to_string(x);
}

char choose_delimiter(const CsvOptions& options, const char* begin, const char* end) {
  if (options.delimiter == 0) return csv::detect_delimiter(begin, end);
  if (options.delimiter == '"' || options.delimiter == '\n' || options.delimiter == '\r')
    throw OptionError("{delimiter} cannot be a quote or a line break");
  return options.delimiter;
}

// The header: the first non-blank row. An empty first name (R's write.csv writes its row names
// under "") marks a column to skip.
std::vector<Column> read_header(csv::Tokenizer& tok, const std::string& name,
                                std::vector<std::string>& notes) {
  std::vector<Column> columns;
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
    if (columns.size() > 1 && columns[0].name.empty()) {
      columns[0].rule = Rule::kSkip;
      notes.push_back(name +
                      ": the first column has an empty name (row names, as R's write.csv "
                      "writes them): dropped");
    }
    std::unordered_set<std::string> seen;
    for (std::size_t j = 0; j < columns.size(); ++j) {
      if (columns[j].rule == Rule::kSkip) continue;
      if (columns[j].name.empty())
        throw InputError(name + ":" + std::to_string(line) + ": column " + std::to_string(j + 1) +
                         " of the header has no name");
      if (!seen.insert(columns[j].name).second)
        throw InputError(name + ":" + std::to_string(line) + ": column name '" + columns[j].name +
                         "' appears twice in the header");
    }
    return columns;
  }
}

// The option field behind a column's reason as the CSV reader records it ("--bin"), for messages
// that the CLI and the Python module spell in their own words (FieldMessage).
std::string field_of(const std::string& reason) {
  static const std::pair<const char*, const char*> kFields[] = {
      {"--discrete-columns", "{discrete_columns}"},
      {"--bin", "{bins}"},
      {"--count-column", "{count_column}"},
      {"--discrete", "{discrete}"},
      {"--gaussian", "{gaussian}"}};
  for (const auto& [flag, field] : kFields)
    if (reason == flag) return field;
  return reason;
}

Column& named_column(std::vector<Column>& columns, const std::string& column,
                     const std::string& option, const std::string& name) {
  for (Column& c : columns)
    if (c.rule != Rule::kSkip && c.name == column) return c;
  throw OptionError(field_of(option) + " names '" + column + "', which is not a column of " + name);
}

// Each column's rule from the options; conflicting choices are refused.
void assign_rules(std::vector<Column>& columns, const CsvOptions& options,
                  const std::string& name) {
  const bool gaussian = options.kind == ColumnKindChoice::kGaussian;
  for (Column& c : columns) {
    if (c.rule == Rule::kSkip) continue;
    if (options.kind == ColumnKindChoice::kDiscrete) {
      c.rule = Rule::kLabels;
      c.because = "--discrete";
    }
    if (gaussian) {
      c.rule = Rule::kNumbers;
      c.because = "--gaussian";
    }
  }
  auto claim = [&](Column& c, const std::string& option) {
    if (!c.because.empty() && c.because != "--discrete" && c.because != "--gaussian")
      throw OptionError("column '" + c.name + "' is named by both " + field_of(c.because) +
                        " and " + field_of(option));
    c.because = option;
  };
  for (const std::string& column : options.discrete_columns) {
    Column& c = named_column(columns, column, "--discrete-columns", name);
    if (gaussian) throw OptionError("{discrete_columns} and {gaussian} contradict each other");
    claim(c, "--discrete-columns");
    c.rule = Rule::kLabels;
  }
  for (const BinSpec& spec : options.bins) {
    Column& c = named_column(columns, spec.column, "--bin", name);
    if (gaussian) throw OptionError("{bins} and {gaussian} contradict each other");
    claim(c, "--bin");
    c.rule = Rule::kNumbers;
    c.bin = &spec;
  }
  if (!options.count_column.empty()) {
    Column& c = named_column(columns, options.count_column, "--count-column", name);
    claim(c, "--count-column");
    c.rule = Rule::kNumbers;
    c.is_count = true;
  }
  std::vector<std::string> variables;
  for (const Column& c : columns)
    if (c.is_variable()) variables.push_back(c.name);
  if (variables.size() < 2)
    throw InputError(name + ": " + std::to_string(variables.size()) + " variable" +
                     (variables.size() == 1 ? " ('" + variables[0] + "')" : std::string("s")) +
                     "; a network needs at least two variables (columns)");
}

// Reads one present cell of a column whose rule may need its number (pass 1).
void read_cell(Column& c, csv::Field& f, long line, const std::string& name, bool decimal_comma) {
  double x = 0;
  NumberText kind = read_number(f.begin, f.end, x);
  if (kind == NumberText::kNotNumber && decimal_comma) kind = read_decimal_comma(f.begin, f.end, x);
  if (c.rule == Rule::kNumbers) {
    if (kind == NumberText::kFinite && !f.escaped) return c.values.push_back(x);
    throw InputError(
        name + ":" + std::to_string(line) + ": column '" + c.name + "': " + show_cell(f.view()) +
        (kind == NumberText::kNonFinite ? " is not a finite value (" : " is not a number (") +
        c.because + ")");
  }
  if (kind == NumberText::kFinite && !f.quoted) return c.values.push_back(x);
  if (kind == NumberText::kNonFinite && !f.quoted) {
    if (!c.first_non_finite_line) {
      c.first_non_finite_line = line;
      c.first_non_finite = show_cell(f.view());
    }
    return c.values.push_back(x);
  }
  c.numeric = false;
  c.first_label_line = line;
  c.first_label = show_cell(f.view());
  c.quoted_number = f.quoted && kind != NumberText::kNotNumber;
  std::vector<double>().swap(c.values);
}

// Whether a variable column ends up Gaussian (numbers, not binned, not named discrete).
bool is_gaussian(const Column& c) {
  return c.rule != Rule::kLabels && c.numeric && !c.bin;
}

enum class Shape { kDiscrete, kGaussian, kMixed };

// The table's shape after pass 1: discrete when every variable is labels or binned, Gaussian when
// all are numbers, mixed otherwise (scored by the conditional-Gaussian score, with a note).
Shape decide_shape(const std::vector<Column>& columns, const std::string& name,
                   std::vector<std::string>& notes) {
  std::vector<std::string> numeric, discrete;
  for (const Column& c : columns) {
    if (!c.is_variable()) continue;
    if (c.rule == Rule::kInfer && c.numeric && c.first_non_finite_line)
      throw InputError(name + ":" + std::to_string(c.first_non_finite_line) + ": column '" +
                       c.name + "': " + c.first_non_finite +
                       " is not a finite value (numbers must be finite)");
    (is_gaussian(c) ? numeric : discrete).push_back(c.name);
  }
  if (discrete.empty()) return Shape::kGaussian;
  if (numeric.empty()) return Shape::kDiscrete;
  notes.push_back(name + ": a mixed table: Gaussian columns " + list_names(numeric) +
                  ", discrete columns " + list_names(discrete) +
                  "; a Gaussian column is never a parent of a discrete one (the "
                  "conditional-Gaussian score); --discrete-columns or --bin make numeric columns "
                  "discrete");
  return Shape::kMixed;
}

// Row weights from the count column: whole numbers >= 0, their sum the number of observations.
std::vector<std::size_t> row_counts(const Column& count, const std::string& name,
                                    std::uint64_t memory_limit, std::size_t variables,
                                    std::vector<std::string>& notes) {
  std::vector<std::size_t> counts(count.values.size());
  double total = 0;
  for (std::size_t i = 0; i < counts.size(); ++i) {
    const double x = count.values[i];
    if (x < 0 || x != std::floor(x) || x > 1e12)
      throw InputError(name + ": count column '" + count.name + "' holds " + format_edge(x) +
                       " in data row " + std::to_string(i + 1) +
                       " (counts are whole numbers >= 0)");
    counts[i] = static_cast<std::size_t>(x);
    total += x;
  }
  if (total == 0) throw InputError(name + ": count column '" + count.name + "' sums to 0");
  require_memory(total * static_cast<double>(variables) * 8, memory_limit,
                 "expanding the count column '" + count.name + "' to " +
                     std::to_string(static_cast<std::uint64_t>(total)) + " observations",
                 "raise {memory_limit}");
  notes.push_back(name + ": " + std::to_string(counts.size()) + " rows stand for " +
                  std::to_string(static_cast<std::uint64_t>(total)) +
                  " observations (count column '" + count.name + "')");
  return counts;
}

template <class T>
std::vector<T> expand_rows(const std::vector<T>& column, const std::vector<std::size_t>& counts) {
  if (counts.empty()) return column;
  std::vector<T> out;
  for (std::size_t i = 0; i < column.size(); ++i) out.insert(out.end(), counts[i], column[i]);
  return out;
}

// Cuts the values of a binned column into codes over its bins (empty bins dropped).
void cut_into_bins(Column& c, const std::string& name, std::vector<std::string>& notes) {
  const BinSpec& spec = *c.bin;
  std::vector<double> edges = spec.edges;
  std::vector<double> sorted = c.values;
  std::sort(sorted.begin(), sorted.end());
  if (spec.rule == BinSpec::Rule::kQuantile) {
    const double rows = static_cast<double>(sorted.size());
    for (int k = 1; k < spec.bins; ++k) {
      const auto at = static_cast<std::size_t>(std::ceil(k * rows / spec.bins));
      edges.push_back(sorted[std::max<std::size_t>(at, 1) - 1]);
    }
    edges.erase(std::unique(edges.begin(), edges.end()), edges.end());
    while (!edges.empty() && edges.back() >= sorted.back()) edges.pop_back();
  }
  std::vector<std::size_t> per_bin(edges.size() + 1, 0);
  c.codes.reserve(c.values.size());
  for (double x : c.values) {
    const auto bin = std::lower_bound(edges.begin(), edges.end(), x) - edges.begin();
    c.codes.push_back(static_cast<std::uint16_t>(bin));
    ++per_bin[bin];
  }
  std::vector<std::uint16_t> recode(per_bin.size());
  for (std::size_t b = 0; b < per_bin.size(); ++b) {
    recode[b] = static_cast<std::uint16_t>(c.levels.size());
    if (!per_bin[b]) continue;
    c.levels.push_back(edges.empty() ? std::string("all")
                       : b == 0      ? "<=" + format_edge(edges[0])
                       : b == edges.size()
                           ? ">" + format_edge(edges[b - 1])
                           : "(" + format_edge(edges[b - 1]) + "," + format_edge(edges[b]) + "]");
  }
  for (std::uint16_t& code : c.codes) code = recode[code];
  const std::size_t asked =
      spec.rule == BinSpec::Rule::kQuantile ? spec.bins : spec.edges.size() + 1;
  if (c.levels.size() < asked)
    notes.push_back(name + ": column '" + c.name + "' has " + std::to_string(c.levels.size()) +
                    " non-empty bins of the " + std::to_string(asked) +
                    " asked for (ties or empty "
                    "bins)");
  std::string bounds;
  for (double e : edges) bounds += (bounds.empty() ? "" : ",") + format_edge(e);
  c.origin = "numbers, cut into " + std::to_string(c.levels.size()) +
             (spec.rule == BinSpec::Rule::kQuantile ? " quantile bins" : " bins") + " at edges " +
             (bounds.empty() ? "(none)" : bounds);
  std::vector<double>().swap(c.values);
}

// Codes the label columns over the kept rows (pass 2), in first-appearance order, then recodes
// them to the sorted level order.
void code_labels(std::vector<Column>& columns, csv::Tokenizer& tok,
                 const std::vector<char*>& kept_rows, const std::string& name) {
  const std::size_t n = columns.size();
  std::vector<LevelIndex> index(n);
  std::vector<char> coded(n, 0);
  for (std::size_t j = 0; j < n; ++j) {
    Column& c = columns[j];
    coded[j] = c.is_variable() && !is_gaussian(c) && !c.bin;
    if (!coded[j]) continue;
    std::vector<double>().swap(c.values);
    c.codes.reserve(kept_rows.size());
  }
  for (char* row : kept_rows) {
    tok.seek(row);
    for (std::size_t j = 0; j < n; ++j) {
      csv::Field f;
      tok.next(f);
      if (!coded[j]) continue;
      const int code = index[j].code_of(f.unescape());
      if (code < 0)
        throw InputError(name + ": column '" + columns[j].name + "' has more than " +
                         std::to_string(kMaxLevels) + " distinct labels");
      columns[j].codes.push_back(static_cast<std::uint16_t>(code));
    }
  }
  for (std::size_t j = 0; j < n; ++j) {
    if (!coded[j]) continue;
    const auto& seen = index[j].levels();
    std::vector<std::string> levels(seen.begin(), seen.end());
    sort_levels(levels);
    std::unordered_map<std::string_view, std::uint16_t> rank;
    for (std::size_t k = 0; k < levels.size(); ++k) rank.emplace(levels[k], std::uint16_t(k));
    std::vector<std::uint16_t> recode(seen.size());
    for (std::size_t k = 0; k < seen.size(); ++k) recode[k] = rank.at(seen[k]);
    for (std::uint16_t& code : columns[j].codes) code = recode[code];
    columns[j].levels = std::move(levels);
  }
}

std::string label_origin(const Column& c) {
  if (c.rule == Rule::kLabels) return "labels (" + c.because + ")";
  if (c.numeric) return "labels (numbers, read as labels)";
  if (c.quoted_number) return "labels (quoted numbers are labels)";
  return "labels";
}

// A Gaussian column's values (a note when they are all 0 or 1).
std::vector<double> gaussian_column(Column& c, const std::vector<std::size_t>& counts,
                                    const std::string& name, std::vector<std::string>& notes) {
  if (std::all_of(c.values.begin(), c.values.end(), [](double x) { return x == 0 || x == 1; }))
    notes.push_back(name + ": column '" + c.name +
                    "' holds only 0 and 1 and is scored as Gaussian; --discrete-columns " + c.name +
                    " reads it as labels");
  c.origin = c.because == "--gaussian" ? "numbers, Gaussian (--gaussian)" : "numbers, Gaussian";
  return expand_rows(c.values, counts);
}

// A discrete column's codes (labels, or binned numbers; a note when it has very many levels).
std::vector<std::uint16_t> discrete_column(Column& c, const std::vector<std::size_t>& counts,
                                           const CsvOptions& options, const std::string& name,
                                           std::vector<std::string>& notes) {
  if (c.bin) cut_into_bins(c, name, notes);
  if (c.levels.size() == 1 && !options.allow_constant)
    throw OptionError(name + ": column '" + c.name + "' has a single level '" + c.levels[0] +
                      "' (a constant column; use {allow_constant} to keep it)");
  std::vector<std::uint16_t> codes = expand_rows(c.codes, counts);
  const double rows = static_cast<double>(codes.size());
  if (c.levels.size() > 2 && static_cast<double>(c.levels.size()) > rows / 5)
    notes.push_back(name + ": column '" + c.name + "' has " + std::to_string(c.levels.size()) +
                    " levels for " + std::to_string(codes.size()) +
                    " rows (more than rows/5, so most levels are seen a few times): if it holds "
                    "measurements, --bin " +
                    c.name + "=quantile:K cuts it into K levels");
  if (!c.bin) c.origin = label_origin(c);
  return codes;
}

DataTable build_table(std::vector<Column>& columns, Shape shape,
                      const std::vector<std::size_t>& counts, const CsvOptions& options,
                      const std::string& name, std::vector<std::string>& notes) {
  std::vector<Variable> variables;
  std::vector<std::vector<std::uint16_t>> codes;
  std::vector<std::vector<double>> values;
  std::vector<std::string> origins;
  for (Column& c : columns) {
    if (!c.is_variable()) continue;
    if (is_gaussian(c)) {
      values.push_back(gaussian_column(c, counts, name, notes));
      codes.emplace_back();
      variables.push_back({c.name, VariableKind::kGaussian, {}});
    } else {
      codes.push_back(discrete_column(c, counts, options, name, notes));
      values.emplace_back();
      variables.push_back({c.name, VariableKind::kDiscrete, std::move(c.levels)});
    }
    origins.push_back(c.origin);
  }
  DataTable t;
  if (shape == Shape::kMixed) {
    t = DataTable::mixed(std::move(variables), std::move(codes), std::move(values));
  } else if (shape == Shape::kGaussian) {
    t = DataTable::gaussian(variable_names(variables), std::move(values));
  } else {
    t = DataTable::discrete(std::move(variables), std::move(codes));
  }
  t.set_reading_report(std::move(origins), {});
  return t;
}

}  // namespace

char parse_delimiter(const std::string& text) {
  if (text.empty()) return 0;
  if (text == "tab" || text == "\\t" || text == "\t") return '\t';
  if (text.size() != 1 || text == "\"" || text == "{" || text == "}")
    throw OptionError("{delimiter} '" + text + "': expected one character such as ';', or tab");
  return text[0];
}

BinSpec parse_bin_spec(const std::string& text) {
  const std::size_t eq = text.rfind('=');
  const std::size_t colon = eq == std::string::npos ? eq : text.find(':', eq);
  if (eq == std::string::npos || eq == 0 || colon == std::string::npos)
    throw OptionError("{bin} '" + text + "': expected NAME=quantile:K or NAME=edges:E1,E2,...");
  BinSpec spec;
  spec.column = text.substr(0, eq);
  const std::string rule = text.substr(eq + 1, colon - eq - 1);
  const std::string rest = text.substr(colon + 1);
  if (rule == "quantile") {
    spec.rule = BinSpec::Rule::kQuantile;
    double k = 0;
    if (read_number(rest.data(), rest.data() + rest.size(), k) != NumberText::kFinite || k < 2 ||
        k > 1000 || k != std::floor(k))
      throw OptionError("{bin} '" + text + "': the number of quantile bins must be 2 to 1000");
    spec.bins = static_cast<int>(k);
    return spec;
  }
  if (rule != "edges")
    throw OptionError("{bin} '" + text + "': unknown rule '" + rule +
                      "' (expected quantile or edges)");
  spec.rule = BinSpec::Rule::kEdges;
  std::size_t at = 0;
  while (at <= rest.size()) {
    const std::size_t comma = std::min(rest.find(',', at), rest.size());
    double e = 0;
    if (read_number(rest.data() + at, rest.data() + comma, e) != NumberText::kFinite)
      throw OptionError("{bin} '" + text + "': '" + rest.substr(at, comma - at) +
                        "' is not a finite number");
    if (!spec.edges.empty() && !(e > spec.edges.back()))
      throw OptionError("{bin} '" + text + "': edges must be strictly ascending");
    spec.edges.push_back(e);
    at = comma + 1;
  }
  if (spec.edges.size() + 1 > std::size_t(kMaxLevels))
    throw OptionError("{bin} '" + text + "': too many edges");
  return spec;
}

void sort_levels(std::vector<std::string>& levels) {
  std::vector<double> numbers(levels.size());
  bool all_numeric = true;
  for (std::size_t i = 0; i < levels.size() && all_numeric; ++i)
    all_numeric = read_number(levels[i].data(), levels[i].data() + levels[i].size(), numbers[i]) ==
                  NumberText::kFinite;
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
  const char delimiter = choose_delimiter(options, start, end);
  const bool decimal_comma = delimiter == ';';  // the convention of ';'-separated files
  csv::Tokenizer tok(start, end, name, delimiter);
  std::vector<std::string> notes;
  std::vector<Column> columns = read_header(tok, name, notes);
  assign_rules(columns, options, name);
  const std::size_t n = columns.size();
  const std::size_t row_bound = static_cast<std::size_t>(std::count(start, end, '\n')) + 1;
  for (Column& c : columns)
    if (c.rule == Rule::kInfer || c.rule == Rule::kNumbers) c.values.reserve(row_bound);

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
      throw InputError(name + ":" + std::to_string(line) + ": row has " + std::to_string(count) +
                       " fields but the header has " + std::to_string(n));
    bool complete = true;
    for (std::size_t j = 0; j < n && complete; ++j) {
      if (columns[j].rule == Rule::kSkip || !fields[j].missing()) continue;
      if (!options.drop_incomplete)
        throw OptionError(name + ":" + std::to_string(line) + ": missing value in column '" +
                          columns[j].name + "' (data row " +
                          std::to_string(kept_rows.size() + dropped + 1) +
                          "); use {drop_incomplete} to drop incomplete rows");
      complete = false;
    }
    if (!complete) {
      ++dropped;
      continue;
    }
    for (std::size_t j = 0; j < n; ++j) {
      Column& c = columns[j];
      if ((c.rule == Rule::kInfer && c.numeric) || c.rule == Rule::kNumbers)
        read_cell(c, fields[j], line, name, decimal_comma);
    }
    kept_rows.push_back(row_start);
  }
  if (kept_rows.empty())
    throw InputError(dropped ? name + ": every one of the " + std::to_string(dropped) +
                                   " data rows has a missing cell"
                             : name + ": no data rows after the header");

  const Shape shape = decide_shape(columns, name, notes);
  std::vector<std::size_t> counts;
  for (const Column& c : columns)
    if (c.is_count) counts = row_counts(c, name, options.memory_limit, n - 1, notes);
  if (shape != Shape::kGaussian) code_labels(columns, tok, kept_rows, name);
  DataTable t = build_table(columns, shape, counts, options, name, notes);
  t.set_provenance(name, dropped);
  t.set_reading_report(t.column_origins(), std::move(notes));
  return t;
}

double csv_load_bytes(double file_bytes) {
  return 2.0 * file_bytes;
}

DataTable read_csv(const std::string& path, const CsvOptions& options) {
  require_readable(path);
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> file(std::fopen(path.c_str(), "rb"), std::fclose);
  if (!file) throw FileError(path + ": cannot open for reading");
  std::string text;
  char chunk[1 << 16];
  std::fseek(file.get(), 0, SEEK_END);
  const long size = std::ftell(file.get());
  std::fseek(file.get(), 0, SEEK_SET);
  if (size > 0) {
    require_memory(csv_load_bytes(static_cast<double>(size)), options.memory_limit,
                   "reading " + path + " (" + format_bytes(static_cast<double>(size)) + ")",
                   "fewer rows or columns per file shrink it, or raise {memory_limit}");
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
