#pragma once
// Template part of h5.hpp.
#include "covey/error.hpp"

namespace covey::h5 {

template <class F>
auto guard(const std::string& path, F&& f) -> decltype(f()) {
  try {
    return f();
  } catch (const H5::Exception& e) {
    throw InputError(path + ": HDF5 error in " + e.getFuncName() + ": " + e.getDetailMsg() +
                     " (the file may be truncated, corrupted or not written by covey)");
  }
}

}  // namespace covey::h5
