#pragma once
// Data tables for scoring: one column per variable, all columns of one kind. Discrete columns are
// coded as small integers 0..r-1 over their levels (sorted, see sort_levels; binned columns in bin
// order); Gaussian columns are doubles. Columns are stored contiguously (column-major), which is
// the access pattern of scoring.
//
// CSV input (docs/file-formats.md): a header row of unique names, RFC 4180 quoting, LF or CRLF,
// ',' ';' or tab between fields; R's row-name column (an empty first name) is dropped. Per-column
// choices: columns read as labels, numeric columns cut into bins, a count column (aggregated
// tables: one row per cell, the count says how many observations it stands for).
#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "covey/data/variables.hpp"

namespace covey {

// How read_csv decides each column's kind: inferred from the content (numbers versus labels), or
// forced for the whole table.
enum class ColumnKindChoice { kInfer, kDiscrete, kGaussian };

// How a numeric column is cut into discrete levels. Bins are right-closed: x <= e_1, e_1 < x <=
// e_2, ..., x > e_last. Quantile edges are the empirical quantiles x_(ceil(k N / K)), k = 1..K-1
// (repeated edges merged, so tied data may give fewer bins); fixed edges are given ascending.
struct BinSpec {
  enum class Rule { kQuantile, kEdges };
  std::string column;
  Rule rule = Rule::kQuantile;
  int bins = 0;               // kQuantile: the number of bins asked for (2 or more)
  std::vector<double> edges;  // kEdges: strictly ascending inner edges
};
// Parses "NAME=quantile:K" or "NAME=edges:E1,E2,..." (the text of --bin); throws OptionError
// naming {bin}.
BinSpec parse_bin_spec(const std::string& text);
// The field delimiter as users type it: ',' ';' or one other character, "tab" for a tab; empty:
// 0 (detect from the header). Throws OptionError naming {delimiter}.
char parse_delimiter(const std::string& text);

struct CsvOptions {
  ColumnKindChoice kind = ColumnKindChoice::kInfer;
  char delimiter = 0;                           // ',', ';', '\t', ...; 0: detect from the header
  std::vector<std::string> discrete_columns{};  // read as labels even when they hold numbers
  std::vector<BinSpec> bins{};                  // numeric columns cut into discrete levels
  std::string count_column{};                   // empty: none; else a column of row weights
  bool drop_incomplete = false;    // drop rows with a missing cell instead of refusing them
  bool allow_constant = false;     // keep discrete columns with a single level
  std::uint64_t memory_limit = 0;  // ceiling of the load's estimated memory; 0: the default
};

// Estimated peak memory of reading a CSV file of `file_bytes` bytes: the text, held whole, plus
// about as much again for the parsed columns (16-bit codes or doubles; typical cells take 2 to 8
// bytes of text). Measured: 512 MB of 1-letter labels (256 columns, 10^6 rows) peaked at 1.0 GB.
double csv_load_bytes(double file_bytes);

// Discrete codes are 16-bit: a column may have at most this many levels.
inline constexpr int kMaxLevels = 65535;

class DataTable {
 public:
  DataTable() = default;
  // A discrete table: codes[v] holds one code in [0, variables[v].levels.size()) per row.
  static DataTable discrete(std::vector<Variable> variables,
                            std::vector<std::vector<std::uint16_t>> codes);
  // A Gaussian table: values[v] holds one finite value per row.
  static DataTable gaussian(std::vector<std::string> names,
                            std::vector<std::vector<double>> values);
  // A mixed table (both kinds present): variables[v].kind says whether codes[v] (discrete) or
  // values[v] (Gaussian) holds column v; the other is empty. kind() is kDiscrete for it; ask
  // is_mixed() first.
  static DataTable mixed(std::vector<Variable> variables,
                         std::vector<std::vector<std::uint16_t>> codes,
                         std::vector<std::vector<double>> values);
  bool is_mixed() const { return mixed_; }

  int num_variables() const { return static_cast<int>(variables_.size()); }
  std::size_t num_rows() const { return rows_; }
  VariableKind kind() const { return kind_; }
  const std::vector<Variable>& variables() const { return variables_; }
  const std::string& name(int v) const { return variables_[v].name; }

  // Discrete columns only.
  int num_levels(int v) const { return static_cast<int>(variables_[v].levels.size()); }
  std::span<const std::uint16_t> codes(int v) const { return codes_[v]; }
  // Gaussian columns only.
  std::span<const double> values(int v) const { return values_[v]; }

  // Where the table came from (file name) and how many incomplete rows were dropped on reading.
  const std::string& source() const { return source_; }
  std::size_t rows_dropped() const { return rows_dropped_; }
  void set_provenance(std::string source, std::size_t rows_dropped) {
    source_ = std::move(source);
    rows_dropped_ = rows_dropped;
  }
  // What each column became, one phrase per variable (e.g. "numbers, binned into 3 quantile
  // bins"), and notes for the user about the reading (a dropped row-name column, a 0/1 column
  // scored as Gaussian, a discrete column with very many levels). Empty for tables not read from
  // CSV.
  const std::vector<std::string>& column_origins() const { return origins_; }
  const std::vector<std::string>& notes() const { return notes_; }
  void set_reading_report(std::vector<std::string> origins, std::vector<std::string> notes) {
    origins_ = std::move(origins);
    notes_ = std::move(notes);
  }

 private:
  std::vector<Variable> variables_;
  VariableKind kind_ = VariableKind::kDiscrete;
  bool mixed_ = false;
  std::size_t rows_ = 0;
  std::vector<std::vector<std::uint16_t>> codes_;
  std::vector<std::vector<double>> values_;
  std::string source_;
  std::size_t rows_dropped_ = 0;
  std::vector<std::string> origins_;
  std::vector<std::string> notes_;
};

// Reads a CSV file (the whole file at once): a discrete, Gaussian or mixed table. Throws
// InputError naming the file, line and column (also for a table of fewer than two variables or a
// non-finite number), and ResourceError before reading when csv_load_bytes exceeds the memory
// limit.
DataTable read_csv(const std::string& path, const CsvOptions& options = {});
// Parses CSV text; `name` stands for the file in messages.
DataTable parse_csv(std::string text, const std::string& name, const CsvOptions& options = {});

// The level order of discrete columns, chosen for determinism (independent of row order): when
// every level reads as a finite number, ascending numeric order (ties bytewise); otherwise bytewise
// lexicographic order.
void sort_levels(std::vector<std::string>& levels);

}  // namespace covey
