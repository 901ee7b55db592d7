#pragma once
// Random streams. Every randomized computation owns one stream derived from (seed, stream id),
// so results never depend on the thread count, and a stream's state can be saved and restored
// bit for bit (for checkpoint and resume).
#include <boost/random/mersenne_twister.hpp>
#include <boost/random/seed_seq.hpp>
#include <boost/random/uniform_01.hpp>
#include <boost/random/uniform_int_distribution.hpp>
#include <cstdint>
#include <string>

namespace covey {

using Rng = boost::random::mt19937_64;

// A stream seeded from the user's seed and a stream id (chain number, worker number, ...).
Rng make_stream(std::uint64_t seed, std::uint64_t stream_id);

// Uniform double in [0, 1): the 53 high bits of one draw, identical on every platform.
inline double uniform01(Rng& rng) {
  return static_cast<double>(rng() >> 11) * 0x1.0p-53;
}

// Uniform integer in [0, bound) by Lemire's multiply-shift with rejection (exact, no modulo bias).
inline std::uint64_t uniform_below(Rng& rng, std::uint64_t bound) {
  unsigned __int128 m = static_cast<unsigned __int128>(rng()) * bound;
  std::uint64_t low = static_cast<std::uint64_t>(m);
  if (low < bound) {
    const std::uint64_t threshold = -bound % bound;
    while (low < threshold) {
      m = static_cast<unsigned __int128>(rng()) * bound;
      low = static_cast<std::uint64_t>(m);
    }
  }
  return static_cast<std::uint64_t>(m >> 64);
}

// Text serialization of a stream's full state (Boost's portable stream format).
std::string save_stream(const Rng& rng);
Rng load_stream(const std::string& state);

}  // namespace covey
