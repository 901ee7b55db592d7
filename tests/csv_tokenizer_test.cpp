// core/csv_tokenizer.hpp: the one CSV tokenizer of the data and draws readers.
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "core/csv_tokenizer.hpp"
#include "covey/core/error.hpp"

namespace covey {
namespace {

using Rows = std::vector<std::vector<std::string>>;

// Every row of `text` with the line it starts on.
Rows rows_of(std::string text, std::vector<long>* lines = nullptr, char delimiter = ',') {
  char* const end = text.data() + text.size();
  csv::Tokenizer tok(csv::skip_bom(text.data(), end), end, "t.csv", delimiter);
  Rows rows;
  std::vector<std::string> fields;
  long line = 0;
  while (tok.next_row(fields, line)) {
    rows.push_back(fields);
    if (lines) lines->push_back(line);
  }
  return rows;
}

TEST(CsvTokenizer, OtherDelimiters) {
  // ';': commas are content. Tab: a tab is the delimiter, not a blank, so empty fields survive.
  EXPECT_EQ(rows_of("a;b,c; \"d;e\" \n", nullptr, ';'), (Rows{{"a", "b,c", "d;e"}}));
  EXPECT_EQ(rows_of("a\t\tb \n", nullptr, '\t'), (Rows{{"a", "", "b"}}));
}

TEST(CsvTokenizer, DelimiterIsDetectedFromTheHeader) {
  auto detect = [](const std::string& text) {
    return csv::detect_delimiter(text.data(), text.data() + text.size());
  };
  EXPECT_EQ(detect("a,b,c\n1;2;3;4;5\n"), ',');  // only the header line counts
  EXPECT_EQ(detect("\n\na;b;c\n"), ';');         // past blank lines
  EXPECT_EQ(detect("a\tb\tc\n"), '\t');
  EXPECT_EQ(detect("\"x;y;z\",b\n"), ',');  // not inside quotes
  EXPECT_EQ(detect("a;b,c\n"), ',');        // a tie: ','
  EXPECT_EQ(detect("a\n1\n"), ',');         // one column
}

TEST(CsvTokenizer, QuotesEscapesBlanksAndLineEndings) {
  std::vector<long> lines;
  const Rows rows = rows_of(
      "\xEF\xBB\xBF"
      "a, \"b,c\" ,d\r\n\n  \n\"x\"\"y\",\"two\nlines\",z\n",
      &lines);
  ASSERT_EQ(rows.size(), 2u);
  EXPECT_EQ(rows[0], (std::vector<std::string>{"a", "b,c", "d"}));
  EXPECT_EQ(rows[1], (std::vector<std::string>{"x\"y", "two\nlines", "z"}));
  EXPECT_EQ(lines, (std::vector<long>{1, 4}));  // blank lines 2 and 3 are skipped
}

TEST(CsvTokenizer, ErrorsNameTheFileAndLine) {
  try {
    rows_of("a,b\n\"open,c\n");
    ADD_FAILURE() << "expected an InputError";
  } catch (const InputError& e) {
    EXPECT_STREQ(e.what(), "t.csv:2: a quoted field is not closed before the end of the file");
  }
  try {
    rows_of("a,b\n\"x\"z,y\n");
    ADD_FAILURE() << "expected an InputError";
  } catch (const InputError& e) {
    EXPECT_STREQ(e.what(), "t.csv:2: unexpected text after the closing quote of a field");
  }
}

}  // namespace
}  // namespace covey
