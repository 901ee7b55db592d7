// Regenerative standard error of a mean over i.i.d. tours (Mykland, Tierney & Yu 1995).
#include <cmath>
#include <string>

#include "covey/core/error.hpp"
#include "covey/diagnostics/diagnostics.hpp"

namespace covey {

namespace {

struct Tour {
  double sum;     // Y_j: sum of the feature over the tour
  double length;  // N_j: number of draws in the tour
};

std::vector<Tour> collect_tours(DrawsView draws,
                                std::span<const std::vector<std::size_t>> boundaries) {
  if (boundaries.size() != static_cast<std::size_t>(draws.chains))
    throw InputError("regenerative_mean: " + std::to_string(boundaries.size()) +
                     " boundary lists for " + std::to_string(draws.chains) + " chains");
  std::vector<Tour> tours;
  for (int c = 0; c < draws.chains; ++c) {
    const auto chain = draws.chain(c);
    const std::vector<std::size_t>& b = boundaries[c];
    for (std::size_t k = 0; k < b.size(); ++k) {
      if (b[k] > chain.size() || (k > 0 && b[k] <= b[k - 1]))
        throw InputError("regenerative_mean: chain " + std::to_string(c) +
                         ": tour boundaries must increase within [0, " +
                         std::to_string(chain.size()) + "]");
      if (k == 0) continue;
      double sum = 0;
      for (std::size_t t = b[k - 1]; t < b[k]; ++t) sum += chain[t];
      tours.push_back({sum, static_cast<double>(b[k] - b[k - 1])});
    }
  }
  if (tours.size() < 2)
    throw InputError("regenerative_mean: " + std::to_string(tours.size()) +
                     " complete tours; at least 2 are needed");
  return tours;
}

}  // namespace

RegenerativeEstimate regenerative_mean(DrawsView draws,
                                       std::span<const std::vector<std::size_t>> boundaries) {
  const std::vector<Tour> tours = collect_tours(draws, boundaries);
  const auto r = static_cast<double>(tours.size());
  double total = 0, length = 0;
  for (const Tour& t : tours) {
    total += t.sum;
    length += t.length;
  }
  RegenerativeEstimate e;
  e.tours = tours.size();
  e.mean = total / length;
  const double mean_length = length / r;
  double residual_squares = 0, length_squares = 0;
  for (const Tour& t : tours) {
    residual_squares += (t.sum - e.mean * t.length) * (t.sum - e.mean * t.length);
    length_squares += (t.length - mean_length) * (t.length - mean_length);
  }
  e.standard_error = std::sqrt(residual_squares) / length;
  e.tour_length_cv = std::sqrt(length_squares / r) / (mean_length * std::sqrt(r));
  return e;
}

}  // namespace covey
