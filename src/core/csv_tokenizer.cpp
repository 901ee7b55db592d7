#include "core/csv_tokenizer.hpp"

#include <cstring>

#include "covey/core/error.hpp"

namespace covey::csv {

char* skip_bom(char* begin, char* end) {
  return end - begin >= 3 && std::memcmp(begin, "\xEF\xBB\xBF", 3) == 0 ? begin + 3 : begin;
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
