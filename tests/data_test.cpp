// CSV reading: RFC 4180 quoting (the rules of RFC 4180 section 2: quoted fields, "" escapes,
// embedded commas and line breaks, CRLF), kind inference and its errors, missing cells, constant
// columns, level order, and size (256 columns, 10^6 rows); CSV as people write it (';' and tab
// delimiters, R's row names, non-finite numbers, quoted numbers); per-column choices (discrete
// columns, bins, a count column) and the notes of a reading.
#include <gtest/gtest.h>

#include <fstream>
#include <string>

#include "covey/core/error.hpp"
#include "covey/data/data.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

// The InputError message of parsing `text`, or "" when it parses.
std::string error_of(const std::string& text, const CsvOptions& options = {}) {
  try {
    parse_csv(text, "in.csv", options);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

std::vector<std::string> labels_of(const DataTable& t, int v) {
  std::vector<std::string> out;
  for (std::uint16_t c : t.codes(v)) out.push_back(t.variables()[v].levels[c]);
  return out;
}

TEST(Csv, QuotingFollowsRfc4180) {
  // RFC 4180 section 2, rules 5-7: quoted fields may hold commas, CRLF and "" (one quote).
  const std::string text =
      "name,\"note, with comma\"\r\n"
      "\"a,b\",\"say \"\"hi\"\"\"\r\n"
      "\"line\r\nbreak\",plain\r\n"
      "\"a,b\",plain\r\n";
  const DataTable t = parse_csv(text, "q.csv");
  ASSERT_EQ(t.num_variables(), 2);
  EXPECT_EQ(t.name(1), "note, with comma");
  EXPECT_EQ(t.num_rows(), 3u);
  EXPECT_EQ(labels_of(t, 0), (std::vector<std::string>{"a,b", "line\r\nbreak", "a,b"}));
  EXPECT_EQ(labels_of(t, 1), (std::vector<std::string>{"say \"hi\"", "plain", "plain"}));
}

TEST(Csv, LfCrlfAndTrailingNewlineAgree) {
  const DataTable lf = parse_csv("x,y\n1,2\n3,4.5\n", "a.csv");
  const DataTable crlf = parse_csv("x,y\r\n1,2\r\n3,4.5", "b.csv");
  ASSERT_EQ(lf.kind(), VariableKind::kGaussian);
  ASSERT_EQ(crlf.num_rows(), 2u);
  for (int v = 0; v < 2; ++v)
    for (std::size_t i = 0; i < 2; ++i) EXPECT_EQ(lf.values(v)[i], crlf.values(v)[i]);
  EXPECT_EQ(lf.values(1)[1], 4.5);
}

TEST(Csv, LevelsAreSortedForDeterminism) {
  // Numeric-looking labels sort by value, others bytewise; codes follow the sorted order.
  const DataTable t =
      parse_csv("a,b\n10,z\n9,y\n10,x\n2,y\n", "l.csv", {ColumnKindChoice::kDiscrete});
  EXPECT_EQ(t.variables()[0].levels, (std::vector<std::string>{"2", "9", "10"}));
  EXPECT_EQ(t.variables()[1].levels, (std::vector<std::string>{"x", "y", "z"}));
  EXPECT_EQ(std::vector<std::uint16_t>(t.codes(0).begin(), t.codes(0).end()),
            (std::vector<std::uint16_t>{2, 1, 2, 0}));
  // Row order does not change the coding of a level.
  const DataTable u =
      parse_csv("a,b\n2,y\n10,x\n9,y\n10,z\n", "l.csv", {ColumnKindChoice::kDiscrete});
  EXPECT_EQ(u.variables()[0].levels, t.variables()[0].levels);
}

TEST(Csv, KindsAreInferredOrForced) {
  EXPECT_EQ(parse_csv("a,b\n1,2e3\n-1.5,+4\n", "k.csv").kind(), VariableKind::kGaussian);
  EXPECT_EQ(parse_csv("a,b\nx,y\nz,w\n", "k.csv").kind(), VariableKind::kDiscrete);
  const DataTable forced = parse_csv("a,b\n1,2\n1.0,3\n", "k.csv", {ColumnKindChoice::kDiscrete});
  EXPECT_EQ(forced.kind(), VariableKind::kDiscrete);
  EXPECT_EQ(forced.variables()[0].levels, (std::vector<std::string>{"1", "1.0"}));
  // A table mixing numbers and labels is a mixed table, with a note naming which columns are
  // which.
  const DataTable mixed = parse_csv("num,lab,num2\n1,x,2\n3,y,4\n", "m.csv");
  EXPECT_TRUE(mixed.is_mixed());
  EXPECT_EQ(mixed.variables()[0].kind, VariableKind::kGaussian);
  EXPECT_EQ(mixed.variables()[1].kind, VariableKind::kDiscrete);
  EXPECT_EQ(mixed.values(2)[1], 4.0);
  EXPECT_EQ(labels_of(mixed, 1), (std::vector<std::string>{"x", "y"}));
  ASSERT_EQ(mixed.notes().size(), 1u);
  EXPECT_NE(mixed.notes()[0].find("a mixed table: Gaussian columns 'num', 'num2', discrete "
                                  "columns 'lab'"),
            std::string::npos)
      << mixed.notes()[0];
  const std::string forced_gaussian = error_of("a,b\n1,2\n3,abc\n", {ColumnKindChoice::kGaussian});
  EXPECT_NE(forced_gaussian.find("in.csv:3: column 'b': 'abc' is not a number (--gaussian)"),
            std::string::npos)
      << forced_gaussian;
  // Non-finite numbers are not numbers.
  EXPECT_NE(error_of("a,b\n1,inf\n2,3\n", {ColumnKindChoice::kGaussian}).find("'inf'"),
            std::string::npos);
}

TEST(Csv, DelimitersAreDetectedOrChosen) {
  // ';' with decimal commas (R's write.csv2), tab (R's write.table with sep = "\t"), and ','.
  const DataTable semicolon = parse_csv("a;b\n1,5;2\n3;4,25\n0;1\n", "s.csv");
  ASSERT_EQ(semicolon.num_variables(), 2);
  ASSERT_EQ(semicolon.kind(), VariableKind::kGaussian);
  EXPECT_EQ(semicolon.values(0)[0], 1.5);
  EXPECT_EQ(semicolon.values(1)[1], 4.25);
  const DataTable tab = parse_csv("a\tb\tc\nx\ty y\tz\nu\tv\tw\n", "t.tsv");
  ASSERT_EQ(tab.num_variables(), 3);
  EXPECT_EQ(tab.variables()[1].levels, (std::vector<std::string>{"v", "y y"}));
  // A comma inside quotes does not count; ',' wins ties.
  EXPECT_EQ(parse_csv("\"a,b,c\";d\nx;y\nz;w\n", "q.csv").num_variables(), 2);
  EXPECT_EQ(parse_csv("a,b;c\nx,y;z\nu,w;v\n", "tie.csv").num_variables(), 2);
  // An explicit delimiter overrides the guess.
  CsvOptions pipe;
  pipe.delimiter = '|';
  const DataTable piped = parse_csv("a|b,c\nx|y\nz|w\n", "p.csv", pipe);
  EXPECT_EQ(piped.name(1), "b,c");
  pipe.delimiter = '"';
  EXPECT_THROW(parse_csv("a,b\nx,y\n", "p.csv", pipe), OptionError);
}

TEST(Csv, RowNameColumnIsDroppedWithANote) {
  // R's write.csv: row names under an empty (quoted) header name.
  const DataTable t = parse_csv("\"\",\"a\",\"b\"\n\"1\",x,u\n\"2\",y,v\n\"3\",x,v\n", "r.csv");
  ASSERT_EQ(t.num_variables(), 2);
  EXPECT_EQ(t.name(0), "a");
  ASSERT_EQ(t.notes().size(), 1u);
  EXPECT_NE(t.notes()[0].find("row names"), std::string::npos) << t.notes()[0];
  // An empty name elsewhere is still an error.
  EXPECT_NE(error_of("a,,b\n1,2,3\n").find("column 2 of the header has no name"),
            std::string::npos);
}

TEST(Csv, NonFiniteNumbersAreNamedWithTheirLine) {
  for (const std::string cell : {"inf", "-inf", "nan", "Inf", "NaN", "1e999"}) {
    SCOPED_TRACE(cell);
    const std::string message = error_of("u,v\n1.5,2\n" + cell + ",3\n0.5,1\n");
    EXPECT_NE(message.find("in.csv:3: column 'u': '" + cell + "' is not a finite value"),
              std::string::npos)
        << message;
  }
  // Among labels, "inf" is one more label.
  EXPECT_EQ(parse_csv("u,v\nx,a\ninf,b\n", "in.csv").variables()[0].levels,
            (std::vector<std::string>{"inf", "x"}));
}

TEST(Csv, FewerThanTwoVariablesAreRefused) {
  EXPECT_NE(error_of("a\n1\n2\n").find("in.csv: 1 variable ('a'); a network needs at least two"),
            std::string::npos);
  EXPECT_NE(error_of("\"\",\"a\"\n\"1\",2\n\"2\",3\n").find("1 variable ('a')"), std::string::npos);
  CsvOptions counted;
  counted.count_column = "n";
  EXPECT_NE(error_of("a,n\nx,2\ny,3\n", counted).find("1 variable ('a')"), std::string::npos);
}

TEST(Csv, QuotedNumbersAreLabelsAndColumnsCanBeNamedDiscrete) {
  const DataTable quoted = parse_csv("a,b\n\"0\",x\n\"1\",y\n\"1\",x\n", "q.csv");
  EXPECT_EQ(quoted.kind(), VariableKind::kDiscrete);
  EXPECT_EQ(quoted.column_origins()[0], "labels (quoted numbers are labels)");
  // --gaussian still reads a quoted number as a number.
  EXPECT_EQ(parse_csv("a,b\n\"0\",1\n\"1\",2\n\"1\",0\n", "q.csv", {ColumnKindChoice::kGaussian})
                .values(0)[1],
            1.0);
  CsvOptions named;
  named.discrete_columns = {"a", "b"};
  const DataTable t = parse_csv("a,b\n0,10\n1,9\n1,10\n", "d.csv", named);
  EXPECT_EQ(t.kind(), VariableKind::kDiscrete);
  EXPECT_EQ(t.variables()[1].levels, (std::vector<std::string>{"9", "10"}));
  EXPECT_EQ(t.column_origins()[1], "labels (--discrete-columns)");
  named.discrete_columns = {"a", "nosuch"};
  EXPECT_NE(error_of("a,b\n0,1\n1,0\n", named).find("discrete_columns names 'nosuch'"),
            std::string::npos);
  // A column named discrete among numbers leaves a mixed table.
  named.discrete_columns = {"a"};
  const DataTable mixed = parse_csv("a,b\n0,1.5\n1,0.5\n1,2.5\n", "m.csv", named);
  EXPECT_TRUE(mixed.is_mixed());
  EXPECT_EQ(mixed.variables()[0].levels, (std::vector<std::string>{"0", "1"}));
}

TEST(Csv, ZeroOneColumnsAndManyLevelsGetNotes) {
  const DataTable t = parse_csv("a,b\n0,1.5\n1,0.5\n1,2.5\n0,3\n", "z.csv");
  ASSERT_EQ(t.notes().size(), 1u);
  EXPECT_NE(t.notes()[0].find("column 'a' holds only 0 and 1"), std::string::npos) << t.notes()[0];
  // 4 levels over 10 rows: more than rows/5 = 2.
  const DataTable many = parse_csv("a,b\n1,x\n2,y\n3,x\n4,y\n1,x\n2,y\n3,x\n4,y\n1,x\n2,y\n",
                                   "m.csv", {ColumnKindChoice::kDiscrete});
  ASSERT_EQ(many.notes().size(), 1u);
  EXPECT_NE(many.notes()[0].find("column 'a' has 4 levels for 10 rows"), std::string::npos)
      << many.notes()[0];
}

TEST(Csv, BinsCutNumericColumns) {
  // x = 1..9: quantile thirds at x_(3) = 3 and x_(6) = 6; fixed edges at 2.5 and 7.
  std::string text = "x,y,l\n";
  for (int i = 1; i <= 9; ++i)
    text += std::to_string(i) + "," + std::to_string(10 - i) + "," + (i % 2 ? "a" : "b") + "\n";
  CsvOptions options;
  options.bins = {parse_bin_spec("x=quantile:3"), parse_bin_spec("y=edges:2.5,7")};
  const DataTable t = parse_csv(text, "b.csv", options);
  ASSERT_EQ(t.kind(), VariableKind::kDiscrete);
  EXPECT_EQ(t.variables()[0].levels, (std::vector<std::string>{"<=3", "(3,6]", ">6"}));
  EXPECT_EQ(labels_of(t, 0), (std::vector<std::string>{"<=3", "<=3", "<=3", "(3,6]", "(3,6]",
                                                       "(3,6]", ">6", ">6", ">6"}));
  EXPECT_EQ(t.variables()[1].levels, (std::vector<std::string>{"<=2.5", "(2.5,7]", ">7"}));
  EXPECT_EQ(labels_of(t, 1), (std::vector<std::string>{">7", ">7", "(2.5,7]", "(2.5,7]", "(2.5,7]",
                                                       "(2.5,7]", "(2.5,7]", "<=2.5", "<=2.5"}));
  EXPECT_EQ(t.column_origins()[0], "numbers, cut into 3 quantile bins at edges 3,6");
  // Ties merge quantile edges; empty fixed bins are dropped; both say so.
  options.bins = {parse_bin_spec("x=quantile:4"), parse_bin_spec("y=edges:2,100,200")};
  const DataTable tied = parse_csv("x,y,l\n1,1,a\n1,2,b\n1,3,a\n1,4,b\n2,5,a\n", "t.csv", options);
  EXPECT_EQ(tied.variables()[0].levels, (std::vector<std::string>{"<=1", ">1"}));
  EXPECT_EQ(tied.variables()[1].levels, (std::vector<std::string>{"<=2", "(2,100]"}));
  EXPECT_EQ(tied.notes().size(), 2u);
  // A binned column with one value is a constant column.
  options.bins = {parse_bin_spec("x=quantile:3")};
  EXPECT_NE(error_of("x,l\n2,a\n2,b\n", options).find("column 'x' has a single level 'all'"),
            std::string::npos);
  // Cells of a binned column must be numbers.
  options.bins = {parse_bin_spec("l=quantile:2")};
  EXPECT_NE(error_of(text, options).find("in.csv:2: column 'l': 'a' is not a number (--bin)"),
            std::string::npos);
  for (const std::string bad : {"x", "x=quantile", "x=quantile:1", "x=quantile:2.5", "x=edges:3,2",
                                "x=edges:", "x=edges:1,inf", "x=deciles:3", "=quantile:3"})
    EXPECT_THROW(parse_bin_spec(bad), OptionError) << bad;
  EXPECT_EQ(parse_bin_spec("a=b=edges:-1,1e3").column, "a=b");
}

TEST(Csv, CountColumnWeighsRows) {
  // An aggregated table equals the table with each row repeated count times.
  CsvOptions counted;
  counted.count_column = "n";
  const DataTable aggregated = parse_csv("a,b,n\nx,u,2\ny,u,0\ny,v,3\n", "agg.csv", counted);
  const DataTable expanded = parse_csv("a,b\nx,u\nx,u\ny,v\ny,v\ny,v\n", "long.csv");
  ASSERT_EQ(aggregated.num_rows(), 5u);
  for (int v = 0; v < 2; ++v) {
    EXPECT_EQ(aggregated.variables()[v].levels, expanded.variables()[v].levels);
    EXPECT_EQ(labels_of(aggregated, v), labels_of(expanded, v));
  }
  EXPECT_NE(aggregated.notes().back().find("3 rows stand for 5 observations"), std::string::npos);
  EXPECT_NE(error_of("a,b,n\nx,u,2\ny,v,-1\n", counted).find("whole numbers >= 0"),
            std::string::npos);
  EXPECT_NE(error_of("a,b,n\nx,u,1.5\ny,v,1\n", counted).find("whole numbers >= 0"),
            std::string::npos);
  EXPECT_NE(error_of("a,b,n\nx,u,z\ny,v,1\n", counted).find("(--count-column)"), std::string::npos);
}

TEST(Csv, MissingCellsNameLineAndColumn) {
  // Line numbers are file lines: the quoted line break in data row 1 puts data row 2 on line 4.
  const std::string text = "a,b\n\"p\nq\",y\nz,\n";
  const std::string e = error_of(text);
  EXPECT_NE(e.find("in.csv:4: missing value in column 'b' (data row 2)"), std::string::npos) << e;
  EXPECT_NE(error_of("a,b\nx,y\nNA,y\n").find("in.csv:3: missing value in column 'a'"),
            std::string::npos);
  CsvOptions drop;
  drop.drop_incomplete = true;
  const DataTable t = parse_csv("a,b\nx,y\nNA,y\n,\nz,NA\nz,w\n", "d.csv", drop);
  EXPECT_EQ(t.num_rows(), 2u);
  EXPECT_EQ(t.rows_dropped(), 3u);
  // Levels seen only in dropped rows are not levels.
  EXPECT_EQ(t.variables()[1].levels, (std::vector<std::string>{"w", "y"}));
  EXPECT_NE(error_of("a,b\nNA,1\n2,NA\n", drop).find("every one of the 2 data rows"),
            std::string::npos);
}

TEST(Csv, ConstantColumnsNeedAllowConstant) {
  const std::string e = error_of("a,b\nx,k\ny,k\n");
  EXPECT_NE(e.find("column 'b' has a single level 'k'"), std::string::npos) << e;
  EXPECT_NE(e.find("use allow_constant to keep it"), std::string::npos) << e;
  CsvOptions allow;
  allow.allow_constant = true;
  EXPECT_EQ(parse_csv("a,b\nx,k\ny,k\n", "c.csv", allow).num_levels(1), 1);
}

TEST(Csv, MalformedFilesNameTheLine) {
  const std::vector<std::pair<std::string, std::string>> cases = {
      {"", "in.csv: empty file"},
      {"a,b\n", "in.csv: no data rows"},
      {"a,b\n1,2,3\n", "in.csv:2: row has 3 fields but the header has 2"},
      {"a,b\nx,y\nx\n", "in.csv:3: row has 1 fields"},
      {"a,a\nx,y\n", "in.csv:1: column name 'a' appears twice"},
      {"a,\nx,y\n", "in.csv:1: column 2 of the header has no name"},
      {"a,b\nx,\"y\n", "in.csv:2: a quoted field is not closed"},
      {"a,b\n\"x\"z,y\n", "in.csv:2: unexpected text after the closing quote"},
  };
  for (const auto& [text, fragment] : cases) {
    const std::string e = error_of(text);
    EXPECT_NE(e.find(fragment), std::string::npos) << "text: " << text << "\nerror: " << e;
  }
}

TEST(Csv, BlankLinesBomAndSpacesAreTolerated) {
  const DataTable t = parse_csv("\xEF\xBB\xBF a , b \n\n x , 1 \n\ny,2\n\n", "s.csv",
                                {ColumnKindChoice::kDiscrete});
  EXPECT_EQ(t.name(0), "a");
  EXPECT_EQ(t.num_rows(), 2u);
  EXPECT_EQ(t.variables()[0].levels, (std::vector<std::string>{"x", "y"}));
}

TEST(Csv, ReadsFilesWith256Columns) {
  const int columns = 300;
  std::string text;
  for (int j = 0; j < columns; ++j) text += (j ? ",v" : "v") + std::to_string(j);
  text += "\r\n";
  for (int i = 0; i < 50; ++i) {
    for (int j = 0; j < columns; ++j)
      text += (j ? "," : "") + std::string(1, char('a' + (i + j) % 3));
    text += "\r\n";
  }
  testing_util::TempDir dir;
  testing_util::write_file(dir.file("wide.csv"), text);
  const DataTable t = read_csv(dir.file("wide.csv"));
  ASSERT_EQ(t.num_variables(), columns);
  EXPECT_EQ(t.num_rows(), 50u);
  EXPECT_EQ(t.name(299), "v299");
  for (int j = 0; j < columns; ++j) {
    ASSERT_EQ(t.num_levels(j), 3);
    EXPECT_EQ(labels_of(t, j)[7], std::string(1, char('a' + (7 + j) % 3)));
  }
}

TEST(Csv, ReadsAMillionRows) {
  std::string text = "x,y,z\n";
  text.reserve(10'000'000);
  for (int i = 0; i < 1'000'000; ++i) {
    text += std::to_string(i % 7);
    text += ',';
    text += std::to_string(i % 5);
    text += ",";
    text += (i % 2 ? "u\n" : "w\n");
  }
  const DataTable t = parse_csv(std::move(text), "big.csv", {ColumnKindChoice::kDiscrete});
  ASSERT_EQ(t.num_rows(), 1'000'000u);
  EXPECT_EQ(t.num_levels(0), 7);
  EXPECT_EQ(t.codes(0)[999'999], 999'999 % 7);  // levels "0".."6" in numeric order
  EXPECT_EQ(t.codes(2)[999'999], 0);            // "u" < "w"
}

TEST(Csv, MissingFileIsAnInputError) {
  EXPECT_THROW(read_csv("/nonexistent/covey/data.csv"), InputError);
}

TEST(Csv, FileBeyondTheMemoryLimitIsRefusedBeforeReading) {
  testing_util::TempDir dir;
  const std::string path = dir.file("wide.csv");
  {
    std::ofstream out(path);
    out << "a,b\n";
    for (int i = 0; i < 1000; ++i) out << (i % 2 ? "x,y\n" : "z,w\n");
  }
  CsvOptions options;
  options.memory_limit = 1024;
  try {
    read_csv(path, options);
    ADD_FAILURE() << "expected a ResourceError";
  } catch (const ResourceError& e) {
    const std::string m = e.message_template();
    EXPECT_NE(m.find(path), std::string::npos) << m;
    EXPECT_NE(m.find("{memory_limit}"), std::string::npos) << m;
  }
  options.memory_limit = std::uint64_t{1} << 20;
  EXPECT_EQ(read_csv(path, options).num_rows(), 1000u);
}

}  // namespace
}  // namespace covey
