#include "covey/scores/score_io.hpp"

#include <charconv>
#include <cmath>
#include <fstream>
#include <map>
#include <sstream>
#include <unordered_map>

#include "core/h5.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/version.hpp"

namespace covey {
namespace {

constexpr const char* kFormatName = "covey-scores";
constexpr long long kFormatVersion = 1;

std::vector<std::string> split(const std::string& line, char sep) {
  std::vector<std::string> out;
  std::size_t start = 0;
  for (;;) {
    const std::size_t pos = line.find(sep, start);
    out.push_back(line.substr(start, pos - start));
    if (pos == std::string::npos) return out;
    start = pos + 1;
  }
}

std::string strip_cr(std::string s) {
  if (!s.empty() && s.back() == '\r') s.pop_back();
  return s;
}

bool parse_double(const std::string& text, double& out) {
  if (text.empty()) return false;
  const char* first = text.data();
  const char* last = first + text.size();
  auto [ptr, ec] = std::from_chars(first, last, out);
  return ec == std::errc() && ptr == last;
}

void write_metadata(H5::H5File& file, const ScoreMetadata& m) {
  h5::set_attr(file, "format", std::string(kFormatName));
  h5::set_attr(file, "format_version", kFormatVersion);
  h5::set_attr(file, "score", m.score);
  h5::set_attr(file, "prior", m.prior);
  h5::set_attr_map(file, "parameters", m.parameters);
  h5::set_attr(file, "max_indegree", static_cast<long long>(m.max_indegree));
  h5::set_attr(file, "num_rows", m.num_rows);
  h5::set_attr(file, "source", m.source);
  h5::set_attr(file, "command_line", m.command_line);
  h5::set_attr(file, "covey_version",
               m.covey_version.empty() ? std::string(kVersion) : m.covey_version);
}

ScoreMetadata read_metadata(const H5::H5File& file, const std::string& path) {
  if (!h5::has_attr(file, "format") || h5::get_attr_string(file, "format") != kFormatName)
    throw InputError(path + ": not a covey score table (missing format attribute)");
  if (h5::get_attr_int(file, "format_version") > kFormatVersion)
    throw InputError(path + ": written by a newer covey (format version " +
                     std::to_string(h5::get_attr_int(file, "format_version")) + ")");
  ScoreMetadata m;
  m.score = h5::get_attr_string(file, "score");
  m.prior = h5::get_attr_string(file, "prior");
  m.parameters = h5::get_attr_map(file, "parameters");
  m.max_indegree = static_cast<int>(h5::get_attr_int(file, "max_indegree"));
  m.num_rows = h5::get_attr_int(file, "num_rows");
  m.source = h5::get_attr_string(file, "source");
  m.command_line = h5::get_attr_string(file, "command_line");
  m.covey_version = h5::get_attr_string(file, "covey_version");
  return m;
}

void check_offsets(const std::vector<std::int64_t>& offsets, std::size_t n, std::size_t total,
                   const std::string& what, const std::string& path) {
  if (offsets.size() != n + 1 || offsets.front() != 0 ||
      static_cast<std::size_t>(offsets.back()) != total)
    throw InputError(path + ": inconsistent " + what + " offsets");
  for (std::size_t i = 0; i < n; ++i)
    if (offsets[i] > offsets[i + 1]) throw InputError(path + ": inconsistent " + what + " offsets");
}

}  // namespace

void write_scores_hdf5(const ScoreTable& table, const std::string& path, bool overwrite) {
  require_new_output(path, overwrite);
  AtomicOutput out(path);
  h5::guard(path, [&] {
    H5::H5File file = h5::create(out.temp_path());
    write_metadata(file, table.metadata());
    const int n = table.num_variables();
    std::vector<std::string> names, kinds, levels;
    std::vector<std::int64_t> level_offsets{0};
    for (const Variable& v : table.variables()) {
      names.push_back(v.name);
      kinds.push_back(to_string(v.kind));
      levels.insert(levels.end(), v.levels.begin(), v.levels.end());
      level_offsets.push_back(static_cast<std::int64_t>(levels.size()));
    }
    H5::Group vars = file.createGroup("variables");
    h5::write_strings(vars, "names", names);
    h5::write_strings(vars, "kinds", kinds);
    h5::write_strings(vars, "levels", levels);
    h5::write_vector(vars, "level_offsets", level_offsets);

    std::vector<std::int64_t> cand_offsets{0}, set_offsets{0};
    std::vector<std::int32_t> candidates;
    std::vector<std::uint64_t> masks;
    std::vector<double> scores;
    for (int v = 0; v < n; ++v) {
      for (int c : table.candidates(v)) candidates.push_back(c);
      cand_offsets.push_back(static_cast<std::int64_t>(candidates.size()));
      auto ms = table.parent_sets(v);
      auto ss = table.log_scores(v);
      masks.insert(masks.end(), ms.begin(), ms.end());
      scores.insert(scores.end(), ss.begin(), ss.end());
      set_offsets.push_back(static_cast<std::int64_t>(masks.size()));
    }
    H5::Group nodes = file.createGroup("nodes");
    h5::write_vector(nodes, "candidate_offsets", cand_offsets);
    h5::write_vector(nodes, "candidates", candidates);
    h5::write_vector(nodes, "set_offsets", set_offsets);
    h5::write_vector(nodes, "parent_masks", masks);
    h5::write_vector(nodes, "log_scores", scores);
    file.close();
  });
  out.commit();
}

ScoreTable read_scores_hdf5(const std::string& path) {
  return h5::guard(path, [&] {
    H5::H5File file = h5::open_read(path);
    try {
      ScoreMetadata meta = read_metadata(file, path);
      H5::Group vars = file.openGroup("variables");
      const auto names = h5::read_strings(vars, "names");
      const auto kinds = h5::read_strings(vars, "kinds");
      const auto levels = h5::read_strings(vars, "levels");
      const auto level_offsets = h5::read_int64s(vars, "level_offsets");
      const std::size_t n = names.size();
      if (kinds.size() != n) throw InputError(path + ": variable kinds do not match names");
      check_offsets(level_offsets, n, levels.size(), "level", path);
      std::vector<Variable> variables(n);
      for (std::size_t i = 0; i < n; ++i) {
        variables[i].name = names[i];
        variables[i].kind = variable_kind_from_string(kinds[i]);
        variables[i].levels.assign(levels.begin() + level_offsets[i],
                                   levels.begin() + level_offsets[i + 1]);
      }
      H5::Group nodes = file.openGroup("nodes");
      const auto cand_offsets = h5::read_int64s(nodes, "candidate_offsets");
      const auto candidates = h5::read_int32s(nodes, "candidates");
      const auto set_offsets = h5::read_int64s(nodes, "set_offsets");
      const auto masks = h5::read_uint64s(nodes, "parent_masks");
      const auto scores = h5::read_doubles(nodes, "log_scores");
      check_offsets(cand_offsets, n, candidates.size(), "candidate", path);
      check_offsets(set_offsets, n, masks.size(), "parent-set", path);
      if (scores.size() != masks.size())
        throw InputError(path + ": scores do not match parent sets");
      std::vector<NodeScores> node_scores(n);
      for (std::size_t v = 0; v < n; ++v) {
        node_scores[v].candidates.assign(candidates.begin() + cand_offsets[v],
                                         candidates.begin() + cand_offsets[v + 1]);
        node_scores[v].masks.assign(masks.begin() + set_offsets[v],
                                    masks.begin() + set_offsets[v + 1]);
        node_scores[v].log_scores.assign(scores.begin() + set_offsets[v],
                                         scores.begin() + set_offsets[v + 1]);
      }
      return ScoreTable(std::move(variables), std::move(node_scores), std::move(meta));
    } catch (const InputError& e) {
      const std::string what = e.what();
      if (what.rfind(path, 0) == 0) throw;
      throw InputError(path + ": " + what);
    }
  });
}

ScoreTable read_scores_tsv(const std::string& path) {
  require_readable(path);
  std::ifstream in(path, std::ios::binary);
  std::string line;
  long line_no = 0;
  auto fail = [&](const std::string& msg) -> InputError {
    return InputError(path + ":" + std::to_string(line_no) + ": " + msg);
  };
  auto next_content_line = [&](std::string& out) {
    while (std::getline(in, out)) {
      ++line_no;
      out = strip_cr(out);
      if (out.empty() || out[0] == '#') continue;
      return true;
    }
    return false;
  };
  if (!next_content_line(line))
    throw InputError(path + ": empty file (expected a 'variables' line)");
  auto header = split(line, '\t');
  if (header[0] != "variables") throw fail("first line must start with 'variables'");
  std::vector<Variable> variables;
  std::unordered_map<std::string, int> index;
  for (std::size_t i = 1; i < header.size(); ++i) {
    if (header[i].empty()) throw fail("empty variable name in column " + std::to_string(i + 1));
    if (header[i].find(',') != std::string::npos)
      throw fail("variable name '" + header[i] + "' contains ','");
    if (!index.emplace(header[i], static_cast<int>(i - 1)).second)
      throw fail("variable '" + header[i] + "' listed twice");
    variables.push_back({header[i], VariableKind::kDiscrete, {}});
  }
  if (variables.empty()) throw fail("no variables listed");
  const int n = static_cast<int>(variables.size());
  if (!next_content_line(line))
    throw InputError(path + ": missing the 'node\\tparents\\tlog_score' line");
  if (line != "node\tparents\tlog_score")
    throw fail("second line must be 'node<TAB>parents<TAB>log_score'");

  // Rows are collected with global parent lists first; candidates are the parents seen per node.
  struct Row {
    std::vector<int> parents;
    double score;
    long line;
  };
  std::vector<std::vector<Row>> rows(n);
  std::vector<std::map<std::vector<int>, long>> seen(n);
  while (next_content_line(line)) {
    auto fields = split(line, '\t');
    if (fields.size() != 3)
      throw fail("expected 3 tab-separated fields, found " + std::to_string(fields.size()));
    auto it = index.find(fields[0]);
    if (it == index.end()) throw fail("unknown variable '" + fields[0] + "'");
    const int v = it->second;
    std::vector<int> parents;
    if (!fields[1].empty()) {
      for (const std::string& name : split(fields[1], ',')) {
        auto pit = index.find(name);
        if (pit == index.end()) throw fail("unknown parent '" + name + "'");
        if (pit->second == v) throw fail("node '" + fields[0] + "' is among its own parents");
        parents.push_back(pit->second);
      }
    }
    std::sort(parents.begin(), parents.end());
    if (std::adjacent_find(parents.begin(), parents.end()) != parents.end())
      throw fail("a parent is repeated");
    double score;
    if (!parse_double(fields[2], score)) throw fail("malformed log score '" + fields[2] + "'");
    if (!std::isfinite(score)) throw fail("non-finite log score '" + fields[2] + "'");
    auto [pos, inserted] = seen[v].emplace(parents, line_no);
    if (!inserted)
      throw fail("duplicate row for node '" + fields[0] + "' (first given on line " +
                 std::to_string(pos->second) + ")");
    rows[v].push_back({std::move(parents), score, line_no});
  }
  std::vector<NodeScores> nodes(n);
  for (int v = 0; v < n; ++v) {
    if (rows[v].empty())
      throw InputError(path + ": node '" + variables[v].name + "' has no row at all");
    std::vector<int> cand;
    for (const Row& r : rows[v]) cand.insert(cand.end(), r.parents.begin(), r.parents.end());
    std::sort(cand.begin(), cand.end());
    cand.erase(std::unique(cand.begin(), cand.end()), cand.end());
    if (cand.size() > std::size_t(kMaxCandidates))
      throw InputError(path + ": node '" + variables[v].name +
                       "' has more than 64 distinct parents");
    std::vector<int> pos(n, -1);
    for (std::size_t i = 0; i < cand.size(); ++i) pos[cand[i]] = static_cast<int>(i);
    for (const Row& r : rows[v]) {
      ParentMask m = 0;
      for (int u : r.parents) m |= ParentMask{1} << pos[u];
      nodes[v].masks.push_back(m);
      nodes[v].log_scores.push_back(r.score);
    }
    nodes[v].candidates = std::move(cand);
  }
  ScoreMetadata meta;
  meta.score = "imported";
  meta.source = path;
  return ScoreTable(std::move(variables), std::move(nodes), std::move(meta));
}

void write_scores_tsv(const ScoreTable& table, const std::string& path, bool overwrite) {
  require_new_output(path, overwrite);
  std::ostringstream out;
  out.precision(17);
  out << "variables";
  for (const Variable& v : table.variables()) {
    if (v.name.find_first_of("\t,\n\r") != std::string::npos)
      throw InputError("variable name '" + v.name +
                       "' cannot be written to TSV (tab, comma or newline)");
    out << '\t' << v.name;
  }
  out << "\nnode\tparents\tlog_score\n";
  for (int v = 0; v < table.num_variables(); ++v) {
    auto masks = table.parent_sets(v);
    auto scores = table.log_scores(v);
    for (std::size_t i = 0; i < masks.size(); ++i) {
      out << table.name(v) << '\t';
      bool first = true;
      for (int u : table.parents_of(v, masks[i])) {
        if (!first) out << ',';
        out << table.name(u);
        first = false;
      }
      out << '\t' << scores[i] << '\n';
    }
  }
  write_text_file_atomically(path, out.str());
}

namespace {
bool is_tsv_path(const std::string& path) {
  const auto ends_with = [&](const char* suffix) {
    const std::string s(suffix);
    return path.size() >= s.size() && path.compare(path.size() - s.size(), s.size(), s) == 0;
  };
  return ends_with(".tsv") || ends_with(".txt");
}
}  // namespace

ScoreTable load_scores(const std::string& path) {
  ScoreTable table = is_tsv_path(path) ? read_scores_tsv(path) : read_scores_hdf5(path);
  // Every engine and chain assumes a network of two or more nodes.
  if (table.num_variables() < 2)
    throw InputError(path + ": a score table of " + std::to_string(table.num_variables()) +
                     " variable; a network needs at least two variables");
  return table;
}

void save_scores(const ScoreTable& table, const std::string& path, bool overwrite) {
  if (is_tsv_path(path))
    write_scores_tsv(table, path, overwrite);
  else
    write_scores_hdf5(table, path, overwrite);
}

}  // namespace covey
