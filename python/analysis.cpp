// Results about posteriors from Python: convergence diagnostics of runs (`covey check`) and two
// posteriors compared (`covey compare`), as columns that python/covey/__init__.py makes into
// DataFrames.
#include <pybind11/stl.h>

#include <cmath>

#include "bindings.hpp"
#include "covey/analysis/check.hpp"
#include "covey/analysis/posterior_compare.hpp"
#include "covey/core/error.hpp"

namespace covey::python {
namespace {

py::dict check(const std::vector<std::string>& files, const std::string& features, bool draws,
               double max_rhat, double min_ess, int threads) {
  Thresholds thresholds;
  thresholds.max_rhat = max_rhat;
  thresholds.min_ess = min_ess;
  check_thresholds(thresholds);
  const auto thread_ceiling = thread_limit(threads);
  CheckResult in;
  {
    py::gil_scoped_release release;
    if (draws && files.size() != 1)
      throw InputError("check(draws=True): expected one CSV file, got " +
                       std::to_string(files.size()));
    in = draws ? check_draws_csv(files[0], thresholds)
               : check_chain_runs(files, parse_feature_kinds(features, "features"), thresholds);
  }
  py::list kind, name, from, to, mean, rhat, ess_bulk, ess_tail, ess_mean, mcse, status, regen;
  for (std::size_t i : in.worst_first) {
    const CheckedItem& item = in.items[i];
    const FeatureSummary& s = in.summaries[i];
    kind.append(item.kind);
    name.append(item.name.empty() ? item.display_name : item.name);
    from.append(item.from);
    to.append(item.to);
    mean.append(s.mean);
    rhat.append(s.rhat);
    ess_bulk.append(s.ess_bulk);
    ess_tail.append(s.ess_tail);
    ess_mean.append(s.ess_mean);
    mcse.append(s.mcse);
    status.append(to_string(in.status[i]));
    regen.append(in.regenerative_se.empty() ? NAN : in.regenerative_se[i]);
  }
  py::dict columns;
  columns["kind"] = kind;
  columns["name"] = name;
  columns["from"] = from;
  columns["to"] = to;
  columns["mean"] = mean;
  columns["rhat"] = rhat;
  columns["ess_bulk"] = ess_bulk;
  columns["ess_tail"] = ess_tail;
  columns["ess_mean"] = ess_mean;
  columns["mcse"] = mcse;
  columns["regenerative_se"] = regen;
  columns["status"] = status;
  const Verdict& v = in.verdict;
  py::dict verdict;
  verdict["converged"] = v.converged();
  verdict["passing"] = v.passing;
  verdict["failing"] = v.failing;
  verdict["undefined"] = v.undefined;
  verdict["max_rhat"] = v.max_rhat;
  verdict["min_ess_bulk"] = v.min_ess_bulk;
  verdict["min_ess_tail"] = v.min_ess_tail;
  py::dict out;
  out["columns"] = columns;
  out["verdict"] = verdict;
  out["chains"] = in.chains;
  out["draws_per_chain"] = in.iterations;
  out["regenerations"] = in.regenerations;
  return out;
}

// A side of a comparison: one file, or several run files of one chain run.
std::vector<std::string> paths_of(const py::object& side) {
  if (py::isinstance<py::str>(side) || py::hasattr(side, "__fspath__"))
    return {py::str(py::module_::import("os").attr("fspath")(side))};
  std::vector<std::string> paths;
  for (const py::handle path : side)
    paths.push_back(py::str(py::module_::import("os").attr("fspath")(path)));
  return paths;
}

py::dict compare(const py::object& a, const py::object& b, const std::string& features,
                 std::optional<int> cover, std::size_t exact_draws, std::uint64_t seed,
                 int threads) {
  CompareOptions options;
  options.kinds = parse_feature_kinds(features, "features");
  options.kinds.score = false;
  options.cover = cover.value_or(-1);
  options.exact_draws = exact_draws;
  options.seed = seed;
  const std::vector<std::string> paths_a = paths_of(a), paths_b = paths_of(b);
  const auto thread_ceiling = thread_limit(threads);
  std::optional<PosteriorComparison> result;
  {
    py::gil_scoped_release release;
    const PosteriorEstimate side_a = PosteriorEstimate::load(paths_a, options);
    const PosteriorEstimate side_b = PosteriorEstimate::load(paths_b, options);
    result = compare_posteriors(side_a, side_b, options);
  }
  const PosteriorComparison& c = *result;
  py::list kind, from, to, value_a, value_b, diff, se;
  for (const FeatureDifference& d : c.features) {
    kind.append(to_string(d.id.kind));
    from.append(c.variables[std::size_t(d.id.from)]);
    to.append(c.variables[std::size_t(d.id.to)]);
    value_a.append(d.a.value);
    value_b.append(d.b.value);
    diff.append(d.diff);
    se.append(d.se);
  }
  py::dict columns;
  columns["kind"] = kind;
  columns["from"] = from;
  columns["to"] = to;
  columns["a"] = value_a;
  columns["b"] = value_b;
  columns["diff"] = diff;
  columns["se"] = se;
  py::dict out;
  out["a"] = c.label_a;
  out["b"] = c.label_b;
  out["columns"] = columns;
  out["mass_in_cover_class"] = py::none();
  if (c.mass_in_cover_class) {
    const auto& m = *c.mass_in_cover_class;
    py::dict mass;
    mass["k"] = m.k;
    mass["side"] = m.side;
    mass["method"] = m.mass.method;
    mass["estimate"] = m.mass.estimate;
    mass["se"] = m.mass.se;
    mass["ci95"] = py::make_tuple(m.mass.lo, m.mass.hi);
    out["mass_in_cover_class"] = mass;
  }
  out["log_total_weight_all"] = py::none();
  if (c.log_total_weight_all) {
    const auto& w = *c.log_total_weight_all;
    py::dict weight;
    weight["estimate"] = w.estimate;
    weight["ci95"] = py::make_tuple(w.lo, w.hi);
    weight["exact"] = w.exact ? py::object(py::float_(*w.exact)) : py::none();
    out["log_total_weight_all"] = weight;
  }
  return out;
}

}  // namespace

void bind_analysis(py::module_& m) {
  m.def("_check", &check, py::arg("files"), py::arg("features"), py::arg("draws"),
        py::arg("max_rhat"), py::arg("min_ess"), py::arg("threads"));
  m.def("_compare", &compare, py::arg("a"), py::arg("b"), py::arg("features"), py::arg("cover"),
        py::arg("exact_draws"), py::arg("seed"), py::arg("threads"));
}

}  // namespace covey::python
