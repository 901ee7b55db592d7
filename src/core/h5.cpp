#include "core/h5.hpp"

#include <algorithm>
#include <fstream>

#include "core/attributes_json.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"

namespace covey::h5 {
namespace {

// The descriptions of the error stacks of the failing HDF5 calls since the last guard() began. The
// C++ API throws only after its cleanup (closing temporaries), which clears the stack, so the stack
// is captured by the library's automatic error handler, called as the failing call returns.
std::string& last_error_stack() {
  static std::string stack;
  return stack;
}

herr_t collect_error(unsigned, const H5E_error2_t* err, void* data) {
  if (err && err->desc) static_cast<std::string*>(data)->append(err->desc).append("\n");
  return 0;
}

herr_t capture_error_stack(hid_t stack, void*) {
  if (last_error_stack().size() > 65536) return 0;  // enough to classify the failure
  H5Ewalk2(stack, H5E_WALK_DOWNWARD, collect_error, &last_error_stack());
  return 0;
}

struct QuietErrors {
  QuietErrors() {
    H5::Exception::dontPrint();
    H5Eset_auto2(H5E_DEFAULT, capture_error_stack, nullptr);
  }
};
void quiet() {
  static QuietErrors once;
}

H5::StrType string_type() {
  H5::StrType t(H5::PredType::C_S1, H5T_VARIABLE);
  t.setCset(H5T_CSET_UTF8);
  return t;
}

// Chunked, compressed, checksummed property list for a dataset of `rank` dims. Datasets that grow
// while a run goes on (chain draws) use deflate level 1: it writes about 3 times faster than 4
// for files a little larger, and a run keeping draws spends its extra time compressing them.
H5::DSetCreatPropList filtered_props(int rank, const hsize_t* chunk, int deflate_level = 4) {
  H5::DSetCreatPropList props;
  props.setChunk(rank, chunk);
  // Fletcher32 last: the checksum covers the stored (compressed) bytes, so any damaged byte of a
  // chunk is reported as a checksum failure before decompression is attempted.
  props.setShuffle();
  props.setDeflate(deflate_level);
  props.setFletcher32();
  return props;
}

template <class T>
void write_numeric(H5::Group& group, const std::string& name, const std::vector<T>& v,
                   const H5::PredType& type) {
  quiet();
  const hsize_t dims[1] = {v.size()};
  const hsize_t maxdims[1] = {H5S_UNLIMITED};
  const hsize_t chunk[1] = {std::clamp<hsize_t>(v.size(), 1, 65536)};
  H5::DataSpace space(1, dims, maxdims);
  H5::DataSet ds = group.createDataSet(name, type, space, filtered_props(1, chunk));
  if (!v.empty()) ds.write(v.data(), type);
}

template <class T>
std::vector<T> read_numeric(const H5::Group& group, const std::string& name,
                            const H5::PredType& type, H5T_class_t expected) {
  quiet();
  if (!group.nameExists(name)) throw InputError("missing dataset '" + name + "'");
  H5::DataSet ds = group.openDataSet(name);
  if (ds.getTypeClass() != expected)
    throw InputError("dataset '" + name + "' has the wrong element type");
  H5::DataSpace space = ds.getSpace();
  const int rank = space.getSimpleExtentNdims();
  std::vector<hsize_t> dims(std::max(rank, 1), 0);
  if (rank > 0) space.getSimpleExtentDims(dims.data());
  hsize_t total = 1;
  double bytes = sizeof(T);
  for (int i = 0; i < rank; ++i) total *= dims[i], bytes *= static_cast<double>(dims[i]);
  // A corrupt or hand-made file may declare a dataset far larger than it stores.
  require_memory(bytes, 0, "dataset '" + name + "'",
                 "the file declares more values than memory holds (corrupt?)");
  std::vector<T> out(total);
  if (total) ds.read(out.data(), type);
  return out;
}

void create_growing(H5::Group& group, const std::string& name, const H5::PredType& type,
                    std::size_t width, std::size_t chunk_rows, int rank) {
  quiet();
  const hsize_t dims[2] = {0, width};
  const hsize_t maxdims[2] = {H5S_UNLIMITED, width};
  const hsize_t chunk[2] = {std::max<hsize_t>(chunk_rows, 1), std::max<hsize_t>(width, 1)};
  H5::DataSpace space(rank, dims, maxdims);
  group.createDataSet(name, type, space, filtered_props(rank, chunk, 1));
}

template <class T>
void append_growing(H5::Group& group, const std::string& name, const std::vector<T>& data,
                    std::size_t width, const H5::PredType& type, int rank) {
  quiet();
  if (data.empty()) return;
  H5::DataSet ds = group.openDataSet(name);
  hsize_t dims[2] = {0, 0};
  ds.getSpace().getSimpleExtentDims(dims);
  const hsize_t add = data.size() / width;
  hsize_t new_dims[2] = {dims[0] + add, width};
  ds.extend(new_dims);
  H5::DataSpace file_space = ds.getSpace();
  const hsize_t start[2] = {dims[0], 0};
  const hsize_t count[2] = {add, width};
  file_space.selectHyperslab(H5S_SELECT_SET, count, start);
  H5::DataSpace mem_space(rank, count);
  ds.write(data.data(), type, mem_space, file_space);
}

}  // namespace

void clear_error_stack() {
  last_error_stack().clear();
}

void throw_hdf5_error(const std::string& path, const H5::Exception& e) {
  const std::string stack = last_error_stack();
  last_error_stack().clear();
  auto has = [&](const char* what) { return stack.find(what) != std::string::npos; };
  if (has("checksum") || has("Fletcher32") || has("fletcher32"))
    throw InputError(path +
                     ": corrupted: a dataset failed its Fletcher32 checksum (the file was "
                     "damaged after it was written; use an intact copy)");
  if (has("inflate() failed"))
    throw InputError(path +
                     ": corrupted: a compressed dataset chunk cannot be decoded (the file was "
                     "damaged after it was written; use an intact copy)");
  if (has("No space left on device") || has("File too large") || has("Disk quota exceeded"))
    throw ResourceError(path +
                        ": cannot write: the disk is full or the file size limit was reached "
                        "(the output was not replaced; free space and run again)");
  if (has("truncated file"))
    throw InputError(path +
                     ": truncated: the file is shorter than its HDF5 structure says (an "
                     "interrupted copy or a full disk?)");
  throw InputError(path + ": HDF5 error in " + e.getFuncName() + ": " + e.getDetailMsg() +
                   " (the file may be truncated, corrupted or not written by covey)");
}

H5::H5File open_read(const std::string& path) {
  quiet();
  {
    std::ifstream probe(path, std::ios::binary);
    if (!probe) throw FileError(path + ": cannot open for reading");
  }
  if (!is_hdf5(path)) throw InputError(path + ": not an HDF5 file (or truncated)");
  return guard(path, [&] { return H5::H5File(path, H5F_ACC_RDONLY); });
}

H5::H5File open_write(const std::string& path) {
  quiet();
  if (!is_hdf5(path)) throw InputError(path + ": not an HDF5 file (or truncated)");
  return guard(path, [&] { return H5::H5File(path, H5F_ACC_RDWR); });
}

H5::H5File create(const std::string& path) {
  quiet();
  return guard(path, [&] { return H5::H5File(path, H5F_ACC_TRUNC); });
}

bool is_hdf5(const std::string& path) {
  quiet();
  try {
    return H5::H5File::isHdf5(path);
  } catch (const H5::Exception&) {
    return false;
  }
}

void set_attr(H5::H5Object& obj, const std::string& name, const std::string& value) {
  quiet();
  H5::StrType type = string_type();
  H5::Attribute a = obj.createAttribute(name, type, H5::DataSpace(H5S_SCALAR));
  const char* p = value.c_str();
  a.write(type, &p);
}

void set_attr(H5::H5Object& obj, const std::string& name, long long value) {
  quiet();
  H5::Attribute a =
      obj.createAttribute(name, H5::PredType::NATIVE_LLONG, H5::DataSpace(H5S_SCALAR));
  a.write(H5::PredType::NATIVE_LLONG, &value);
}

void set_attr(H5::H5Object& obj, const std::string& name, double value) {
  quiet();
  H5::Attribute a =
      obj.createAttribute(name, H5::PredType::NATIVE_DOUBLE, H5::DataSpace(H5S_SCALAR));
  a.write(H5::PredType::NATIVE_DOUBLE, &value);
}

bool has_attr(const H5::H5Object& obj, const std::string& name) {
  quiet();
  return obj.attrExists(name);
}

std::string get_attr_string(const H5::H5Object& obj, const std::string& name) {
  quiet();
  if (!obj.attrExists(name)) throw InputError("missing attribute '" + name + "'");
  H5::Attribute a = obj.openAttribute(name);
  if (a.getTypeClass() != H5T_STRING) throw InputError("attribute '" + name + "' is not a string");
  std::string out;
  a.read(a.getStrType(), out);
  return out;
}

long long get_attr_int(const H5::H5Object& obj, const std::string& name) {
  quiet();
  if (!obj.attrExists(name)) throw InputError("missing attribute '" + name + "'");
  H5::Attribute a = obj.openAttribute(name);
  if (a.getTypeClass() != H5T_INTEGER)
    throw InputError("attribute '" + name + "' is not an integer");
  long long v = 0;
  a.read(H5::PredType::NATIVE_LLONG, &v);
  return v;
}

double get_attr_double(const H5::H5Object& obj, const std::string& name) {
  quiet();
  if (!obj.attrExists(name)) throw InputError("missing attribute '" + name + "'");
  H5::Attribute a = obj.openAttribute(name);
  if (a.getTypeClass() != H5T_FLOAT && a.getTypeClass() != H5T_INTEGER)
    throw InputError("attribute '" + name + "' is not a number");
  double v = 0;
  a.read(H5::PredType::NATIVE_DOUBLE, &v);
  return v;
}

void set_attr_json(H5::H5Object& obj, const std::string& name, const nlohmann::json& value) {
  set_attr(obj, name, value.dump());
}

nlohmann::json get_attr_json(const H5::H5Object& obj, const std::string& name) {
  const std::string text = get_attr_string(obj, name);
  try {
    return nlohmann::json::parse(text);
  } catch (const nlohmann::json::exception&) {
    throw InputError("attribute '" + name + "' is not valid JSON");
  }
}

void set_attr_map(H5::H5Object& obj, const std::string& name, const Attributes& value) {
  set_attr_json(obj, name, attributes_to_json(value));
}

Attributes get_attr_map(const H5::H5Object& obj, const std::string& name) {
  return attributes_from_json(get_attr_json(obj, name), name);
}

void write_vector(H5::Group& g, const std::string& n, const std::vector<double>& v) {
  write_numeric(g, n, v, H5::PredType::NATIVE_DOUBLE);
}
void write_vector(H5::Group& g, const std::string& n, const std::vector<std::uint64_t>& v) {
  write_numeric(g, n, v, H5::PredType::NATIVE_UINT64);
}
void write_vector(H5::Group& g, const std::string& n, const std::vector<std::int64_t>& v) {
  write_numeric(g, n, v, H5::PredType::NATIVE_INT64);
}
void write_vector(H5::Group& g, const std::string& n, const std::vector<std::int32_t>& v) {
  write_numeric(g, n, v, H5::PredType::NATIVE_INT32);
}

void write_large_doubles(H5::Group& group, const std::string& name, const double* data,
                         std::size_t count) {
  quiet();
  const hsize_t dims[1] = {count};
  const hsize_t chunk[1] = {std::clamp<hsize_t>(count, 1, hsize_t{1} << 17)};  // 1 MiB chunks
  H5::DataSpace space(1, dims);
  H5::DSetCreatPropList props;
  props.setChunk(1, chunk);
  props.setFletcher32();
  H5::DataSet ds = group.createDataSet(name, H5::PredType::NATIVE_DOUBLE, space, props);
  if (count) ds.write(data, H5::PredType::NATIVE_DOUBLE);
}

void write_strings(H5::Group& group, const std::string& name, const std::vector<std::string>& v) {
  quiet();
  const hsize_t dims[1] = {v.size()};
  H5::DataSpace space(1, dims);
  H5::StrType type = string_type();
  H5::DataSet ds = group.createDataSet(name, type, space);
  std::vector<const char*> ptrs;
  ptrs.reserve(v.size());
  for (const auto& s : v) ptrs.push_back(s.c_str());
  if (!v.empty()) ds.write(ptrs.data(), type);
}

std::vector<double> read_doubles(const H5::Group& g, const std::string& n) {
  return read_numeric<double>(g, n, H5::PredType::NATIVE_DOUBLE, H5T_FLOAT);
}
std::vector<std::uint64_t> read_uint64s(const H5::Group& g, const std::string& n) {
  return read_numeric<std::uint64_t>(g, n, H5::PredType::NATIVE_UINT64, H5T_INTEGER);
}
std::vector<std::int64_t> read_int64s(const H5::Group& g, const std::string& n) {
  return read_numeric<std::int64_t>(g, n, H5::PredType::NATIVE_INT64, H5T_INTEGER);
}
std::vector<std::int32_t> read_int32s(const H5::Group& g, const std::string& n) {
  return read_numeric<std::int32_t>(g, n, H5::PredType::NATIVE_INT32, H5T_INTEGER);
}

std::vector<std::string> read_strings(const H5::Group& group, const std::string& name) {
  quiet();
  if (!group.nameExists(name)) throw InputError("missing dataset '" + name + "'");
  H5::DataSet ds = group.openDataSet(name);
  if (ds.getTypeClass() != H5T_STRING) throw InputError("dataset '" + name + "' is not text");
  H5::DataSpace space = ds.getSpace();
  hsize_t dims[1] = {0};
  space.getSimpleExtentDims(dims);
  std::vector<char*> ptrs(dims[0], nullptr);
  H5::StrType type = string_type();
  if (dims[0]) ds.read(ptrs.data(), type);
  std::vector<std::string> out;
  out.reserve(dims[0]);
  for (char* p : ptrs) out.emplace_back(p ? p : "");
  if (dims[0]) H5::DataSet::vlenReclaim(ptrs.data(), type, space);
  return out;
}

void create_rows(H5::Group& group, const std::string& name, std::size_t row_width,
                 std::size_t chunk_rows) {
  create_growing(group, name, H5::PredType::NATIVE_UINT64, row_width, chunk_rows, 2);
}

void append_rows(H5::Group& group, const std::string& name, const std::vector<std::uint64_t>& data,
                 std::size_t row_width) {
  append_growing(group, name, data, row_width, H5::PredType::NATIVE_UINT64, 2);
}

void create_series_double(H5::Group& group, const std::string& name, std::size_t chunk) {
  create_growing(group, name, H5::PredType::NATIVE_DOUBLE, 1, chunk, 1);
}
void append_series(H5::Group& group, const std::string& name, const std::vector<double>& data) {
  append_growing(group, name, data, 1, H5::PredType::NATIVE_DOUBLE, 1);
}
void create_series_int64(H5::Group& group, const std::string& name, std::size_t chunk) {
  create_growing(group, name, H5::PredType::NATIVE_INT64, 1, chunk, 1);
}
void append_series(H5::Group& group, const std::string& name,
                   const std::vector<std::int64_t>& data) {
  append_growing(group, name, data, 1, H5::PredType::NATIVE_INT64, 1);
}

void truncate_rows(H5::Group& group, const std::string& name, std::size_t rows) {
  quiet();
  H5::DataSet ds = group.openDataSet(name);
  H5::DataSpace space = ds.getSpace();
  const int rank = space.getSimpleExtentNdims();
  hsize_t dims[2] = {0, 0};
  space.getSimpleExtentDims(dims);
  dims[0] = rows;
  ds.extend(dims);
  (void)rank;
}

std::size_t num_rows(const H5::Group& group, const std::string& name) {
  quiet();
  H5::DataSet ds = group.openDataSet(name);
  hsize_t dims[2] = {0, 0};
  ds.getSpace().getSimpleExtentDims(dims);
  return dims[0];
}

std::vector<std::uint64_t> read_rows(const H5::Group& group, const std::string& name,
                                     std::size_t first, std::size_t count) {
  quiet();
  H5::DataSet ds = group.openDataSet(name);
  H5::DataSpace file_space = ds.getSpace();
  hsize_t dims[2] = {0, 0};
  file_space.getSimpleExtentDims(dims);
  if (first + count > dims[0]) throw InputError("dataset '" + name + "': rows out of range");
  const hsize_t start[2] = {first, 0};
  const hsize_t cnt[2] = {count, dims[1]};
  std::vector<std::uint64_t> out(count * dims[1]);
  if (out.empty()) return out;
  file_space.selectHyperslab(H5S_SELECT_SET, cnt, start);
  H5::DataSpace mem_space(2, cnt);
  ds.read(out.data(), H5::PredType::NATIVE_UINT64, mem_space, file_space);
  return out;
}

}  // namespace covey::h5
