// The exact engines from Python: the best DAG of D_k (`covey best`), exact draws from D_k with
// log Z_k (`covey draw`) and the exact posterior over all DAGs (`covey exact`). Results are
// dicts of numbers and NumPy arrays; python/covey/__init__.py labels them as DataFrames.
#include <pybind11/numpy.h>
#include <pybind11/stl.h>

#include "bindings.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/exact/cover_best.hpp"
#include "covey/exact/cover_draws.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/exact/exact_posterior.hpp"

namespace covey::python {
namespace {

// DAGs as a boolean array [draw, from, to] (true: the edge from -> to).
py::array_t<bool> dags_array(const std::vector<Dag>& dags, int n) {
  py::array_t<bool> out({static_cast<py::ssize_t>(dags.size()), py::ssize_t(n), py::ssize_t(n)});
  auto a = out.mutable_unchecked<3>();
  for (std::size_t i = 0; i < dags.size(); ++i)
    for (int u = 0; u < n; ++u)
      for (int v = 0; v < n; ++v) a(i, u, v) = dags[i].has_edge(u, v);
  return out;
}

// An n x n matrix of probabilities [from, to] by `probability(from, to)` (0 on the diagonal).
template <class Probability>
py::array_t<double> matrix(int n, Probability probability) {
  py::array_t<double> out({py::ssize_t(n), py::ssize_t(n)});
  auto a = out.mutable_unchecked<2>();
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v) a(u, v) = u == v ? 0.0 : probability(u, v);
  return out;
}

py::dict best(const py::object& table_or_path, int cover, int threads) {
  const auto table = table_of(table_or_path);
  check_cover_bound(*table, cover, "cover");
  const auto limit = thread_limit(threads);
  CoverBestResult best;
  {
    py::gil_scoped_release release;
    best = best_dag_in_cover_class(*table, cover);
  }
  py::dict parents;
  for (int v = 0; v < table->num_variables(); ++v)
    parents[py::str(table->name(v))] = names_of(*table, best.dag.parents_of(v));
  py::dict out;
  out["variables"] = variable_names(table->variables());
  out["log_score"] = best.log_score;
  out["cover"] = names_of(*table, best.cover);
  out["parents"] = parents;
  out["dag"] = dags_array({best.dag}, table->num_variables())[py::int_(0)];
  return out;
}

py::dict draw(const py::object& table_or_path, int cover, std::size_t count, std::uint64_t seed,
              const py::object& memory_limit, int threads) {
  const auto table = table_of(table_or_path);
  const std::uint64_t limit = memory_limit_of(memory_limit);
  const auto thread_ceiling = thread_limit(threads);
  check_cover_bound(*table, cover, "cover");
  if (count == 0) throw OptionError("{count} must be positive");
  require_draws_memory(static_cast<double>(count), table->num_variables(), "count", limit);
  CoverSampler sampler;
  CoverDrawBatch batch;
  {
    py::gil_scoped_release release;
    CoverSamplerOptions options;
    options.memory_limit_bytes = limit;
    sampler = CoverSampler::build(*table, cover, options);
    batch = draw_cover_batch(sampler, seed, count, true, limit);
  }
  const auto estimate = estimate_log_total_weight(sampler.log_upper_bound(), count, batch.trials);
  const int n = table->num_variables();
  std::vector<double> probability(std::size_t(n) * n, 0.0), se(std::size_t(n) * n, 0.0);
  for (const EdgeFrequency& f : edge_frequencies(batch.dags, n)) {
    probability[std::size_t(f.from) * n + f.to] = f.probability;
    se[std::size_t(f.from) * n + f.to] = f.se;
  }
  py::dict out;
  out["variables"] = variable_names(table->variables());
  out["cover"] = cover;
  out["count"] = count;
  out["seed"] = seed;
  out["trials"] = batch.trials;
  out["acceptance_rate"] = double(count) / double(batch.trials);
  out["log_upper_bound"] = sampler.log_upper_bound();
  out["log_z"] = estimate.log_estimate;
  out["log_z_ci95"] = py::make_tuple(estimate.log_lo, estimate.log_hi);
  out["edge_matrix"] = matrix(n, [&](int u, int v) { return probability[std::size_t(u) * n + v]; });
  out["edge_se_matrix"] = matrix(n, [&](int u, int v) { return se[std::size_t(u) * n + v]; });
  out["draws"] = dags_array(batch.dags, n);
  return out;
}

py::dict exact(const py::object& table_or_path, const std::string& route,
               const py::object& memory_limit, double max_seconds, std::size_t draws,
               std::uint64_t seed, int threads) {
  const auto table = table_of(table_or_path);
  ExactOptions options;
  options.route = exact_route_from_string(route);
  options.limits.max_bytes = memory_limit_of(memory_limit);
  options.limits.max_seconds = max_seconds;
  options.draws = draws > 0;
  if (draws > 0)
    require_draws_memory(static_cast<double>(draws), table->num_variables(), "draws",
                         options.limits.max_bytes);
  const auto thread_ceiling = thread_limit(threads);
  std::unique_ptr<ExactEngine> engine;
  std::vector<Dag> dags;
  {
    py::gil_scoped_release release;
    engine = std::make_unique<ExactEngine>(*table, options);
    if (draws > 0) dags = engine->draw_many(draws, seed);
  }
  const ExactPosterior& post = engine->posterior();
  const int n = table->num_variables();
  py::dict out;
  out["variables"] = variable_names(table->variables());
  out["log_z"] = post.log_total_weight;
  out["route"] = to_string(engine->plan().route);
  out["discrepancy"] = post.discrepancy;
  out["clamped_sums"] = post.clamped;
  out["edge_matrix"] = matrix(n, [&](int u, int v) { return post.edge(u, v); });
  out["adjacency_matrix"] = matrix(n, [&](int u, int v) { return post.adjacency(u, v); });
  out["ancestor_matrix"] = matrix(n, [&](int u, int v) { return post.ancestor(u, v); });
  if (draws > 0) out["draws"] = dags_array(dags, n);
  return out;
}

}  // namespace

void bind_engines(py::module_& m) {
  m.def("_best", &best, py::arg("table"), py::arg("cover"), py::arg("threads"));
  m.def("_draw", &draw, py::arg("table"), py::arg("cover"), py::arg("count"), py::arg("seed"),
        py::arg("memory_limit"), py::arg("threads"));
  m.def("_exact", &exact, py::arg("table"), py::arg("route"), py::arg("memory_limit"),
        py::arg("max_seconds"), py::arg("draws"), py::arg("seed"), py::arg("threads"));
}

}  // namespace covey::python
