// libFuzzer target: the cover-sampler file reader (CoverSampler::load), on edited sampler files
// (fuzz_h5_edit.hpp). Loading checks the table fingerprint, so the target loads against the
// fixed table h5_bases/sampler_h5.table.tsv that the base files were saved from (path in
// COVEY_FUZZ_SAMPLER_TABLE, or the one compiled in); a loaded sampler then makes a few
// proposals.
#include <cstdlib>

#include "covey/core/random.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/scores/score_io.hpp"
#include "fuzz_h5_edit.hpp"

#ifndef COVEY_FUZZ_SAMPLER_TABLE
#define COVEY_FUZZ_SAMPLER_TABLE ""
#endif

namespace {
const covey::ScoreTable& table() {
  static const covey::ScoreTable t = [] {
    const char* env = std::getenv("COVEY_FUZZ_SAMPLER_TABLE");
    return covey::read_scores_tsv(env && *env ? env : COVEY_FUZZ_SAMPLER_TABLE);
  }();
  return t;
}
}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const covey::ScoreTable& t = table();
  return covey::fuzz::run_h5_reader("sampler_h5", data, size, [&](const std::string& path) {
    covey::CoverSampler sampler = covey::CoverSampler::load(path, t);
    covey::Rng rng = covey::make_stream(1, 0);
    for (int i = 0; i < 3; ++i) (void)sampler.draw_proposal(rng);
  });
}
