// Saving and loading the exact cover-bounded sampler (layout: docs/file-formats.md). The tables
// are stored as one float64 dataset written straight from the arena and read straight into it
// (no per-element conversion, no second copy), so a loaded sampler gives exactly the draws of
// the one that was saved and saving or loading holds no more memory than the tables themselves.
#include <cinttypes>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>
#include <type_traits>

#include "core/h5.hpp"
#include "cover_sampler_impl.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/core/version.hpp"
#include "covey/exact/cover_best.hpp"

namespace covey {
namespace {

constexpr const char* kSamplerKind = "cover-sampler";
// 2: the tables as float64 `/tables/values` (format 1 stored long doubles as mantissa and
// exponent datasets).
// 3: units store the index of their cover set in the fixed enumeration (any n), where 2 stored
// its 64-bit mask.
constexpr long long kSamplerFormatVersion = 3;
static_assert(std::is_same_v<detail::Real, double>,
              "the sampler file stores the tables as float64");

// A digest of the stored tables: a sampler file whose contents were changed after saving
// (checksums recomputed, hand edits) would otherwise give wrong draws or reach states of weight
// 0; a digest mismatch is reported as a corrupt file instead. FNV-1a steps over 64-bit words in
// four interleaved lanes (docs/file-formats.md), fast enough for tables of many GiB.
class Digest {
 public:
  template <class T>
  void add(const T* values, std::size_t count) {
    add_value(static_cast<std::uint64_t>(count));
    const std::size_t bytes = count * sizeof(T);
    const auto* p = reinterpret_cast<const unsigned char*>(values);
    std::size_t i = 0;
    for (; i + 32 <= bytes; i += 32)
      for (int l = 0; l < 4; ++l) {
        std::uint64_t w;
        std::memcpy(&w, p + i + 8 * l, 8);
        h_[l] = (h_[l] ^ w) * kPrime;
      }
    for (; i < bytes; ++i) h_[0] = (h_[0] ^ p[i]) * kPrime;
  }
  template <class T>
  void add(const std::vector<T>& values) {
    add(values.data(), values.size());
  }
  void add_value(std::uint64_t value) { h_[0] = (h_[0] ^ value) * kPrime; }
  std::uint64_t value() const {
    std::uint64_t h = h_[0];
    for (int l = 1; l < 4; ++l) h = (h ^ h_[l]) * kPrime;
    return h;
  }

 private:
  static constexpr std::uint64_t kPrime = 1099511628211ULL;
  std::uint64_t h_[4] = {14695981039346656037ULL, 14695981039346656037ULL ^ 1,
                         14695981039346656037ULL ^ 2, 14695981039346656037ULL ^ 3};
};

std::uint64_t tables_digest(long long k, long long n, const std::vector<std::uint64_t>& covers,
                            const std::vector<std::int32_t>& orders,
                            const std::vector<double>& log_weights,
                            const std::vector<detail::Real>& values) {
  Digest d;
  d.add_value(static_cast<std::uint64_t>(k));
  d.add_value(static_cast<std::uint64_t>(n));
  d.add(covers);
  d.add(orders);
  d.add(log_weights);
  d.add(values);
  return d.value();
}

}  // namespace

void CoverSampler::save(const std::string& path, bool overwrite) const {
  require_new_output(path, overwrite);
  const Impl& d = *impl_;
  AtomicOutput out(path);
  h5::guard(path, [&] {
    H5::H5File file = h5::create(out.temp_path());
    h5::set_attr(file, "kind", std::string(kSamplerKind));
    h5::set_attr(file, "format_version", kSamplerFormatVersion);
    h5::set_attr(file, "cover_bound", static_cast<long long>(d.k));
    h5::set_attr(file, "num_variables", static_cast<long long>(d.n));
    h5::set_attr(file, "table_fingerprint", format_fingerprint(d.fingerprint));
    h5::set_attr(file, "log_upper_bound", d.log_u);
    h5::set_attr(file, "covey_version", std::string(kVersion));
    std::vector<std::uint64_t> covers;
    std::vector<std::int32_t> orders;
    std::vector<double> log_weights;
    for (const auto& g : d.units) {
      covers.push_back(static_cast<std::uint64_t>(g.cover));
      for (int t = 0; t < g.m; ++t) orders.push_back(g.order[t]);
      log_weights.push_back(g.log_weight);
    }
    H5::Group units = file.createGroup("units");
    h5::write_vector(units, "cover", covers);
    h5::write_vector(units, "order", orders);
    h5::write_vector(units, "log_weight", log_weights);
    H5::Group tables = file.createGroup("tables");
    h5::write_large_doubles(tables, "values", d.arena.data(), d.arena.size());
    h5::set_attr(file, "tables_digest",
                 format_fingerprint(tables_digest(d.k, d.n, covers, orders, log_weights, d.arena)));
  });
  out.commit();
}

CoverSampler CoverSampler::load(const std::string& path, const ScoreTable& table,
                                const CoverSamplerOptions& options) {
  H5::H5File file = h5::open_read(path);
  CoverSampler sampler;
  sampler.impl_ = std::make_unique<Impl>();
  Impl& d = *sampler.impl_;
  h5::guard(path, [&] {
    if (!h5::has_attr(file, "kind") || h5::get_attr_string(file, "kind") != kSamplerKind)
      throw InputError(path + ": not a covey exact-sampler file (kind is not '" +
                       std::string(kSamplerKind) + "')");
    const long long version = h5::get_attr_int(file, "format_version");
    if (version > kSamplerFormatVersion) throw InputError(path + ": written by a newer covey");
    if (version < kSamplerFormatVersion)
      throw InputError(path + ": sampler format " + std::to_string(version) +
                       " of an older covey (this one reads format " +
                       std::to_string(kSamplerFormatVersion) +
                       "); build and save the sampler again with --save-sampler");
    const std::string fingerprint = h5::get_attr_string(file, "table_fingerprint");
    if (h5::get_attr_int(file, "num_variables") != table.num_variables() ||
        fingerprint != format_fingerprint(table.fingerprint()))
      throw InputError(path + ": the sampler was built from a different score table (fingerprint " +
                       fingerprint + ", this table has " + format_fingerprint(table.fingerprint()) +
                       ")");
    d.n = table.num_variables();
    d.k = static_cast<int>(h5::get_attr_int(file, "cover_bound"));
    check_cover_bound(table, d.k, (path + ": cover bound").c_str());
    detail::require_sampler_memory(d.n, d.k, options.memory_limit_bytes);
    d.fingerprint = table.fingerprint();
    d.layout_units();
    H5::Group units = file.openGroup("units");
    const auto covers = h5::read_uint64s(units, "cover");
    const auto orders = h5::read_int32s(units, "order");
    const auto log_weights = h5::read_doubles(units, "log_weight");
    if (covers.size() != d.units.size() || log_weights.size() != d.units.size())
      throw InputError(path + ": the unit list does not match its cover bound (corrupted?)");
    std::size_t next = 0;
    for (std::size_t u = 0; u < d.units.size(); ++u) {
      detail::UnitGeometry& g = d.units[u];
      if (covers[u] != static_cast<std::uint64_t>(g.cover) || next + g.m > orders.size())
        throw InputError(path + ": the unit list does not match its cover bound (corrupted?)");
      int order[detail::kMaxCoverBound];
      unsigned seen = 0;
      for (int t = 0; t < g.m; ++t) {
        order[t] = orders[next++];
        if (order[t] < 0 || order[t] >= g.m || ((seen >> order[t]) & 1U))
          throw InputError(path + ": a unit order is not a permutation (corrupted?)");
        seen |= 1U << order[t];
      }
      g.set(order, d.covers[g.cover]);
      g.log_weight = log_weights[u];
      if (std::isnan(g.log_weight) || g.log_weight == INFINITY)
        throw InputError(path + ": invalid unit weight (corrupted?)");
    }
    if (!h5::has_attr(file, "tables_digest"))
      throw InputError(path +
                       ": no tables_digest attribute (saved by an older covey?); save the "
                       "sampler again with --save-sampler");
    H5::Group tables = file.openGroup("tables");
    d.arena = h5::read_doubles(tables, "values");
    if (d.arena.size() != d.arena_size)
      throw InputError(path + ": the tables do not match the unit list (corrupted?)");
    if (h5::get_attr_string(file, "tables_digest") !=
        format_fingerprint(tables_digest(d.k, d.n, covers, orders, log_weights, d.arena)))
      throw InputError(path +
                       ": the sampler tables do not match their digest (the file was "
                       "changed after it was saved; save the sampler again)");
  });
  d.finish();
  return sampler;
}

}  // namespace covey
