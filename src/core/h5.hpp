#pragma once
// Thin helpers over the HDF5 C++ API used by every covey file (score tables, samplers, draws,
// chain traces). Datasets are chunked, deflate-compressed and Fletcher32-checksummed so that
// corruption is detected on read. All HDF5 errors are turned into covey::Error naming the file.
#include <H5Cpp.h>

#include <cstdint>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "covey/core/attributes.hpp"

namespace covey::h5 {

// Opens an existing file read-only; throws InputError("FILE: not a readable HDF5 file") otherwise.
H5::H5File open_read(const std::string& path);
// Opens an existing file read-write (for appending to traces).
H5::H5File open_write(const std::string& path);
// Creates (truncates) a file; use with AtomicOutput::temp_path().
H5::H5File create(const std::string& path);
bool is_hdf5(const std::string& path);

// Attributes on a file or group (H5::H5Object).
void set_attr(H5::H5Object& obj, const std::string& name, const std::string& value);
void set_attr(H5::H5Object& obj, const std::string& name, long long value);
void set_attr(H5::H5Object& obj, const std::string& name, double value);
bool has_attr(const H5::H5Object& obj, const std::string& name);
std::string get_attr_string(const H5::H5Object& obj, const std::string& name);
long long get_attr_int(const H5::H5Object& obj, const std::string& name);
double get_attr_double(const H5::H5Object& obj, const std::string& name);
void set_attr_json(H5::H5Object& obj, const std::string& name, const nlohmann::json& value);
nlohmann::json get_attr_json(const H5::H5Object& obj, const std::string& name);
// Named scalars as one JSON object text (NaN as null); reading throws InputError naming the
// attribute when its text is not such an object.
void set_attr_map(H5::H5Object& obj, const std::string& name, const Attributes& value);
Attributes get_attr_map(const H5::H5Object& obj, const std::string& name);

// Whole 1-D datasets. Strings are variable-length UTF-8.
void write_vector(H5::Group& group, const std::string& name, const std::vector<double>& v);
void write_vector(H5::Group& group, const std::string& name, const std::vector<std::uint64_t>& v);
void write_vector(H5::Group& group, const std::string& name, const std::vector<std::int64_t>& v);
void write_vector(H5::Group& group, const std::string& name, const std::vector<std::int32_t>& v);
void write_strings(H5::Group& group, const std::string& name, const std::vector<std::string>& v);
// A large float64 array written straight from memory as a 1-D dataset: chunked and Fletcher32-
// checksummed like the others but not compressed (deflate would take several times as long as
// computing the values); read it back with read_doubles.
void write_large_doubles(H5::Group& group, const std::string& name, const double* data,
                         std::size_t count);
std::vector<double> read_doubles(const H5::Group& group, const std::string& name);
std::vector<std::uint64_t> read_uint64s(const H5::Group& group, const std::string& name);
std::vector<std::int64_t> read_int64s(const H5::Group& group, const std::string& name);
std::vector<std::int32_t> read_int32s(const H5::Group& group, const std::string& name);
std::vector<std::string> read_strings(const H5::Group& group, const std::string& name);

// A 2-D dataset of uint64 rows that grows along its first dimension (e.g. packed DAGs, one row
// per draw). Chunked by `chunk_rows`, compressed, checksummed.
void create_rows(H5::Group& group, const std::string& name, std::size_t row_width,
                 std::size_t chunk_rows = 1024);
void append_rows(H5::Group& group, const std::string& name, const std::vector<std::uint64_t>& data,
                 std::size_t row_width);
// Same for doubles and int64 (1-D growing series, e.g. log scores).
void create_series_double(H5::Group& group, const std::string& name, std::size_t chunk = 4096);
void append_series(H5::Group& group, const std::string& name, const std::vector<double>& data);
void create_series_int64(H5::Group& group, const std::string& name, std::size_t chunk = 4096);
void append_series(H5::Group& group, const std::string& name,
                   const std::vector<std::int64_t>& data);
// Shrinks a growing dataset to `rows` rows (used by resume to drop work after a checkpoint).
void truncate_rows(H5::Group& group, const std::string& name, std::size_t rows);
std::size_t num_rows(const H5::Group& group, const std::string& name);
// Reads rows [first, first+count) of a 2-D uint64 dataset.
std::vector<std::uint64_t> read_rows(const H5::Group& group, const std::string& name,
                                     std::size_t first, std::size_t count);

// Runs f, converting any H5::Exception into covey::Error("PATH: what").
template <class F>
auto guard(const std::string& path, F&& f) -> decltype(f());

}  // namespace covey::h5

#include "core/h5_inl.hpp"
