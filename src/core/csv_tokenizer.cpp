#include "core/csv_tokenizer.hpp"

#include <cstring>

#include "covey/core/error.hpp"

namespace covey::csv {

char* skip_bom(char* begin, char* end) {
  return end - begin >= 3 && std::memcmp(begin, "\xEF\xBB\xBF", 3) == 0 ? begin + 3 : begin;
}

char detect_delimiter(const char* begin, const char* end) {
  const char* p = begin;
  while (p < end && (*p == '\n' || *p == '\r' || is_blank(*p))) ++p;  // blank lines first
  std::size_t comma = 0, semicolon = 0, tab = 0;
  bool quoted = false;
  for (; p < end; ++p) {
    if (*p == '"') quoted = !quoted;
    if (quoted) continue;
    if (*p == '\n') break;
    comma += *p == ',';
    semicolon += *p == ';';
    tab += *p == '\t';
  }
  if (semicolon > comma && semicolon >= tab) return ';';
  if (tab > comma && tab > semicolon) return '\t';
  return ',';
}

bool Tokenizer::next_row(std::vector<std::string>& fields, long& line) {
  Field f{};
  while (!at_end()) {
    line = line_;
    fields.clear();
    bool last = false;
    while (!last) {
      last = next(f);
      fields.emplace_back(f.unescape());
    }
    if (fields.size() == 1 && fields[0].empty() && !f.quoted) continue;  // a blank line
    return true;
  }
  return false;
}

void Tokenizer::fail_unclosed_quote(long opened) const {
  throw InputError(name_ + ":" + std::to_string(opened) +
                   ": a quoted field is not closed before the end of the file");
}

void Tokenizer::fail_text_after_quote() const {
  throw InputError(name_ + ":" + std::to_string(line_) +
                   ": unexpected text after the closing quote of a field");
}

}  // namespace covey::csv
