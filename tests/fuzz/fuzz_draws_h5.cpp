// libFuzzer target: the two HDF5 draws readers (read_draws, the common draws layout, and
// read_cover_draws, the files of `covey draw`), on edited draws files (fuzz_h5_edit.hpp).
#include "covey/exact/cover_draws.hpp"
#include "covey/graph/draws_file.hpp"
#include "fuzz_h5_edit.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  // Both readers on every file: each base is of one kind, and the other reader must refuse it.
  return covey::fuzz::run_h5_reader("draws_h5", data, size, [](const std::string& path) {
    try {
      (void)covey::read_draws(path);
    } catch (const covey::InputError&) {
    }
    (void)covey::read_cover_draws(path);
  });
}
