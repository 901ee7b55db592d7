#include "covey/core/atomic_file.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <random>

#include "covey/core/error.hpp"

namespace covey {
namespace {

std::string temp_name_for(const std::string& target) {
  const std::filesystem::path p(target);
  std::random_device rd;
  // Built by append: GCC 12 warns falsely (-Wrestrict) on chained operator+ here.
  std::string name(".");
  name.append(p.filename().string()).append(".tmp-").append(std::to_string(::getpid()));
  name.append("-").append(std::to_string(rd() % 1000000));
  return (p.parent_path() / name).string();
}

void fsync_path(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY);
  if (fd >= 0) {
    ::fsync(fd);
    ::close(fd);
  }
}

}  // namespace

void require_output_path(const std::string& path) {
  if (path.empty()) throw InputError("output path is empty");
  const std::filesystem::path dir = std::filesystem::path(path).parent_path();
  if (!dir.empty() && !std::filesystem::is_directory(dir))
    throw FileError(path + ": output directory '" + dir.string() + "' does not exist");
  if (std::filesystem::is_directory(path)) throw FileError(path + ": output path is a directory");
}

void require_new_output(const std::string& path, bool overwrite) {
  require_output_path(path);
  if (overwrite || !std::filesystem::exists(path)) return;
  // A path holding braces would read as a field name: they are rare enough in file names to
  // show as parentheses.
  std::string shown = path;
  for (char& c : shown)
    if (c == '{' || c == '}') c = c == '{' ? '(' : ')';
  throw OptionError(shown + ": exists; {overwrite} replaces it");
}

AtomicOutput::AtomicOutput(std::string target) : target_(std::move(target)) {
  require_output_path(target_);
  temp_ = temp_name_for(target_);
}

AtomicOutput::~AtomicOutput() {
  if (!committed_) std::remove(temp_.c_str());
}

void AtomicOutput::commit() {
  fsync_path(temp_);
  if (std::rename(temp_.c_str(), target_.c_str()) != 0)
    throw FileError(target_ + ": cannot write output: " + std::strerror(errno));
  committed_ = true;
}

AtomicDirectory::AtomicDirectory(std::string target) : target_(std::move(target)) {
  while (target_.size() > 1 && target_.back() == '/') target_.pop_back();
  if (target_.empty()) throw InputError("output folder path is empty");
  const std::filesystem::path path(target_);
  const std::filesystem::path dir = path.parent_path();
  if (!dir.empty() && !std::filesystem::is_directory(dir))
    throw FileError(target_ + ": parent folder '" + dir.string() + "' does not exist");
  if (std::filesystem::exists(path) && !std::filesystem::is_directory(path))
    throw InputError(target_ + ": exists and is not a folder");
  std::string templ = (dir / ("." + path.filename().string() + ".tmp-XXXXXX")).string();
  if (!::mkdtemp(templ.data()))
    throw FileError(target_ +
                    ": cannot create a temporary folder beside it: " + std::strerror(errno));
  temp_ = templ;
  // mkdtemp makes the folder private (0700); give it the permissions of a plain mkdir.
  const mode_t mask = ::umask(0);
  ::umask(mask);
  ::chmod(temp_.c_str(), 0777 & ~mask);
}

AtomicDirectory::~AtomicDirectory() {
  std::error_code ec;
  if (!committed_) std::filesystem::remove_all(temp_, ec);
}

void AtomicDirectory::commit() {
  const std::string parent = std::filesystem::path(target_).parent_path().string();
  if (!std::filesystem::exists(target_)) {
    if (std::rename(temp_.c_str(), target_.c_str()) != 0)
      throw FileError(target_ + ": cannot write output folder: " + std::strerror(errno));
  } else if (::renameat2(AT_FDCWD, temp_.c_str(), AT_FDCWD, target_.c_str(), RENAME_EXCHANGE) ==
             0) {
    // The old folder now sits at the temporary name.
    committed_ = true;
    std::error_code ec;
    std::filesystem::remove_all(temp_, ec);
  } else if (errno == EINVAL || errno == ENOSYS || errno == ENOTSUP) {
    // No atomic exchange on this file system: move the old folder aside, then swap in the new.
    const std::string aside = temp_ + ".old";
    if (std::rename(target_.c_str(), aside.c_str()) != 0)
      throw Error(target_ + ": cannot replace output folder: " + std::strerror(errno));
    if (std::rename(temp_.c_str(), target_.c_str()) != 0) {
      const int err = errno;
      std::rename(aside.c_str(), target_.c_str());
      throw Error(target_ + ": cannot replace output folder: " + std::strerror(err));
    }
    std::error_code ec;
    std::filesystem::remove_all(aside, ec);
  } else {
    throw Error(target_ + ": cannot replace output folder: " + std::strerror(errno));
  }
  committed_ = true;
  fsync_path(parent.empty() ? "." : parent);
}

void write_text_file_atomically(const std::string& path, const std::string& text) {
  AtomicOutput out(path);
  {
    std::ofstream file(out.temp_path(), std::ios::binary);
    file << text;
    file.flush();
    if (!file) throw FileError(path + ": cannot write output (disk full or not writable?)");
  }
  out.commit();
}

void require_readable(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw FileError(path + ": cannot open for reading: " + std::strerror(errno));
  if (std::filesystem::is_directory(path)) throw FileError(path + ": is a directory, not a file");
}

}  // namespace covey
