// The compiled part of the Python module `covey` (python/covey/__init__.py adds the pandas
// views). Each function makes one library call with options named like the CLI's flags in
// snake_case and with the CLI's defaults (docs/cli.md); the library's errors become Python
// exceptions with the library's message.
#include <pybind11/pybind11.h>

#include <cctype>
#include <string_view>

#include "bindings.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/core/version.hpp"
#include "covey/scores/score_io.hpp"

namespace covey::python {

namespace {

// The keyword argument that sets a library field named in an OptionError: the field with '.'
// as '_' ("bge.alpha_w" -> bge_alpha_w), or the keyword of the few fields named otherwise.
std::string keyword_of(const std::string& field) {
  static const std::pair<const char*, const char*> kRenamed[] = {
      {"ess", "equivalent_sample_size"},
      {"k", "cover"},
      {"overwrite", "force"},
      {"max_seconds", "max_time"},
  };
  for (const auto& [name, keyword] : kRenamed)
    if (field == name) return keyword;
  std::string keyword = field;
  for (char& c : keyword)
    if (c == '.') c = '_';
  return keyword;
}

// A library message with the CLI's flags in it ("--teleport-rate must lie in [0, 1]") as
// Python users write the option: each "--flag" that starts a word becomes its keyword
// (teleport_rate), --discrete and --gaussian the kind= values they stand for.
std::string with_keywords(const std::string& message) {
  static const std::pair<const char*, const char*> kRenamed[] = {
      {"discrete", "kind='discrete'"},
      {"gaussian", "kind='gaussian'"},
  };
  std::string out;
  std::size_t at = 0;
  while (at < message.size()) {
    const bool word_start =
        at == 0 || std::string_view(" ('\"").find(message[at - 1]) != std::string_view::npos;
    if (!word_start || message.compare(at, 2, "--") != 0 || at + 2 >= message.size() ||
        !std::islower(static_cast<unsigned char>(message[at + 2]))) {
      out += message[at++];
      continue;
    }
    std::size_t end = at + 2;
    while (end < message.size() &&
           (std::islower(static_cast<unsigned char>(message[end])) ||
            std::isdigit(static_cast<unsigned char>(message[end])) || message[end] == '-'))
      ++end;
    std::string flag = message.substr(at + 2, end - at - 2);
    std::string keyword = flag;
    for (char& c : keyword)
      if (c == '-') c = '_';
    for (const auto& [name, spelled] : kRenamed)
      if (flag == name) keyword = spelled;
    out += keyword;
    at = end;
  }
  return out;
}

// Python classes of the library's errors, kept alive by the module that holds them.
struct ErrorClasses {
  py::handle error, input, option, file, resource;
};
ErrorClasses g_errors;

py::handle new_exception(py::module_& m, const char* name, py::handle base, const char* doc) {
  PyObject* type =
      PyErr_NewExceptionWithDoc((std::string("covey.") + name).c_str(), doc, base.ptr(), nullptr);
  if (!type) throw py::error_already_set();
  m.add_object(name, py::handle(type));
  return type;
}

void translate_error(std::exception_ptr error) {
  try {
    if (error) std::rethrow_exception(error);
  } catch (const OptionError& e) {
    PyErr_SetString(g_errors.option.ptr(), e.render(keyword_of).c_str());
  } catch (const FileError& e) {
    PyErr_SetString(g_errors.file.ptr(), e.what());
  } catch (const InputError& e) {
    PyErr_SetString(g_errors.input.ptr(), with_keywords(e.what()).c_str());
  } catch (const ResourceError& e) {
    PyErr_SetString(g_errors.resource.ptr(), with_keywords(e.render(keyword_of)).c_str());
  } catch (const Error& e) {
    PyErr_SetString(g_errors.error.ptr(), e.what());
  }
}

}  // namespace

void bind_errors(py::module_& m) {
  g_errors.error = new_exception(m, "Error", PyExc_RuntimeError,
                                 "A failure inside covey that no input should cause.");
  g_errors.input = new_exception(m, "InputError", PyExc_ValueError,
                                 "Malformed input: a file's content or an argument's value.");
  g_errors.option = new_exception(m, "OptionError", g_errors.input,
                                  "A bad argument value; the message names the keyword.");
  // Both bases: scripts that catch OSError for a missing file and those that catch covey's
  // InputError for any bad input see it.
  g_errors.file = new_exception(
      m, "FileError", py::make_tuple(g_errors.input, py::handle(PyExc_OSError)).release(),
      "A file that cannot be opened, read or written; an InputError and an OSError.");
  g_errors.resource =
      new_exception(m, "ResourceError", PyExc_MemoryError,
                    "The work would exceed the memory limit (memory_limit=) or the time limit.");
  py::register_exception_translator(translate_error);
}

std::shared_ptr<ScoreTable> table_of(const py::object& table_or_path) {
  if (py::isinstance<ScoreTable>(table_or_path))
    return table_or_path.cast<std::shared_ptr<ScoreTable>>();
  const std::string path = py::str(py::module_::import("os").attr("fspath")(table_or_path));
  py::gil_scoped_release release;
  return std::make_shared<ScoreTable>(load_scores(path));
}

std::uint64_t memory_limit_of(const py::object& limit) {
  if (limit.is_none()) return 0;
  if (py::isinstance<py::str>(limit))
    return parse_memory_size(limit.cast<std::string>(), "memory_limit");
  return limit.cast<std::uint64_t>();
}

std::unique_ptr<tbb::global_control> thread_limit(int threads) {
  if (threads < 0) throw OptionError("{threads} must be 0 (all cores) or more");
  if (threads == 0) return nullptr;
  return std::make_unique<tbb::global_control>(tbb::global_control::max_allowed_parallelism,
                                               static_cast<std::size_t>(threads));
}

py::list names_of(const ScoreTable& table, const std::vector<int>& vertices) {
  py::list out;
  for (int v : vertices) out.append(table.name(v));
  return out;
}

py::object json_to_python(const std::string& json_text) {
  return py::module_::import("json").attr("loads")(json_text);
}

}  // namespace covey::python

PYBIND11_MODULE(_covey, m) {
  m.doc() = "covey's library: score tables, exact engines, chains and run files";
  m.attr("__version__") = covey::kVersion;
  covey::python::bind_errors(m);
  covey::python::bind_tables(m);
  covey::python::bind_engines(m);
  covey::python::bind_chains(m);
  covey::python::bind_analysis(m);
}
