#pragma once
// Shared part of the fuzz targets: the readers of covey take file paths, so each input is written
// to one temporary file per process (under TMPDIR) and read back through the reader's public
// entry point. InputError and ResourceError are the expected answers to a malformed file; any
// other exception escapes, and libFuzzer reports it (with the input) as a crash.
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>

#include "covey/core/error.hpp"

namespace covey::fuzz {

// The per-process input file, removed at exit.
inline const std::string& input_path(const char* extension) {
  static const std::string path = [&] {
    const char* tmp = std::getenv("TMPDIR");
    std::string p = std::string(tmp && *tmp ? tmp : "/tmp") + "/covey-fuzz-" +
                    std::to_string(::getpid()) + extension;
    static std::string removed_at_exit;
    removed_at_exit = p;
    std::atexit([] { std::remove(removed_at_exit.c_str()); });
    return p;
  }();
  return path;
}

inline void write_input(const std::string& path, const std::uint8_t* data, std::size_t size) {
  std::FILE* f = std::fopen(path.c_str(), "wb");
  if (!f) std::abort();
  if (size > 0 && std::fwrite(data, 1, size, f) != size) std::abort();
  if (std::fclose(f) != 0) std::abort();
}

// Runs read(path), catching the errors a bad file is expected to raise (anything else, or a
// crash, is a finding). Returns 0, libFuzzer's "keep going".
template <class Read>
int read_expecting_clean_errors(const std::string& path, Read&& read) {
  try {
    read(path);
  } catch (const InputError&) {
  } catch (const ResourceError&) {
  }
  return 0;
}

// Writes the input to the per-process file and reads it back with `read`.
template <class Read>
int run_reader(const std::uint8_t* data, std::size_t size, const char* extension, Read&& read) {
  const std::string& path = input_path(extension);
  write_input(path, data, size);
  return read_expecting_clean_errors(path, read);
}

}  // namespace covey::fuzz
