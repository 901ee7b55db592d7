#pragma once
// Pieces the binding sources of the Python module share (python/*.cpp): the conversions from
// Python values to the library's option types, and the registration of each group of functions.
#include <pybind11/pybind11.h>

#include <cstdint>
#include <memory>
#include <string>

#include <tbb/global_control.h>

#include "covey/scores/score_table.hpp"

namespace covey::python {

namespace py = pybind11;

// A score table argument: a ScoreTable object, or the path of a score file (HDF5 or TSV).
std::shared_ptr<ScoreTable> table_of(const py::object& table_or_path);
// memory_limit=: None (the default limit), a byte count, or a size text such as "4G".
std::uint64_t memory_limit_of(const py::object& limit);
// threads=: 0 for all cores, else a ceiling on TBB's parallelism while the call runs.
std::unique_ptr<tbb::global_control> thread_limit(int threads);
// Names of the variables whose bits are set in a global mask.
py::list names_of(const ScoreTable& table, const std::vector<int>& vertices);
// nlohmann JSON text as Python values (dicts, lists, numbers).
py::object json_to_python(const std::string& json_text);

void bind_errors(py::module_& m);
void bind_tables(py::module_& m);
void bind_engines(py::module_& m);
void bind_chains(py::module_& m);
void bind_analysis(py::module_& m);

}  // namespace covey::python
