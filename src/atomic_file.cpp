#include "covey/atomic_file.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <random>

#include "covey/error.hpp"

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
    throw InputError(path + ": output directory '" + dir.string() + "' does not exist");
  if (std::filesystem::is_directory(path)) throw InputError(path + ": output path is a directory");
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
    throw Error(target_ + ": cannot write output: " + std::strerror(errno));
  committed_ = true;
}

void write_text_file_atomically(const std::string& path, const std::string& text) {
  AtomicOutput out(path);
  {
    std::ofstream file(out.temp_path(), std::ios::binary);
    file << text;
    file.flush();
    if (!file) throw Error(path + ": cannot write output (disk full or not writable?)");
  }
  out.commit();
}

void require_readable(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot open for reading: " + std::strerror(errno));
  if (std::filesystem::is_directory(path)) throw InputError(path + ": is a directory, not a file");
}

}  // namespace covey
