// libFuzzer target: the chain-run reader (ChainRun::open, every per-chain series and the
// features), on edited run files (fuzz_h5_edit.hpp).
#include "covey/chains/chain_run_file.hpp"
#include "fuzz_h5_edit.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  return covey::fuzz::run_h5_reader("chain_h5", data, size, [](const std::string& path) {
    covey::ChainRun run = covey::ChainRun::open(path);
    for (int c = 0; c < run.num_chains(); ++c) {
      (void)run.draws(c);
      (void)run.log_scores(c);
      (void)run.draw_steps(c);
      (void)run.regenerations(c);
      (void)run.checkpoint(c);
    }
    covey::RunFeatures features(run);
  });
}
