#pragma once
// One exception type for every user-facing failure: the CLI prints what() on one line and exits
// non-zero. Messages name the file, line, column or option at fault.
#include <functional>
#include <stdexcept>
#include <string>

namespace covey {

class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Input the user supplied is malformed (file content, option values).
class InputError : public Error {
 public:
  using Error::Error;
};

// A file that cannot be opened, read or written: missing, unreadable, a folder, or a write that
// failed. A kind of InputError so that callers catching bad input still catch it; the Python
// module raises it as an OSError too.
class FileError : public InputError {
 public:
  using InputError::InputError;
};

// A message that names fields of the library's options in braces ("{max_indegree} must be 0 or
// more"; "raise {memory_limit}"). what() shows the bare field names; a program with its own
// spelling of the fields (the CLI's flags, the Python module's keywords) prints render(spell).
class FieldMessage {
 public:
  using Spelling = std::function<std::string(const std::string& field)>;
  explicit FieldMessage(std::string message_template) : template_(std::move(message_template)) {}
  virtual ~FieldMessage() = default;
  std::string render(const Spelling& spell) const { return fill(template_, spell); }
  const std::string& message_template() const { return template_; }
  static std::string bare(const std::string& text) {
    return fill(text, [](const std::string& f) { return f; });
  }

 private:
  // Replaces every "{field}" by spell(field); a brace without a closing one stays as written.
  static std::string fill(const std::string& text, const Spelling& spell) {
    std::string out;
    std::size_t at = 0;
    while (at < text.size()) {
      const std::size_t open = text.find('{', at);
      const std::size_t close = open == std::string::npos ? open : text.find('}', open);
      if (close == std::string::npos) break;
      out.append(text, at, open - at);
      out += spell(text.substr(open + 1, close - open - 1));
      at = close + 1;
    }
    out.append(text, at, std::string::npos);
    return out;
  }
  std::string template_;
};

// A size or memory estimate exceeds what the user allowed or the machine has. The remedy it
// names (a limit to raise, a size to lower) is a field in braces, as in FieldMessage.
class ResourceError : public Error, public FieldMessage {
 public:
  explicit ResourceError(const std::string& message_template)
      : Error(bare(message_template)), FieldMessage(message_template) {}
};

// A bad option value, told in the library's words (FieldMessage): "{max_indegree} must be 0 or
// more, got -1". Also an input error whose remedy is an option ("use {drop_incomplete}").
class OptionError : public InputError, public FieldMessage {
 public:
  explicit OptionError(const std::string& message_template)
      : InputError(bare(message_template)), FieldMessage(message_template) {}
};

}  // namespace covey
