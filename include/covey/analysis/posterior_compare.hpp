#pragma once
// Two posteriors over DAGs side by side (docs/mathematics.md section 7): feature probabilities
// estimated from any covey result -- a chain run (MCSE from the diagnostics), exact draws over all
// DAGs or over the cover-bounded class D_k (binomial standard errors), or a score table, whose
// exact all-DAG posterior is computed (no error) -- their differences with standard errors, the
// posterior mass of D_k under the unrestricted side, and log Z_all = log Z_k - log P(D_k | data) by
// the delta method when one side is a cover-bounded result.
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "covey/graph/features.hpp"

namespace covey {

// What a file holds, from its contents (a .tsv or HDF5 score table, a chain run, draws).
enum class PosteriorSource { kChainRun, kCoverDraws, kExactDraws, kExactTable };
const char* to_string(PosteriorSource source);  // "chain-run", "cover-draws", ...
// Throws InputError naming the file when it is none of them.
PosteriorSource detect_posterior_source(const std::string& path);

struct CompareOptions {
  FeatureKinds kinds{true, true, true, false};  // the log score is not compared
  // k of the mass of D_k when no side is cover-bounded; -1: the teleport cover of a chain-run
  // side (the class its teleports drew from), else no mass.
  int cover = -1;
  std::size_t exact_draws = 20000;  // exact draws for the mass of D_k from a table with n > 6
  std::uint64_t seed = 1;           // of those draws
  std::uint64_t memory_limit = 0;   // of the exact engines of a score table; 0: the default
};

struct Estimate {
  double value = 0;
  double se = 0;  // 0: exact; NaN: not known (e.g. a feature constant in every chain)
};

// One posterior's feature estimates, kept with what is needed for the mass of D_k.
class PosteriorEstimate {
 public:
  // `paths`: one file, or several run files of one chain run taken together.
  static PosteriorEstimate load(const std::vector<std::string>& paths,
                                const CompareOptions& options);
  ~PosteriorEstimate();
  PosteriorEstimate(PosteriorEstimate&&) noexcept;
  PosteriorEstimate& operator=(PosteriorEstimate&&) noexcept;

  PosteriorSource source() const;
  const std::string& label() const;  // e.g. "chain run run.h5 (4 chains x 1000 draws)"
  const std::vector<std::string>& variables() const;
  std::uint64_t table_fingerprint() const;
  int cover_bound() const;     // k of cover-bounded draws, else -1
  int teleport_cover() const;  // k of a chain run's teleports (its stored options), else -1
  // log Z of the class the source is exact on (log Z_k with its 95% interval for cover draws,
  // log Z with lo = hi for an exact table); nullopt otherwise.
  struct LogWeight {
    double estimate = 0, lo = 0, hi = 0;
  };
  std::optional<LogWeight> log_total_weight() const;
  // The estimate of a feature (edges, adjacencies from < to, ancestors).
  Estimate feature(const FeatureId& id) const;
  // P(D_k | data) under this posterior with its standard error and 95% interval.
  struct Mass {
    double estimate = 0, se = 0, lo = 0, hi = 0;
    std::string method;  // "enumeration", "exact draws", "chain run (MCSE)", "draws"
  };
  Mass cover_class_mass(int k) const;

 private:
  // The estimates, defined and built only in src/analysis/posterior_compare.cpp: load() is the
  // one way to make a PosteriorEstimate; its loaders reach Impl through the friend below.
  struct Impl;
  friend struct PosteriorEstimateLoaders;
  explicit PosteriorEstimate(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

struct FeatureDifference {
  FeatureId id;
  Estimate a, b;
  double diff = 0;  // b - a
  double se = 0;    // sqrt(se_a^2 + se_b^2); NaN when either is unknown
};

struct PosteriorComparison {
  std::string label_a, label_b;
  std::vector<std::string> variables;
  std::vector<FeatureDifference> features;  // largest |diff| first
  struct MassInCover {
    int k = -1;
    std::string side;  // "a" or "b": the unrestricted side it was estimated on
    PosteriorEstimate::Mass mass;
  };
  std::optional<MassInCover> mass_in_cover_class;
  struct LogTotalWeightAll {
    double estimate = 0, lo = 0, hi = 0;
    std::optional<double> exact;  // log Z from an exact table on the other side
  };
  std::optional<LogTotalWeightAll> log_total_weight_all;
};

// Throws InputError when the two were made from different tables.
PosteriorComparison compare_posteriors(const PosteriorEstimate& a, const PosteriorEstimate& b,
                                       const CompareOptions& options);

}  // namespace covey
