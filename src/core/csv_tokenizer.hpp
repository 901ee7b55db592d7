#pragma once
// The one CSV tokenizer of covey's readers (data: src/data/data.cpp; draws:
// diagnostics/draws_csv.cpp). Private to covey; include as "core/csv_tokenizer.hpp".
#include <string>
#include <string_view>
#include <vector>

namespace covey::csv {

// Past a UTF-8 byte-order mark at `begin`, if there is one.
char* skip_bom(char* begin, char* end);

// The delimiter of the first non-blank line of [begin, end): whichever of ',', ';' and tab occurs
// most often outside quotes (',' on a tie or when none occurs). A one-column file has none.
char detect_delimiter(const char* begin, const char* end);

inline bool is_blank(char c) {
  return c == ' ' || c == '\t';
}

// One field of the CSV text: [begin, end) is its content (inside the quotes when quoted).
struct Field {
  char* begin;
  char* end;
  bool quoted;
  bool escaped;  // content holds "" pairs still to be collapsed
  std::string_view view() const { return {begin, std::size_t(end - begin)}; }
  bool missing() const {
    const std::size_t n = std::size_t(end - begin);
    return n == 0 || (n == 2 && begin[0] == 'N' && begin[1] == 'A' && !escaped);
  }
  // Collapses "" to " in place (the content only shrinks); returns the new content.
  std::string_view unescape() {
    if (!escaped) return view();
    char* w = begin;
    for (char* r = begin; r < end; ++r) {
      *w++ = *r;
      if (*r == '"') ++r;
    }
    end = w;
    escaped = false;
    return view();
  }
};

// Splits CSV text (RFC 4180: fields separated by commas, or by another delimiter such as ';' or
// a tab, rows by LF or CRLF, a field may be double-quoted with "" for a quote and line breaks
// inside) into rows and fields without copying. Blanks around fields are dropped (a tab is not a
// blank when it is the delimiter). Line numbers are physical file lines, for messages
// "NAME:LINE: ..." (InputError).
class Tokenizer {
 public:
  Tokenizer(char* begin, char* end, const std::string& name, char delimiter = ',')
      : p_(begin), end_(end), delimiter_(delimiter), name_(name) {}

  bool at_end() const { return p_ >= end_; }
  long line() const { return line_; }
  char* position() const { return p_; }
  void seek(char* p) { p_ = p; }

  // Reads the field at the cursor; returns true when it was the last field of its row (and then
  // consumes the line ending).
  [[gnu::always_inline]] bool next(Field& f) {
    while (p_ < end_ && blank(*p_)) ++p_;
    f.escaped = false;
    if (p_ < end_ && *p_ == '"') {
      const long opened = line_;
      f.quoted = true;
      f.begin = ++p_;
      for (;;) {
        if (p_ >= end_) fail_unclosed_quote(opened);
        const char c = *p_;
        if (c == '"') {
          if (p_ + 1 < end_ && p_[1] == '"') {
            f.escaped = true;
            p_ += 2;
            continue;
          }
          break;
        }
        if (c == '\n') ++line_;
        ++p_;
      }
      f.end = p_++;
      while (p_ < end_ && blank(*p_)) ++p_;
      if (p_ < end_ && *p_ != delimiter_ && *p_ != '\n' && *p_ != '\r') fail_text_after_quote();
    } else {
      f.quoted = false;
      f.begin = p_;
      while (p_ < end_ && *p_ != delimiter_ && *p_ != '\n' && *p_ != '\r') ++p_;
      f.end = p_;
      while (f.end > f.begin && blank(f.end[-1])) --f.end;
    }
    if (p_ >= end_) return true;
    if (*p_ == delimiter_) {
      ++p_;
      return false;
    }
    if (*p_ == '\r') ++p_;
    if (p_ < end_ && *p_ == '\n') ++p_;
    ++line_;
    return true;
  }

  // The next row as strings (quotes removed, "" collapsed), skipping blank rows; false at the
  // end. `line` is set to the line the row starts on.
  bool next_row(std::vector<std::string>& fields, long& line);

 private:
  bool blank(char c) const { return c != delimiter_ && is_blank(c); }
  [[noreturn]] void fail_unclosed_quote(long opened) const;
  [[noreturn]] void fail_text_after_quote() const;

  char* p_;
  char* end_;
  char delimiter_;
  long line_ = 1;
  std::string name_;  // the file, for messages
};

}  // namespace covey::csv
