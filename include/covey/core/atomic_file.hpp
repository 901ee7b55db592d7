#pragma once
// Outputs are never half-written: write to a temporary file beside the target, then rename it
// over the target on commit(). An uncommitted output (error, exception) is removed, and an
// existing file at the target is left untouched.
#include <string>

namespace covey {

class AtomicOutput {
 public:
  explicit AtomicOutput(std::string target);
  ~AtomicOutput();
  AtomicOutput(const AtomicOutput&) = delete;
  AtomicOutput& operator=(const AtomicOutput&) = delete;

  const std::string& temp_path() const { return temp_; }
  const std::string& target_path() const { return target_; }
  void commit();  // fsync + rename; throws Error on failure

 private:
  std::string target_;
  std::string temp_;
  bool committed_ = false;
};

// A folder written whole or not at all: files go into temp_path(), a fresh folder beside the
// target; commit() puts it in the target's place, replacing an existing folder there (by an
// atomic exchange where the file system allows it). Without commit() the temporary folder is
// removed and the target is left untouched. Whether an existing folder may be replaced is the
// caller's decision (check before committing).
class AtomicDirectory {
 public:
  explicit AtomicDirectory(std::string target);
  ~AtomicDirectory();
  AtomicDirectory(const AtomicDirectory&) = delete;
  AtomicDirectory& operator=(const AtomicDirectory&) = delete;

  const std::string& temp_path() const { return temp_; }
  const std::string& target_path() const { return target_; }
  void commit();  // throws Error on failure (the target is then unchanged)

 private:
  std::string target_;
  std::string temp_;
  bool committed_ = false;
};

// Writes `text` to `path` atomically.
void write_text_file_atomically(const std::string& path, const std::string& text);

// Throws InputError unless an AtomicOutput could be made for `path` (its folder exists and it is
// not a folder): lets long commands fail before the work rather than after it.
void require_output_path(const std::string& path);

// Never replace a user's file unasked: throws OptionError naming the path when it exists and
// `overwrite` (the field the CLI spells --force) is not set. Checks require_output_path too.
void require_new_output(const std::string& path, bool overwrite);

// Throws InputError when the file cannot be opened for reading (names the path).
void require_readable(const std::string& path);

}  // namespace covey
