#pragma once
// Batches of exact draws from the cover-bounded class, their summaries (total-weight estimate,
// edge probabilities) and the draws file (HDF5; layout in docs/file-formats.md), which other
// commands read back.
#include <cstdint>
#include <string>
#include <vector>

#include "covey/exact/cover_sampler.hpp"
#include "covey/graph/dag.hpp"

namespace covey {

struct CoverDrawBatch {
  std::vector<Dag> dags;
  std::uint64_t trials = 0;  // proposals drawn, accepted or not
};

// Draws per block of a random stream: draw i uses stream make_stream(seed, i / kCoverDrawBlock).
inline constexpr std::size_t kCoverDrawBlock = 256;

// `count` exact draws, parallel over blocks (TBB); identical for any thread count. Refused with a
// ResourceError when they would not fit in `memory_limit` bytes (0: default_memory_limit()).
CoverDrawBatch draw_cover_batch(const CoverSampler& sampler, std::uint64_t seed, std::size_t count,
                                bool show_progress = true, std::uint64_t memory_limit = 0);

// Z_k estimate U * accepted / trials with the Wilson 95% interval of the acceptance probability
// (common practice for a binomial proportion), all on log scale.
struct LogTotalWeightEstimate {
  double log_estimate = 0, log_lo = 0, log_hi = 0;
};
LogTotalWeightEstimate estimate_log_total_weight(double log_upper_bound, std::uint64_t accepted,
                                                 std::uint64_t trials);

// Frequency of every directed edge u -> v (u != v, in order u-major) with its binomial standard
// error sqrt(p (1 - p) / count).
struct EdgeFrequency {
  int from = 0, to = 0;
  double probability = 0, se = 0;
};
std::vector<EdgeFrequency> edge_frequencies(const std::vector<Dag>& dags, int num_variables);

struct CoverDrawsFile {
  std::vector<std::string> variables;
  int cover_bound = 0;
  std::uint64_t seed = 0;
  std::uint64_t trials = 0;
  double log_upper_bound = 0;
  LogTotalWeightEstimate total_weight;
  std::uint64_t table_fingerprint = 0;
  std::string command_line, covey_version;
  std::vector<Dag> dags;
  std::vector<double> log_weights;  // log w(G) of each draw
};

// Atomic; refuses an existing `path` unless `overwrite` (require_new_output).
void write_cover_draws(const std::string& path, const CoverDrawsFile& draws,
                       bool overwrite = false);
// Throws InputError naming the file when it is not a readable cover-draws file.
CoverDrawsFile read_cover_draws(const std::string& path);

}  // namespace covey
