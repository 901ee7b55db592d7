// Score tables from Python: read from a file, or scored from CSV text (the pandas and NumPy
// inputs arrive as CSV text made by python/covey/__init__.py, so that column kinds, levels and
// missing cells follow exactly the CLI's reader, docs/file-formats.md).
#include <pybind11/stl.h>

#include <optional>

#include "bindings.hpp"
#include "core/attributes_json.hpp"
#include "covey/core/error.hpp"
#include "covey/data/data.hpp"
#include "covey/scores/score_io.hpp"
#include "covey/scores/scores.hpp"

namespace covey::python {
namespace {

ColumnKindChoice column_kind_of(const std::string& kind) {
  if (kind == "infer") return ColumnKindChoice::kInfer;
  if (kind == "discrete") return ColumnKindChoice::kDiscrete;
  if (kind == "gaussian") return ColumnKindChoice::kGaussian;
  throw OptionError("{kind}: expected infer, discrete or gaussian, got '" + kind + "'");
}

// forbid= / require=: None, the path of an edge file, or pairs (from, to) of variable names.
std::vector<Edge> edges_of(const py::object& given, const char* keyword,
                           const std::vector<Variable>& variables) {
  if (given.is_none()) return {};
  if (py::isinstance<py::str>(given) || py::hasattr(given, "__fspath__"))
    return read_edge_file(py::str(py::module_::import("os").attr("fspath")(given)), variables);
  std::vector<Edge> edges;
  for (const py::handle pair : given) {
    const auto names = pair.cast<std::pair<std::string, std::string>>();
    const std::string origin = std::string(keyword) + "[" + std::to_string(edges.size()) + "]";
    edges.push_back({find_variable(variables, names.first, origin),
                     find_variable(variables, names.second, origin), origin});
    if (edges.back().from == edges.back().to)
      throw InputError(origin + ": self-loop " + names.first + " -> " + names.first);
  }
  return edges;
}

struct ScoreArguments {
  std::string kind;
  bool drop_incomplete, allow_constant;
  std::optional<double> equivalent_sample_size, bge_alpha_mu, bge_alpha_w;
  bool raw_units;
  std::string prior;
  std::optional<double> edge_penalty;
  int max_indegree;
  std::optional<int> candidates;
  py::object forbid, require, memory_limit;
  int threads;
  std::vector<std::string> discrete_columns, bins;
  std::string count_column, delimiter;
};

ScoreTable score(const std::string& csv, bool is_path, const std::string& name,
                 const ScoreArguments& a) {
  CsvOptions csv_options;
  csv_options.kind = column_kind_of(a.kind);
  csv_options.drop_incomplete = a.drop_incomplete;
  csv_options.allow_constant = a.allow_constant;
  csv_options.memory_limit = memory_limit_of(a.memory_limit);
  csv_options.delimiter = parse_delimiter(a.delimiter);
  csv_options.discrete_columns = a.discrete_columns;
  for (const std::string& bin : a.bins) csv_options.bins.push_back(parse_bin_spec(bin));
  csv_options.count_column = a.count_column;
  ScoreOptions options;
  options.prior = prior_kind_from_string(a.prior);
  options.memory_limit = csv_options.memory_limit;
  options.max_indegree = a.max_indegree;
  if (a.candidates) options.candidates = *a.candidates;
  if (a.equivalent_sample_size) options.equivalent_sample_size = *a.equivalent_sample_size;
  if (a.bge_alpha_mu) options.bge.alpha_mu = *a.bge_alpha_mu;
  if (a.bge_alpha_w) options.bge.alpha_w = *a.bge_alpha_w;
  if (a.edge_penalty) options.edge_penalty = *a.edge_penalty;
  options.bge.standardize = !a.raw_units;

  DataTable data;
  {
    py::gil_scoped_release release;
    data = is_path ? read_csv(csv, csv_options) : parse_csv(csv, name, csv_options);
  }
  ScoreParametersGiven given;
  given.equivalent_sample_size = a.equivalent_sample_size.has_value();
  given.bge_alpha_mu = a.bge_alpha_mu.has_value();
  given.bge_alpha_w = a.bge_alpha_w.has_value();
  given.raw_units = a.raw_units;
  given.edge_penalty = a.edge_penalty.has_value();
  check_score_parameters(given, options, data, name);
  options.constraints.forbidden = edges_of(a.forbid, "forbid", data.variables());
  options.constraints.required = edges_of(a.require, "require", data.variables());
  check_edge_constraints(options.constraints, data.variables());
  const auto threads = thread_limit(a.threads);
  py::gil_scoped_release release;
  return score_data(data, options);
}

py::dict info_of(const ScoreTable& table) {
  const ScoreMetadata& m = table.metadata();
  py::dict out;
  out["score"] = m.score;
  out["prior"] = m.prior;
  out["parameters"] = json_to_python(attributes_to_json(m.parameters).dump());
  out["max_indegree"] = m.max_indegree;
  out["num_rows"] = m.num_rows;
  out["source"] = m.source;
  out["covey_version"] = m.covey_version;
  out["command_line"] = m.command_line;
  out["memory_bytes"] = table.memory_bytes();
  out["total_parent_sets"] = table.total_parent_sets();
  py::list variables;
  for (int v = 0; v < table.num_variables(); ++v) {
    const Variable& var = table.variables()[v];
    py::dict entry;
    entry["name"] = var.name;
    entry["kind"] = m.score == "imported" ? "imported" : to_string(var.kind);
    entry["levels"] = var.levels;
    entry["candidate_parents"] = table.candidates(v).size();
    entry["parent_sets"] = table.num_parent_sets(v);
    variables.append(entry);
  }
  out["variables"] = variables;
  return out;
}

}  // namespace

void bind_tables(py::module_& m) {
  py::class_<ScoreTable, std::shared_ptr<ScoreTable>>(
      m, "ScoreTable",
      "Local scores s_v(S) of every allowed parent set: the one input of every engine.\n\n"
      ">>> table = covey.read_scores('scores.h5')\n>>> table.variables[:2]\n['season', "
      "'rainfall']")
      .def_property_readonly("variables",
                             [](const ScoreTable& t) { return variable_names(t.variables()); })
      .def_property_readonly("num_variables", &ScoreTable::num_variables)
      .def_property_readonly("total_parent_sets", &ScoreTable::total_parent_sets)
      .def_property_readonly(
          "fingerprint", [](const ScoreTable& t) { return format_fingerprint(t.fingerprint()); },
          "16 hex digits identifying the table; run and draws files store it")
      .def("info", &info_of,
           "The table's description as `covey info --json` gives it (without `file`).\n\n"
           ">>> table.info()['score']\n'bdeu'")
      .def(
          "save",
          [](const ScoreTable& t, const py::object& path, bool force) {
            const std::string p = py::str(py::module_::import("os").attr("fspath")(path));
            py::gil_scoped_release release;
            save_scores(t, p, force);
          },
          py::arg("path"), py::kw_only(), py::arg("force") = false,
          "Writes the table: `.tsv` (or `.txt`) as TSV, anything else as HDF5 (atomic). An\n"
          "existing file is replaced only with force=True, like `covey score --force`.\n\n"
          ">>> table.save('scores.h5')")
      .def("__repr__", [](const ScoreTable& t) {
        return "<covey.ScoreTable: " + std::to_string(t.num_variables()) + " variables, " +
               std::to_string(t.total_parent_sets()) + " parent sets, " + t.metadata().score + ">";
      });

  m.def(
      "read_scores",
      [](const py::object& path) {
        return table_of(py::module_::import("os").attr("fspath")(path));
      },
      py::arg("path"),
      "Reads a score table: `.tsv` (or `.txt`) as TSV, anything else as covey's HDF5.\n\n"
      ">>> table = covey.read_scores('out/demo/scores.h5')\n>>> table.num_variables\n12");

  m.def(
      "_score",
      [](const std::string& csv, bool is_path, const std::string& name, std::string kind,
         bool drop_incomplete, bool allow_constant, std::optional<double> ess,
         std::optional<double> alpha_mu, std::optional<double> alpha_w, bool raw_units,
         std::string prior, std::optional<double> edge_penalty, int max_indegree,
         std::optional<int> candidates, py::object forbid, py::object require,
         py::object memory_limit, int threads, std::vector<std::string> discrete_columns,
         std::vector<std::string> bins, std::string count_column, std::string delimiter) {
        const ScoreArguments a{std::move(kind),
                               drop_incomplete,
                               allow_constant,
                               ess,
                               alpha_mu,
                               alpha_w,
                               raw_units,
                               std::move(prior),
                               edge_penalty,
                               max_indegree,
                               candidates,
                               forbid,
                               require,
                               memory_limit,
                               threads,
                               std::move(discrete_columns),
                               std::move(bins),
                               std::move(count_column),
                               std::move(delimiter)};
        return score(csv, is_path, name, a);
      },
      py::arg("csv"), py::arg("is_path"), py::arg("name"), py::arg("kind"),
      py::arg("drop_incomplete"), py::arg("allow_constant"), py::arg("equivalent_sample_size"),
      py::arg("bge_alpha_mu"), py::arg("bge_alpha_w"), py::arg("raw_units"), py::arg("prior"),
      py::arg("edge_penalty"), py::arg("max_indegree"), py::arg("candidates"), py::arg("forbid"),
      py::arg("require"), py::arg("memory_limit"), py::arg("threads"), py::arg("discrete_columns"),
      py::arg("bins"), py::arg("count_column"), py::arg("delimiter"));
}

}  // namespace covey::python
