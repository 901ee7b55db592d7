// Saving and loading the exact cover-bounded sampler (layout: docs/file-formats.md). The tables
// are stored bit for bit (each long double as a 64-bit mantissa and an exponent), so a loaded
// sampler gives exactly the draws of the one that was saved.
#include <cinttypes>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>

#include "core/h5.hpp"
#include "cover_sampler_impl.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/version.hpp"
#include "covey/exact/cover_best.hpp"

namespace covey {
namespace {

constexpr const char* kSamplerKind = "cover-sampler";
constexpr long long kSamplerFormatVersion = 1;
static_assert(std::numeric_limits<long double>::digits <= 64,
              "the sampler file stores long double mantissas in 64 bits");

// FNV-1a over the stored tables (bit patterns): a sampler file whose contents were changed after
// saving (checksums recomputed, hand edits) would otherwise give wrong draws or reach states of
// weight 0; a digest mismatch is reported as a corrupt file instead.
class Digest {
 public:
  template <class T>
  void add(const std::vector<T>& values) {
    add_bytes(values.size());
    for (const T& v : values) add_bytes(v);
  }
  template <class T>
  void add_bytes(const T& value) {
    unsigned char bytes[sizeof(T)];
    std::memcpy(bytes, &value, sizeof(T));
    for (unsigned char b : bytes) h_ = (h_ ^ b) * 1099511628211ULL;
  }
  std::uint64_t value() const { return h_; }

 private:
  std::uint64_t h_ = 14695981039346656037ULL;
};

std::uint64_t tables_digest(long long k, long long n, const std::vector<std::uint64_t>& covers,
                            const std::vector<std::int32_t>& orders,
                            const std::vector<double>& log_weights,
                            const std::vector<std::uint64_t>& mantissa,
                            const std::vector<std::int32_t>& exponent) {
  Digest d;
  d.add_bytes(k);
  d.add_bytes(n);
  d.add(covers);
  d.add(orders);
  d.add(log_weights);
  d.add(mantissa);
  d.add(exponent);
  return d.value();
}

}  // namespace

void CoverSampler::save(const std::string& path) const {
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
      covers.push_back(g.cover);
      for (int t = 0; t < g.m; ++t) orders.push_back(g.order[t]);
      log_weights.push_back(g.log_weight);
    }
    H5::Group units = file.createGroup("units");
    h5::write_vector(units, "cover", covers);
    h5::write_vector(units, "order", orders);
    h5::write_vector(units, "log_weight", log_weights);
    std::vector<std::uint64_t> mantissa(d.arena.size());
    std::vector<std::int32_t> exponent(d.arena.size());
    for (std::size_t i = 0; i < d.arena.size(); ++i) {
      const long double x = d.arena[i];
      if (x == 0) continue;
      int e = 0;
      const long double fraction = std::frexp(x, &e);  // in [0.5, 1)
      mantissa[i] = static_cast<std::uint64_t>(std::ldexp(fraction, 64));
      exponent[i] = e;
    }
    H5::Group tables = file.createGroup("tables");
    h5::write_vector(tables, "mantissa", mantissa);
    h5::write_vector(tables, "exponent", exponent);
    h5::set_attr(file, "tables_digest",
                 format_fingerprint(
                     tables_digest(d.k, d.n, covers, orders, log_weights, mantissa, exponent)));
  });
  out.commit();
}

CoverSampler CoverSampler::load(const std::string& path, const ScoreTable& table) {
  H5::H5File file = h5::open_read(path);
  CoverSampler sampler;
  sampler.impl_ = std::make_unique<Impl>();
  Impl& d = *sampler.impl_;
  h5::guard(path, [&] {
    if (!h5::has_attr(file, "kind") || h5::get_attr_string(file, "kind") != kSamplerKind)
      throw InputError(path + ": not a covey exact-sampler file (kind is not '" +
                       std::string(kSamplerKind) + "')");
    if (h5::get_attr_int(file, "format_version") > kSamplerFormatVersion)
      throw InputError(path + ": written by a newer covey");
    const std::string fingerprint = h5::get_attr_string(file, "table_fingerprint");
    if (h5::get_attr_int(file, "num_variables") != table.num_variables() ||
        fingerprint != format_fingerprint(table.fingerprint()))
      throw InputError(path + ": the sampler was built from a different score table (fingerprint " +
                       fingerprint + ", this table has " + format_fingerprint(table.fingerprint()) +
                       ")");
    d.n = table.num_variables();
    d.k = static_cast<int>(h5::get_attr_int(file, "cover_bound"));
    check_cover_bound(table, d.k, (path + ": cover bound").c_str());
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
      if (covers[u] != g.cover || next + g.m > orders.size())
        throw InputError(path + ": the unit list does not match its cover bound (corrupted?)");
      int order[detail::kMaxCoverBound];
      unsigned seen = 0;
      for (int t = 0; t < g.m; ++t) {
        order[t] = orders[next++];
        if (order[t] < 0 || order[t] >= g.m || ((seen >> order[t]) & 1U))
          throw InputError(path + ": a unit order is not a permutation (corrupted?)");
        seen |= 1U << order[t];
      }
      std::vector<int> members;
      for (int v = 0; v < d.n; ++v)
        if ((g.cover >> v) & 1U) members.push_back(v);
      g.set(order, members);
      g.log_weight = log_weights[u];
      if (std::isnan(g.log_weight) || g.log_weight == INFINITY)
        throw InputError(path + ": invalid unit weight (corrupted?)");
    }
    H5::Group tables = file.openGroup("tables");
    const auto mantissa = h5::read_uint64s(tables, "mantissa");
    const auto exponent = h5::read_int32s(tables, "exponent");
    if (mantissa.size() != d.arena_size || exponent.size() != d.arena_size)
      throw InputError(path + ": the tables do not match the unit list (corrupted?)");
    if (!h5::has_attr(file, "tables_digest"))
      throw InputError(path +
                       ": no tables_digest attribute (saved by an older covey?); save the "
                       "sampler again with --save-sampler");
    if (h5::get_attr_string(file, "tables_digest") !=
        format_fingerprint(
            tables_digest(d.k, d.n, covers, orders, log_weights, mantissa, exponent)))
      throw InputError(path +
                       ": the sampler tables do not match their digest (the file was "
                       "changed after it was saved; save the sampler again)");
    d.arena.resize(d.arena_size);
    for (std::size_t i = 0; i < d.arena_size; ++i)
      d.arena[i] = mantissa[i] == 0
                       ? 0.0L
                       : std::ldexp(static_cast<long double>(mantissa[i]), exponent[i] - 64);
  });
  d.finish();
  return sampler;
}

}  // namespace covey
