#include "covey/cover_draws.hpp"

#include <tbb/parallel_for.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstdlib>

#include "covey/atomic_file.hpp"
#include "covey/error.hpp"
#include "covey/h5.hpp"
#include "covey/memory.hpp"
#include "covey/progress.hpp"
#include "covey/proportion.hpp"
#include "covey/version.hpp"

namespace covey {
namespace {
constexpr const char* kDrawsKind = "cover-draws";
constexpr long long kDrawsFormatVersion = 1;
}  // namespace

CoverDrawBatch draw_cover_batch(const CoverSampler& sampler, std::uint64_t seed, std::size_t count,
                                bool show_progress) {
  require_draws_memory(static_cast<double>(count), sampler.num_variables(), "number of draws");
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
      for (std::uint64_t m = d.parents[v]; m; m &= m - 1)
        ++counts[std::size_t(__builtin_ctzll(m)) * n + v];
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

void write_cover_draws(const std::string& path, const CoverDrawsFile& d) {
  const std::size_t n = d.variables.size();
  if (d.log_weights.size() != d.dags.size()) throw Error("draws: one log weight per draw needed");
  AtomicOutput out(path);
  h5::guard(path, [&] {
    H5::H5File file = h5::create(out.temp_path());
    h5::set_attr(file, "kind", std::string(kDrawsKind));
    h5::set_attr(file, "format_version", kDrawsFormatVersion);
    h5::set_attr(file, "cover_bound", static_cast<long long>(d.cover_bound));
    h5::set_attr(file, "seed", static_cast<long long>(d.seed));
    h5::set_attr(file, "count", static_cast<long long>(d.dags.size()));
    h5::set_attr(file, "trials", static_cast<long long>(d.trials));
    h5::set_attr(file, "log_upper_bound", d.log_upper_bound);
    h5::set_attr(file, "log_total_weight", d.total_weight.log_estimate);
    h5::set_attr(file, "log_total_weight_ci95_lo", d.total_weight.log_lo);
    h5::set_attr(file, "log_total_weight_ci95_hi", d.total_weight.log_hi);
    h5::set_attr(file, "table_fingerprint", format_fingerprint(d.table_fingerprint));
    h5::set_attr(file, "command_line", d.command_line);
    h5::set_attr(file, "covey_version",
                 d.covey_version.empty() ? std::string(kVersion) : d.covey_version);
    H5::Group vars = file.createGroup("variables");
    h5::write_strings(vars, "names", d.variables);
    H5::Group draws = file.createGroup("draws");
    h5::create_rows(draws, "parents", n, std::clamp<std::size_t>(d.dags.size(), 1, 4096));
    std::vector<std::uint64_t> rows;
    rows.reserve(d.dags.size() * n);
    for (const Dag& g : d.dags) {
      if (g.parents.size() != n) throw Error("draws: a DAG has the wrong number of variables");
      rows.insert(rows.end(), g.parents.begin(), g.parents.end());
    }
    h5::append_rows(draws, "parents", rows, n);
    h5::write_vector(draws, "log_weight", d.log_weights);
  });
  out.commit();
}

CoverDrawsFile read_cover_draws(const std::string& path) {
  H5::H5File file = h5::open_read(path);
  CoverDrawsFile d;
  h5::guard(path, [&] {
    if (!h5::has_attr(file, "kind") || h5::get_attr_string(file, "kind") != kDrawsKind)
      throw InputError(path + ": not a covey cover-draws file (kind is not '" +
                       std::string(kDrawsKind) + "')");
    if (h5::get_attr_int(file, "format_version") > kDrawsFormatVersion)
      throw InputError(path + ": written by a newer covey");
    d.cover_bound = static_cast<int>(h5::get_attr_int(file, "cover_bound"));
    d.seed = static_cast<std::uint64_t>(h5::get_attr_int(file, "seed"));
    d.trials = static_cast<std::uint64_t>(h5::get_attr_int(file, "trials"));
    d.log_upper_bound = h5::get_attr_double(file, "log_upper_bound");
    d.total_weight.log_estimate = h5::get_attr_double(file, "log_total_weight");
    d.total_weight.log_lo = h5::get_attr_double(file, "log_total_weight_ci95_lo");
    d.total_weight.log_hi = h5::get_attr_double(file, "log_total_weight_ci95_hi");
    d.table_fingerprint = parse_fingerprint(h5::get_attr_string(file, "table_fingerprint"), path);
    d.command_line = h5::get_attr_string(file, "command_line");
    d.covey_version = h5::get_attr_string(file, "covey_version");
    d.variables = h5::read_strings(file.openGroup("variables"), "names");
    const std::size_t n = d.variables.size();
    if (n == 0 || n > 64) throw InputError(path + ": invalid number of variables");
    H5::Group draws = file.openGroup("draws");
    const std::size_t count = h5::num_rows(draws, "parents");
    const std::vector<std::uint64_t> rows = h5::read_rows(draws, "parents", 0, count);
    if (rows.size() != count * n)
      throw InputError(path + ": draws/parents does not have one column per variable");
    d.log_weights = h5::read_doubles(draws, "log_weight");
    if (d.log_weights.size() != count)
      throw InputError(path + ": draws/log_weight does not have one entry per draw");
    if (static_cast<long long>(count) != h5::get_attr_int(file, "count"))
      throw InputError(path + ": the count attribute does not match the draws");
    const std::uint64_t all = n == 64 ? ~std::uint64_t{0} : (std::uint64_t{1} << n) - 1;
    d.dags.reserve(count);
    for (std::size_t r = 0; r < count; ++r) {
      Dag g(static_cast<int>(n));
      for (std::size_t v = 0; v < n; ++v) {
        g.parents[v] = rows[r * n + v];
        if ((g.parents[v] & ~all) || ((g.parents[v] >> v) & 1U))
          throw InputError(path + ": draw " + std::to_string(r) + " has an invalid parent mask");
      }
      d.dags.push_back(std::move(g));
    }
  });
  return d;
}

}  // namespace covey
