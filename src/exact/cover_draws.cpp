#include "covey/exact/cover_draws.hpp"

#include <tbb/parallel_for.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstdlib>
#include <limits>

#include "core/progress.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/core/proportion.hpp"
#include "covey/core/version.hpp"
#include "covey/graph/cover_class.hpp"
#include "covey/graph/draws_file.hpp"

namespace covey {
namespace {
constexpr const char* kDrawsKind = "cover-draws";
}  // namespace

CoverDrawBatch draw_cover_batch(const CoverSampler& sampler, std::uint64_t seed, std::size_t count,
                                bool show_progress, std::uint64_t memory_limit) {
  require_draws_memory(static_cast<double>(count), sampler.num_variables(), "number of draws",
                       memory_limit);
  CoverDrawBatch batch;
  batch.dags.resize(count);
  const std::size_t blocks = (count + kCoverDrawBlock - 1) / kCoverDrawBlock;
  std::vector<std::uint64_t> trials(blocks, 0);
  Progress progress("exact draws", show_progress && Progress::stderr_is_terminal());
  // Rounds of blocks so that the progress line is updated from this thread only.
  const std::size_t round = 64;
  for (std::size_t first = 0; first < blocks; first += round) {
    const std::size_t last = std::min(blocks, first + round);
    tbb::parallel_for(first, last, [&](std::size_t b) {
      Rng rng = make_stream(seed, b);
      const std::size_t end = std::min(count, (b + 1) * kCoverDrawBlock);
      for (std::size_t i = b * kCoverDrawBlock; i < end; ++i)
        batch.dags[i] = sampler.draw(rng, &trials[b]);
    });
    progress.update(double(std::min(count, last * kCoverDrawBlock)), double(count));
  }
  progress.finish();
  for (std::uint64_t t : trials) batch.trials += t;
  return batch;
}

LogTotalWeightEstimate estimate_log_total_weight(double log_upper_bound, std::uint64_t accepted,
                                                 std::uint64_t trials) {
  if (trials == 0 || accepted > trials) throw Error("total-weight estimate: no trials");
  const double p = double(accepted) / double(trials);
  const ProportionInterval ci = wilson_interval(accepted, trials);
  LogTotalWeightEstimate e;
  e.log_estimate = accepted ? log_upper_bound + std::log(p) : -INFINITY;
  const double lo = ci.lo, hi = ci.hi;
  e.log_lo = lo > 0 ? log_upper_bound + std::log(lo) : -INFINITY;
  e.log_hi = log_upper_bound + std::log(hi);
  return e;
}

std::vector<EdgeFrequency> edge_frequencies(const std::vector<Dag>& dags, int n) {
  std::vector<std::uint64_t> counts(std::size_t(n) * n, 0);
  for (const Dag& d : dags)
    for (int v = 0; v < n; ++v)
      for (int u : d.parents_of(v)) ++counts[std::size_t(u) * n + v];
  std::vector<EdgeFrequency> out;
  const double total = double(dags.size());
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v) {
      if (u == v) continue;
      EdgeFrequency e;
      e.from = u;
      e.to = v;
      e.probability = total > 0 ? double(counts[std::size_t(u) * n + v]) / total : 0;
      e.se = total > 0 ? std::sqrt(e.probability * (1 - e.probability) / total) : 0;
      out.push_back(e);
    }
  return out;
}

// Cover draws are the common draws layout (draws_file.hpp) of kind "cover-draws", with the
// sampler's figures as attributes.
void write_cover_draws(const std::string& path, const CoverDrawsFile& d, bool overwrite) {
  require_new_output(path, overwrite);
  const Attributes attributes = {
      {"kind", std::string(kDrawsKind)},
      {"cover_bound", static_cast<long long>(d.cover_bound)},
      {"seed", static_cast<long long>(d.seed)},
      {"draws_per_stream", static_cast<long long>(kCoverDrawBlock)},
      {"trials", static_cast<long long>(d.trials)},
      {"log_upper_bound", d.log_upper_bound},
      {"log_total_weight", d.total_weight.log_estimate},
      {"log_total_weight_ci95_lo", d.total_weight.log_lo},
      {"log_total_weight_ci95_hi", d.total_weight.log_hi},
      {"command_line", d.command_line},
      {"covey_version", d.covey_version.empty() ? std::string(kVersion) : d.covey_version}};
  write_draws(path, d.variables, d.table_fingerprint, d.dags, d.log_weights, attributes);
}

namespace {

// A number the cover-draws attributes must hold (InputError naming the file and the key).
// (A NaN is how the file spells JSON null, which never was a number here.)
double required_number(const Attributes& attributes, const char* key, const std::string& path) {
  const std::optional<double> x = attribute_number(attributes, key);
  if (!x || std::isnan(*x))
    throw InputError(path + ": corrupt cover draws (attribute '" + key + "' missing)");
  return *x;
}

long long required_count(const Attributes& attributes, const char* key, const std::string& path,
                         long long low, long long high) {
  const std::optional<long long> count = attribute_integer(attributes, key);
  if (!count || *count < low || *count > high)
    throw InputError(path + ": corrupt cover draws (attribute '" + key +
                     "' missing or out of range)");
  return *count;
}

}  // namespace

CoverDrawsFile read_cover_draws(const std::string& path) {
  DrawsFile file = read_draws(path);
  if (file.kind != kDrawsKind)
    throw InputError(path + ": not a covey cover-draws file (its draws are of kind '" + file.kind +
                     "')");
  const Attributes& a = file.attributes;
  constexpr long long kMax = std::numeric_limits<long long>::max();
  CoverDrawsFile d;
  d.variables = std::move(file.variables);
  d.cover_bound = static_cast<int>(
      required_count(a, "cover_bound", path, 0, static_cast<long long>(d.variables.size()) - 1));
  d.seed = static_cast<std::uint64_t>(required_count(a, "seed", path, 0, kMax));
  d.trials = static_cast<std::uint64_t>(
      required_count(a, "trials", path, static_cast<long long>(file.dags.size()), kMax));
  d.log_upper_bound = required_number(a, "log_upper_bound", path);
  d.total_weight.log_estimate = required_number(a, "log_total_weight", path);
  d.total_weight.log_lo = required_number(a, "log_total_weight_ci95_lo", path);
  d.total_weight.log_hi = required_number(a, "log_total_weight_ci95_hi", path);
  d.table_fingerprint = file.table_fingerprint;
  for (std::size_t i = 0; i < file.dags.size(); ++i)
    if (!in_cover_class(file.dags[i], d.cover_bound))
      throw InputError(path + ": corrupt cover draws (draw " + std::to_string(i) +
                       " is outside D_" + std::to_string(d.cover_bound) + ")");
  d.command_line = attribute_string(a, "command_line").value_or("");
  d.covey_version = attribute_string(a, "covey_version").value_or("");
  d.dags = std::move(file.dags);
  d.log_weights = std::move(file.log_weights);
  return d;
}

}  // namespace covey
