#pragma once
// One exception type for every user-facing failure: the CLI prints what() on one line and exits
// non-zero. Messages name the file, line, column or option at fault.
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

// A size or memory estimate exceeds what the user allowed or the machine has.
class ResourceError : public Error {
 public:
  using Error::Error;
};

}  // namespace covey
