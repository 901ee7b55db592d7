#pragma once
// Template part of h5.hpp.
#include "covey/core/error.hpp"

namespace covey::h5 {

// Throws the InputError for an HDF5 failure on `path`: a failed Fletcher32 checksum and a file
// shorter than its metadata say are named as such (from the HDF5 error stack); anything else
// names the HDF5 function and its message.
[[noreturn]] void throw_hdf5_error(const std::string& path, const H5::Exception& e);
// Forgets the errors recorded so far (guard() starts each block of HDF5 work with it).
void clear_error_stack();

template <class F>
auto guard(const std::string& path, F&& f) -> decltype(f()) {
  clear_error_stack();
  try {
    return f();
  } catch (const H5::Exception& e) {
    throw_hdf5_error(path, e);
  }
}

}  // namespace covey::h5
