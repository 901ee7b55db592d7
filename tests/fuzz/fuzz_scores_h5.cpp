// libFuzzer target: the HDF5 score-table reader (read_scores_hdf5), on edited score files
// (fuzz_h5_edit.hpp).
#include "covey/scores/score_io.hpp"
#include "fuzz_h5_edit.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  return covey::fuzz::run_h5_reader("scores_h5", data, size, [](const std::string& path) {
    covey::ScoreTable table = covey::read_scores_hdf5(path);
    (void)table.fingerprint();
  });
}
