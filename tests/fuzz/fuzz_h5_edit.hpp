#pragma once
// Structure-aware fuzzing of the HDF5 readers. Raw byte mutations of an HDF5 file mostly break
// the library's own metadata, where libhdf5 (1.10, Debian) itself hangs, leaks or asks for
// absurd allocations, so they test the library rather than covey's readers; corrupted data
// chunks and truncation are covered deterministically (Fletcher32 rows of tests/bad_inputs.tsv).
//
// Here the fuzz input is a program of edits applied through the HDF5 API to a copy of a valid
// base file (tests/fuzz/h5_bases/<target>/, chosen by the first byte): overwrite a dataset
// element, recreate a dataset with another length and fuzzed contents, replace an attribute
// (same or other type), mutate a byte of a string attribute (e.g. the JSON ones), delete a
// dataset or an attribute, or flip a byte inside a stored chunk (which Fletcher32 must catch).
// The result is always a well-formed HDF5 file with arbitrary content: exactly what covey's
// validation has to cope with.
#include <H5Cpp.h>

#include <dirent.h>
#include <algorithm>
#include <cstdint>
#include <cstring>
#include <fstream>
#include <string>
#include <vector>

#include "core/h5.hpp"
#include "fuzz_util.hpp"

#ifndef COVEY_FUZZ_H5_BASES
#define COVEY_FUZZ_H5_BASES ""
#endif

namespace covey::fuzz {

class Bytes {
 public:
  Bytes(const std::uint8_t* data, std::size_t size) : p_(data), n_(size) {}
  bool empty() const { return i_ >= n_; }
  std::uint8_t byte() { return i_ < n_ ? p_[i_++] : 0; }
  std::uint64_t u64(int bytes) {
    std::uint64_t v = 0;
    for (int k = 0; k < bytes; ++k) v = v << 8 | byte();
    return v;
  }
  void fill(void* out, std::size_t size) {
    auto* o = static_cast<std::uint8_t*>(out);
    for (std::size_t k = 0; k < size; ++k) o[k] = byte();
  }
  std::string text() {
    const std::size_t len = byte() % 48;
    std::string s;
    for (std::size_t k = 0; k < len; ++k) s += static_cast<char>(byte());
    return s;
  }

 private:
  const std::uint8_t* p_;
  std::size_t n_, i_ = 0;
};

// The base files of a target, sorted by name (read once).
inline const std::vector<std::string>& base_files(const std::string& target) {
  static std::vector<std::string> files = [&] {
    std::vector<std::string> out;
    const std::string dir = std::string(COVEY_FUZZ_H5_BASES) + "/" + target;
    if (DIR* d = ::opendir(dir.c_str())) {
      while (dirent* e = ::readdir(d))
        if (e->d_name[0] != '.') out.push_back(dir + "/" + e->d_name);
      ::closedir(d);
    }
    std::sort(out.begin(), out.end());
    if (out.empty()) std::abort();  // the build points at the bases; nothing to fuzz without them
    return out;
  }();
  return files;
}

struct H5Objects {
  std::vector<std::string> datasets;                            // full paths
  std::vector<std::pair<std::string, std::string>> attributes;  // (owner path, name)
};

inline void collect(H5::H5File& file, const std::string& group, H5Objects& out) {
  H5::Group g = file.openGroup(group);
  for (int a = 0; a < g.getNumAttrs(); ++a)
    out.attributes.emplace_back(group, g.openAttribute(a).getName());
  for (hsize_t i = 0; i < g.getNumObjs(); ++i) {
    const std::string name = g.getObjnameByIdx(i);
    const std::string full = (group == "/" ? "/" : group + "/") + name;
    const H5G_obj_t type = g.getObjTypeByIdx(i);
    if (type == H5G_GROUP) {
      collect(file, full, out);
    } else if (type == H5G_DATASET) {
      out.datasets.push_back(full);
      H5::DataSet ds = g.openDataSet(name);
      for (int a = 0; a < ds.getNumAttrs(); ++a)
        out.attributes.emplace_back(full, ds.openAttribute(a).getName());
    }
  }
}

inline H5::H5Object* open_owner(H5::H5File& file, const std::string& path, H5::Group& g,
                                H5::DataSet& d) {
  if (path != "/" && file.childObjType(path) == H5O_TYPE_DATASET) {
    d = file.openDataSet(path);
    return &d;
  }
  g = file.openGroup(path);
  return &g;
}

// One edit; errors of the HDF5 API (an edit that does not apply) are ignored.
inline void edit_once(H5::H5File& file, Bytes& in,
                      std::vector<std::pair<std::string, int>>& flips) {
  H5Objects objs;
  collect(file, "/", objs);
  const int op = in.byte() % 7;
  if ((op <= 1 || op == 4 || op == 6) && objs.datasets.empty()) return;
  if ((op == 2 || op == 3 || op == 5) && objs.attributes.empty()) return;
  H5::StrType vlen(H5::PredType::C_S1, H5T_VARIABLE);
  if (op == 0 || op == 1) {
    const std::string path = objs.datasets[in.byte() % objs.datasets.size()];
    H5::DataSet ds = file.openDataSet(path);
    H5::DataType type = ds.getDataType();
    const bool is_string = type.getClass() == H5T_STRING;
    H5::DataSpace space = ds.getSpace();
    const int rank = space.getSimpleExtentNdims();
    std::vector<hsize_t> dims(rank);
    space.getSimpleExtentDims(dims.data());
    if (op == 0) {  // overwrite one element
      hsize_t total = 1;
      for (hsize_t d : dims) total *= d;
      if (total == 0) return;
      const hsize_t index = in.u64(3) % total;
      std::vector<hsize_t> coord(rank);
      hsize_t rest = index;
      for (int r = rank - 1; r >= 0; --r) coord[r] = rest % dims[r], rest /= dims[r];
      hsize_t one[1] = {1};
      H5::DataSpace mem(1, one);
      space.selectElements(H5S_SELECT_SET, 1, coord.data());
      if (is_string) {
        const std::string s = in.text();
        const char* p = s.c_str();
        ds.write(&p, vlen, mem, space);
      } else {
        std::vector<std::uint8_t> buf(type.getSize());
        in.fill(buf.data(), buf.size());
        ds.write(buf.data(), type, mem, space);
      }
    } else {  // recreate with another first dimension and fuzzed contents
      if (rank == 0) return;
      dims[0] = in.byte() % 40;
      hsize_t total = 1;
      for (hsize_t d : dims) total *= d;
      H5::DataType saved = is_string ? H5::DataType(vlen) : H5::DataType(type);
      ds.close();
      file.unlink(path);
      H5::DataSpace fresh(rank, dims.data());
      H5::DataSet nd = file.createDataSet(path, saved, fresh);
      if (total == 0) return;
      if (is_string) {
        std::vector<std::string> strings(total);
        std::vector<const char*> ptrs(total);
        for (hsize_t k = 0; k < total; ++k) strings[k] = in.text(), ptrs[k] = strings[k].c_str();
        nd.write(ptrs.data(), vlen);
      } else {
        std::vector<std::uint8_t> buf(total * saved.getSize());
        in.fill(buf.data(), buf.size());
        nd.write(buf.data(), saved);
      }
    }
  } else if (op == 2 || op == 5) {  // replace, or mutate one byte of, an attribute
    const auto& [owner, name] = objs.attributes[in.byte() % objs.attributes.size()];
    H5::Group g;
    H5::DataSet d;
    H5::H5Object* obj = open_owner(file, owner, g, d);
    if (!obj) return;
    H5::Attribute attr = obj->openAttribute(name);
    const H5T_class_t cls = attr.getTypeClass();
    std::string old;
    if (cls == H5T_STRING) attr.read(attr.getStrType(), old);
    attr.close();
    obj->removeAttr(name);
    H5::DataSpace scalar(H5S_SCALAR);
    int kind = cls == H5T_STRING ? 0 : cls == H5T_INTEGER ? 1 : 2;
    if (op == 2 && in.byte() % 4 == 0) kind = in.byte() % 3;  // sometimes another type
    if (op == 5 && cls == H5T_STRING && !old.empty()) {
      old[in.u64(2) % old.size()] = static_cast<char>(in.byte());
    } else if (kind == 0) {
      old = in.text();
    }
    if (kind == 0) {
      H5::Attribute a = obj->createAttribute(name, vlen, scalar);
      const char* p = old.c_str();
      a.write(vlen, &p);
    } else if (kind == 1) {
      const long long v = static_cast<long long>(in.u64(8));
      obj->createAttribute(name, H5::PredType::NATIVE_LLONG, scalar)
          .write(H5::PredType::NATIVE_LLONG, &v);
    } else {
      double v = 0;
      in.fill(&v, sizeof v);
      obj->createAttribute(name, H5::PredType::NATIVE_DOUBLE, scalar)
          .write(H5::PredType::NATIVE_DOUBLE, &v);
    }
  } else if (op == 3) {  // delete an attribute
    const auto& [owner, name] = objs.attributes[in.byte() % objs.attributes.size()];
    H5::Group g;
    H5::DataSet d;
    if (H5::H5Object* obj = open_owner(file, owner, g, d)) obj->removeAttr(name);
  } else if (op == 4) {  // delete a dataset
    file.unlink(objs.datasets[in.byte() % objs.datasets.size()]);
  } else {  // flip a byte inside the first stored chunk (after the file is closed)
    flips.emplace_back(objs.datasets[in.byte() % objs.datasets.size()], in.byte());
  }
}

// Copies base file number data[0] to `path` and applies the edits of the rest of the input.
inline bool make_edited_file(const std::string& target, const std::string& path,
                             const std::uint8_t* data, std::size_t size) {
  if (size == 0) return false;
  const auto& bases = base_files(target);
  {
    std::ifstream src(bases[data[0] % bases.size()], std::ios::binary);
    std::ofstream dst(path, std::ios::binary | std::ios::trunc);
    dst << src.rdbuf();
  }
  Bytes in(data + 1, size - 1);
  std::vector<std::pair<std::string, int>> flips;
  (void)h5::is_hdf5(bases[0]);  // installs covey's quiet error handler before any edit
  try {
    H5::H5File file(path, H5F_ACC_RDWR);
    for (int k = 0; k < 6 && !in.empty(); ++k) {
      try {
        edit_once(file, in, flips);
      } catch (const H5::Exception&) {
      }
    }
    file.close();
  } catch (const H5::Exception&) {
    return false;
  }
  for (const auto& [dataset, where] : flips) {
    haddr_t address = 0;
    hsize_t chunk = 0;
    try {
      H5::H5File file(path, H5F_ACC_RDONLY);
      H5::DataSet ds = file.openDataSet(dataset);
      if (ds.getCreatePlist().getLayout() != H5D_CHUNKED) continue;
      H5::DataSpace space = ds.getSpace();
      std::vector<hsize_t> offset(std::max(1, space.getSimpleExtentNdims()));
      unsigned mask = 0;
      if (H5Dget_chunk_info(ds.getId(), space.getId(), 0, offset.data(), &mask, &address, &chunk) <
              0 ||
          chunk == 0)
        continue;
    } catch (const H5::Exception&) {
      continue;
    }
    std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
    const std::streamoff at = static_cast<std::streamoff>(address + where % chunk);
    f.seekg(at);
    char c = 0;
    f.get(c);
    f.seekp(at);
    f.put(static_cast<char>(c ^ 0x41));
  }
  return true;
}

// The structured counterpart of run_reader: the edited base file is read by `read`.
template <class Read>
int run_h5_reader(const char* target, const std::uint8_t* data, std::size_t size, Read&& read) {
  const std::string& path = input_path(".h5");
  if (!make_edited_file(target, path, data, size)) return 0;
  return read_expecting_clean_errors(path, read);
}

}  // namespace covey::fuzz
