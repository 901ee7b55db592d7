// CSV reading: RFC 4180 quoting (the rules of RFC 4180 section 2: quoted fields, "" escapes,
// embedded commas and line breaks, CRLF), kind inference and its errors, missing cells, constant
// columns, level order, and size (256 columns, 10^6 rows).
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
  // A table mixing numbers and labels is refused, naming which columns are which.
  const std::string mixed = error_of("num,lab,num2\n1,x,2\n3,y,4\n");
  EXPECT_NE(mixed.find("mixes kinds"), std::string::npos) << mixed;
  EXPECT_NE(mixed.find("numeric columns 'num', 'num2'"), std::string::npos) << mixed;
  EXPECT_NE(mixed.find("label columns 'lab'"), std::string::npos) << mixed;
  EXPECT_NE(mixed.find("'x' on line 2"), std::string::npos) << mixed;
  const std::string forced_gaussian = error_of("a,b\n1,2\n3,abc\n", {ColumnKindChoice::kGaussian});
  EXPECT_NE(forced_gaussian.find("in.csv:3: column 'b': 'abc' is not a finite number"),
            std::string::npos)
      << forced_gaussian;
  // Non-finite numbers are not numbers.
  EXPECT_NE(error_of("a,b\n1,inf\n2,3\n", {ColumnKindChoice::kGaussian}).find("'inf'"),
            std::string::npos);
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
  EXPECT_NE(e.find("--allow-constant"), std::string::npos);
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
    const std::string m = e.what();
    EXPECT_NE(m.find(path), std::string::npos) << m;
    EXPECT_NE(m.find("--memory-limit"), std::string::npos) << m;
  }
  options.memory_limit = std::uint64_t{1} << 20;
  EXPECT_EQ(read_csv(path, options).num_rows(), 1000u);
}

}  // namespace
}  // namespace covey
