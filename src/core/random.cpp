#include "covey/core/random.hpp"

#include <sstream>

#include "covey/core/error.hpp"

namespace covey {

Rng make_stream(std::uint64_t seed, std::uint64_t stream_id) {
  // seed_seq mixes all words, so nearby (seed, id) pairs give unrelated streams.
  boost::random::seed_seq seq{static_cast<std::uint32_t>(seed),
                              static_cast<std::uint32_t>(seed >> 32),
                              static_cast<std::uint32_t>(stream_id),
                              static_cast<std::uint32_t>(stream_id >> 32), 0x636f7665u};
  return Rng(seq);
}

std::string save_stream(const Rng& rng) {
  std::ostringstream out;
  out << rng;
  return out.str();
}

Rng load_stream(const std::string& state) {
  // Boost's extractor sets failbit when the text ends right after the last word, so a sentinel
  // follows the state: it must be read back intact, which also rejects truncated or extra text.
  std::istringstream in(state + " ;");
  Rng rng;
  in >> rng;
  char sentinel = 0;
  in >> sentinel;
  if (in.fail() || sentinel != ';') throw InputError("corrupt random-stream state in checkpoint");
  return rng;
}

}  // namespace covey
