// libFuzzer target: the TSV local-score reader (read_scores_tsv).
#include "covey/scores/score_io.hpp"
#include "fuzz_util.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  return covey::fuzz::run_reader(data, size, ".tsv", [](const std::string& path) {
    covey::ScoreTable table = covey::read_scores_tsv(path);
    (void)table.fingerprint();
  });
}
