// The draws file of `covey exact --draws` (exact_posterior.hpp): the common draws layout
// (draws_file.hpp) with the figures a reader needs to trust and reproduce the draws.
#include <string>
#include <vector>

#include "covey/core/atomic_file.hpp"
#include "covey/core/attributes.hpp"
#include "covey/core/version.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/draws_file.hpp"

namespace covey {

void write_exact_draws(const std::string& path, const ScoreTable& table, const ExactEngine& engine,
                       const std::vector<Dag>& draws, std::uint64_t seed,
                       const std::string& command_line, bool overwrite) {
  require_new_output(path, overwrite);
  std::vector<double> log_weights;
  log_weights.reserve(draws.size());
  for (const Dag& d : draws) log_weights.push_back(log_weight(table, d));
  const Attributes attributes = {
      {"kind", std::string("exact-draws")},
      {"seed", static_cast<long long>(seed)},
      {"log_total_weight", engine.posterior().log_total_weight},
      {"route", std::string(to_string(engine.plan().route))},
      {"draws_per_stream", static_cast<long long>(ExactEngine::kDrawsPerStream)},
      {"command_line", command_line},
      {"covey_version", std::string(kVersion)}};
  write_draws(path, table, draws, log_weights, attributes);
}

}  // namespace covey
