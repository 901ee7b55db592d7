// The shared HDF5 layout of DAG draws (include/covey/graph/draws_file.hpp).
#include "covey/graph/draws_file.hpp"

#include <algorithm>
#include <cinttypes>
#include <cstdio>
#include <optional>
#include <type_traits>
#include <variant>

#include "core/h5.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/version.hpp"

namespace covey {
namespace {

constexpr const char* kFormatName = "covey-draws";
constexpr long long kFormatVersion = 1;

// Each value also becomes an HDF5 attribute of its own (readable with h5dump); booleans as 0/1.
void write_scalar_attributes(H5::H5File& file, const Attributes& attributes) {
  static const char* reserved[] = {"format",    "format_version",    "num_variables",
                                   "num_draws", "table_fingerprint", "attributes"};
  for (const auto& entry : attributes) {
    const std::string& key = entry.first;
    bool skip = false;
    for (const char* r : reserved) skip = skip || key == r;
    if (skip) continue;
    std::visit(
        [&file, &key](const auto& v) {
          if constexpr (std::is_same_v<std::decay_t<decltype(v)>, bool>)
            h5::set_attr(file, key, static_cast<long long>(v));
          else
            h5::set_attr(file, key, v);
        },
        entry.second);
  }
}

}  // namespace

void write_draws(const std::string& path, const ScoreTable& table, const std::vector<Dag>& dags,
                 const std::vector<double>& log_weights, const Attributes& attributes) {
  write_draws(path, variable_names(table.variables()), table.fingerprint(), dags, log_weights,
              attributes);
}

void write_draws(const std::string& path, const std::vector<std::string>& names,
                 std::uint64_t table_fingerprint, const std::vector<Dag>& dags,
                 const std::vector<double>& log_weights, const Attributes& attributes) {
  const int n = static_cast<int>(names.size());
  if (n < 1) throw InputError(path + ": draws files hold DAGs of at least 1 variable");
  if (!attribute_string(attributes, "kind"))
    throw Error("write_draws: the attributes need a string 'kind'");
  if (dags.size() != log_weights.size())
    throw Error("write_draws: one log weight per draw is needed");
  Attributes attrs = attributes;
  attrs.try_emplace("covey_version", std::string(kVersion));
  attrs.try_emplace("command_line", std::string());

  std::vector<std::uint64_t> rows;
  const std::size_t width = std::size_t(n) * Dag::words_for(n);
  rows.reserve(dags.size() * width);
  for (const Dag& d : dags) {
    if (d.size() != n) throw Error("write_draws: a draw has the wrong number of vertices");
    rows.insert(rows.end(), d.words().begin(), d.words().end());
  }
  AtomicOutput out(path);
  h5::guard(path, [&] {
    H5::H5File file = h5::create(out.temp_path());
    h5::set_attr(file, "format", std::string(kFormatName));
    h5::set_attr(file, "format_version", kFormatVersion);
    h5::set_attr(file, "num_variables", static_cast<long long>(n));
    h5::set_attr(file, "num_draws", static_cast<long long>(dags.size()));
    h5::set_attr(file, "table_fingerprint", format_fingerprint(table_fingerprint));
    write_scalar_attributes(file, attrs);
    h5::set_attr_map(file, "attributes", attrs);
    H5::Group vars = file.createGroup("variables");
    h5::write_strings(vars, "names", names);
    H5::Group group = file.createGroup("draws");
    h5::create_rows(group, "parents", width);
    h5::append_rows(group, "parents", rows, width);
    h5::create_series_double(group, "log_weight");
    h5::append_series(group, "log_weight", log_weights);
    file.close();
  });
  out.commit();
}

DrawsFile read_draws(const std::string& path) {
  require_readable(path);
  return h5::guard(path, [&] {
    H5::H5File file = h5::open_read(path);
    if (!h5::has_attr(file, "format") || h5::get_attr_string(file, "format") != kFormatName)
      throw InputError(path + ": not a covey draws file (missing format attribute)");
    if (h5::get_attr_int(file, "format_version") > kFormatVersion)
      throw InputError(path + ": written by a newer covey (format version " +
                       std::to_string(h5::get_attr_int(file, "format_version")) + ")");
    DrawsFile d;
    d.attributes = h5::get_attr_map(file, "attributes");
    const std::optional<std::string> kind = attribute_string(d.attributes, "kind");
    if (!kind) throw InputError(path + ": corrupt attributes (no kind)");
    d.kind = *kind;
    d.table_fingerprint = parse_fingerprint(h5::get_attr_string(file, "table_fingerprint"), path);
    const long long n = h5::get_attr_int(file, "num_variables");
    const long long count = h5::get_attr_int(file, "num_draws");
    d.variables = h5::read_strings(file.openGroup("variables"), "names");
    if (n < 1 || d.variables.size() != static_cast<std::size_t>(n))
      throw InputError(path + ": corrupt variables (num_variables does not match the names)");
    H5::Group group = file.openGroup("draws");
    if (h5::num_rows(group, "parents") != static_cast<std::size_t>(count))
      throw InputError(path + ": corrupt draws (num_draws does not match the parents rows)");
    const std::vector<std::uint64_t> rows =
        h5::read_rows(group, "parents", 0, static_cast<std::size_t>(count));
    const int words = Dag::words_for(static_cast<int>(n));
    const std::size_t width = static_cast<std::size_t>(n) * words;
    if (rows.size() != static_cast<std::size_t>(count) * width)
      throw InputError(path + ": corrupt draws (rows are not num_variables * " +
                       std::to_string(words) + " words wide)");
    d.log_weights = h5::read_doubles(group, "log_weight");
    if (d.log_weights.size() != static_cast<std::size_t>(count))
      throw InputError(path + ": corrupt draws (one log weight per draw expected)");
    // The bits at or above n in the last word of each parent set must be clear.
    const int tail_bits = static_cast<int>(n - 64 * (words - 1));
    const std::uint64_t last_word =
        tail_bits == 64 ? ~std::uint64_t{0} : (std::uint64_t{1} << tail_bits) - 1;
    d.dags.reserve(count);
    for (long long i = 0; i < count; ++i) {
      Dag g(static_cast<int>(n));
      const std::uint64_t* row = rows.data() + static_cast<std::size_t>(i) * width;
      for (long long v = 0; v < n; ++v) {
        const std::span<std::uint64_t> set = g.parent_words(static_cast<int>(v));
        std::copy(row + v * words, row + (v + 1) * words, set.begin());
        if ((set[words - 1] & ~last_word) || g.has_edge(static_cast<int>(v), static_cast<int>(v)))
          throw InputError(path + ": corrupt draw " + std::to_string(i) + " (parent set of " +
                           d.variables[v] + " out of range)");
      }
      if (!is_acyclic(g))
        throw InputError(path + ": corrupt draw " + std::to_string(i) + " (it has a cycle)");
      d.dags.push_back(std::move(g));
    }
    return d;
  });
}

void check_draws_match_table(const DrawsFile& draws, const ScoreTable& table,
                             const std::string& path) {
  if (draws.variables != variable_names(table.variables()))
    throw InputError(path + ": the draws are over other variables than the score table");
  if (draws.table_fingerprint != table.fingerprint())
    throw InputError(path + ": the draws were made from a different score table (fingerprint " +
                     format_fingerprint(draws.table_fingerprint) + ", table " +
                     format_fingerprint(table.fingerprint()) + ")");
}

}  // namespace covey
