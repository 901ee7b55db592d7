// BDeu local scores (Heckerman, Geiger & Chickering 1995) with fast counting.
//
// Counting scheme. The joint configuration of (v, S) is coded per row as one integer with v as the
// most significant digit: code = x_v * Q + config(S), Q = prod_{u in S} r_u. Adding a parent u is
// then code' = code * r_u + x_u, so a family is scored by a depth-first walk over its parent sets
// in which each set costs one pass over the rows (extend the parent's codes, count into a flat
// array) and the codes of a set are reused by all its supersets. The counts of configuration j
// and state k sit at k * Q + j. When the joint space r_v * Q outgrows a flat array, the set is
// scored by the general route (dense relabelling of configurations, sorting when needed).
#include <math.h>  // lgamma_r: lgamma without the shared `signgam` (safe in threads)

#include <tbb/enumerable_thread_specific.h>
#include <algorithm>
#include <cstring>
#include <unordered_map>

#include "covey/core/error.hpp"
#include "covey/scores/scores.hpp"

namespace covey {
namespace {

inline double log_gamma(double x) {
  int sign;
  return lgamma_r(x, &sign);
}

// Adds one to counts[code(i)] for every row i, where codes lie in [0, space). Uses four
// interleaved copies of the counts when they fit in `capacity`: consecutive rows that hit the same
// counter would otherwise wait on each other's stores. The copies are merged into the first.
template <class Code>
inline void count_rows(std::uint32_t* counts, std::size_t rows, std::uint64_t space,
                       std::uint64_t capacity, Code code) {
  if (4 * space > capacity || rows < 256) {
    for (std::size_t i = 0; i < rows; ++i) ++counts[code(i)];
    return;
  }
  std::uint32_t* c1 = counts + space;
  std::uint32_t* c2 = c1 + space;
  std::uint32_t* c3 = c2 + space;
  std::size_t i = 0;
  for (; i + 4 <= rows; i += 4) {
    ++counts[code(i)];
    ++c1[code(i + 1)];
    ++c2[code(i + 2)];
    ++c3[code(i + 3)];
  }
  for (; i < rows; ++i) ++counts[code(i)];
  for (std::uint64_t k = 0; k < space; ++k) {
    counts[k] += c1[k] + c2[k] + c3[k];
    c1[k] = c2[k] = c3[k] = 0;
  }
}

struct Workspace {
  std::vector<std::vector<std::uint32_t>> levels;  // codes per depth of the walk
  std::vector<std::uint32_t> counts;               // all zero between uses
  std::vector<std::uint32_t> ids;                  // general route
  std::vector<std::uint64_t> keys;
};

class Bdeu final : public LocalScore {
 public:
  Bdeu(const DataTable& data, double ess) : data_(data), ess_(ess), rows_(data.num_rows()) {
    if (data.kind() != VariableKind::kDiscrete || data.is_mixed())
      throw InputError("BDeu needs discrete data (the table holds Gaussian columns)");
    if (!(ess > 0) || !std::isfinite(ess)) throw OptionError("{ess} must be a positive number");
    for (int v = 0; v < data.num_variables(); ++v) {
      levels_.push_back(data.num_levels(v));
      columns_.push_back(data.codes(v).data());
    }
    dense_limit_ = bdeu_count_cells(rows_);
  }

  int num_variables() const override { return data_.num_variables(); }

  double log_marginal(int v, std::span<const int> parents) const override {
    Workspace& ws = workspace();
    return fits_dense(v, parents) ? score_dense(v, parents, ws) : score_general(v, parents, ws);
  }

  void score_family(const Family& f,
                    std::vector<std::pair<ParentMask, double>>& out) const override;

 private:
  Workspace& workspace() const {
    Workspace& ws = workspaces_.local();
    if (ws.counts.empty()) ws.counts.assign(dense_limit_, 0);
    return ws;
  }
  std::vector<std::uint32_t>& level(Workspace& ws, std::size_t depth) const {
    if (ws.levels.size() <= depth) ws.levels.resize(depth + 1);
    if (ws.levels[depth].size() != rows_) ws.levels[depth].resize(rows_);
    return ws.levels[depth];
  }

  // Score from counts at k * q + j (q configurations, r states), clearing them.
  double score_counts(std::uint32_t* counts, std::uint64_t q, int r) const;
  bool fits_dense(int v, std::span<const int> parents) const {
    std::uint64_t space = static_cast<std::uint64_t>(levels_[v]);
    for (int u : parents)
      if ((space *= static_cast<std::uint64_t>(levels_[u])) > dense_limit_) return false;
    return true;
  }
  // One set by the packed codes of the walk (parents taken in the given order).
  double score_dense(int v, std::span<const int> parents, Workspace& ws) const;
  double score_general(int v, std::span<const int> parents, Workspace& ws) const;
  // The depth-first walk below a set whose joint codes are `code` (space r_v * q).
  void walk(const Family& f, Workspace& ws, const std::uint32_t* code, std::uint64_t q,
            ParentMask mask, int start, int end, int used, std::vector<int>& parents,
            std::vector<std::pair<ParentMask, double>>& out) const;
  // The same sets scored one by one by the general route.
  void walk_general(const Family& f, Workspace& ws, ParentMask mask, int start, int used,
                    std::vector<int>& parents,
                    std::vector<std::pair<ParentMask, double>>& out) const;

  const DataTable& data_;
  double ess_;
  std::size_t rows_;
  std::vector<int> levels_;
  std::vector<const std::uint16_t*> columns_;
  std::uint64_t dense_limit_;
  mutable tbb::enumerable_thread_specific<Workspace> workspaces_;
};

double Bdeu::score_counts(std::uint32_t* counts, std::uint64_t q, int r) const {
  const double a_j = ess_ / static_cast<double>(q);
  const double a_jk = a_j / r;
  const double lg_a_j = log_gamma(a_j), lg_a_jk = log_gamma(a_jk);
  double sum = 0;
  for (std::uint64_t j = 0; j < q; ++j) {
    std::uint32_t n_j = 0;
    for (int k = 0; k < r; ++k) n_j += counts[k * q + j];
    if (n_j == 0) continue;
    double term = lg_a_j - log_gamma(a_j + n_j);
    for (int k = 0; k < r; ++k) {
      const std::uint32_t c = counts[k * q + j];
      if (c) term += log_gamma(a_jk + c) - lg_a_jk;
    }
    sum += term;
  }
  std::memset(counts, 0, sizeof(std::uint32_t) * q * r);
  return sum;
}

double Bdeu::score_dense(int v, std::span<const int> parents, Workspace& ws) const {
  std::uint32_t* counts = ws.counts.data();
  const std::uint16_t* x_v = columns_[v];
  const std::size_t l = parents.size();
  if (l == 0) {
    count_rows(counts, rows_, levels_[v], dense_limit_, [&](std::size_t i) { return x_v[i]; });
    return score_counts(counts, 1, levels_[v]);
  }
  // Codes of (v, all parents but the last), then the last parent fused with the counting.
  std::uint64_t q = 1;
  const std::uint16_t* x_last = columns_[parents[l - 1]];
  const std::uint32_t r_last = static_cast<std::uint32_t>(levels_[parents[l - 1]]);
  if (l == 1) {
    count_rows(counts, rows_, std::uint64_t(r_last) * levels_[v], dense_limit_,
               [&](std::size_t i) { return std::uint32_t(x_v[i]) * r_last + x_last[i]; });
  } else {
    std::uint32_t* code = level(ws, 0).data();
    for (std::size_t i = 0; i < rows_; ++i) code[i] = x_v[i];
    for (std::size_t p = 0; p + 1 < l; ++p) {
      const std::uint16_t* x = columns_[parents[p]];
      const std::uint32_t r = static_cast<std::uint32_t>(levels_[parents[p]]);
      q *= r;
      for (std::size_t i = 0; i < rows_; ++i) code[i] = code[i] * r + x[i];
    }
    count_rows(counts, rows_, q * r_last * levels_[v], dense_limit_,
               [&](std::size_t i) { return code[i] * r_last + x_last[i]; });
  }
  return score_counts(counts, q * r_last, levels_[v]);
}

double Bdeu::score_general(int v, std::span<const int> parents, Workspace& ws) const {
  // Parent configurations as ids: mixed-radix while the space is small, relabelled densely (in
  // order of first appearance) once it is not, so ids stay below the number of rows.
  ws.ids.assign(rows_, 0);
  std::uint32_t* ids = ws.ids.data();
  std::uint64_t space = 1;
  double q = 1;  // BDeu counts every configuration, observed or not
  for (int u : parents) {
    const std::uint16_t* x = columns_[u];
    const std::uint64_t r = levels_[u];
    q *= static_cast<double>(r);
    if (space * r <= dense_limit_) {
      for (std::size_t i = 0; i < rows_; ++i) ids[i] = ids[i] * std::uint32_t(r) + x[i];
      space *= r;
    } else {
      std::unordered_map<std::uint64_t, std::uint32_t> relabel;
      relabel.reserve(std::min<std::uint64_t>(space * r, rows_));
      for (std::size_t i = 0; i < rows_; ++i) {
        const std::uint64_t key = std::uint64_t(ids[i]) * r + x[i];
        ids[i] = relabel.emplace(key, std::uint32_t(relabel.size())).first->second;
      }
      space = relabel.size();
    }
  }
  const int r_v = levels_[v];
  const std::uint16_t* x_v = columns_[v];
  const double a_j = ess_ / q, a_jk = a_j / r_v;
  const double lg_a_j = log_gamma(a_j), lg_a_jk = log_gamma(a_jk);
  double sum = 0;
  if (space * r_v <= dense_limit_) {
    std::uint32_t* counts = ws.counts.data();
    for (std::size_t i = 0; i < rows_; ++i) ++counts[std::uint64_t(ids[i]) * r_v + x_v[i]];
    for (std::uint64_t j = 0; j < space; ++j) {
      std::uint32_t n_j = 0;
      for (int k = 0; k < r_v; ++k) n_j += counts[j * r_v + k];
      if (n_j == 0) continue;
      double term = lg_a_j - log_gamma(a_j + n_j);
      for (int k = 0; k < r_v; ++k) {
        const std::uint32_t c = counts[j * r_v + k];
        if (c) term += log_gamma(a_jk + c) - lg_a_jk;
      }
      sum += term;
    }
    std::memset(counts, 0, sizeof(std::uint32_t) * space * r_v);
    return sum;
  }
  // Many states: sort the joint keys; runs of equal keys are cells, runs of equal ids configs.
  ws.keys.resize(rows_);
  for (std::size_t i = 0; i < rows_; ++i) ws.keys[i] = std::uint64_t(ids[i]) * r_v + x_v[i];
  std::sort(ws.keys.begin(), ws.keys.end());
  std::size_t i = 0;
  while (i < rows_) {
    const std::uint64_t id = ws.keys[i] / r_v;
    std::uint64_t n_j = 0;
    double cells = 0;
    while (i < rows_ && ws.keys[i] / r_v == id) {
      std::size_t e = i;
      while (e < rows_ && ws.keys[e] == ws.keys[i]) ++e;
      cells += log_gamma(a_jk + double(e - i)) - lg_a_jk;
      n_j += e - i;
      i = e;
    }
    sum += lg_a_j - log_gamma(a_j + double(n_j)) + cells;
  }
  return sum;
}

void Bdeu::walk_general(const Family& f, Workspace& ws, ParentMask mask, int start, int used,
                        std::vector<int>& parents,
                        std::vector<std::pair<ParentMask, double>>& out) const {
  const int m = static_cast<int>(f.optional.size());
  for (int j = start; j < m && used < f.max_optional; ++j) {
    parents.push_back(f.optional[j]);
    const ParentMask with = mask | (ParentMask{1} << j);
    out.emplace_back(with, score_general(f.node, parents, ws));
    walk_general(f, ws, with, j + 1, used + 1, parents, out);
    parents.pop_back();
  }
}

void Bdeu::walk(const Family& f, Workspace& ws, const std::uint32_t* code, std::uint64_t q,
                ParentMask mask, int start, int end, int used, std::vector<int>& parents,
                std::vector<std::pair<ParentMask, double>>& out) const {
  const int r_v = levels_[f.node];
  const int m = static_cast<int>(f.optional.size());
  std::uint32_t* counts = ws.counts.data();
  for (int j = start; j < end; ++j) {
    const int u = f.optional[j];
    const std::uint32_t r_u = static_cast<std::uint32_t>(levels_[u]);
    const std::uint64_t q_u = q * r_u;
    const ParentMask with = mask | (ParentMask{1} << j);
    parents.push_back(u);
    if (q_u * r_v > dense_limit_) {
      out.emplace_back(with, score_general(f.node, parents, ws));
      walk_general(f, ws, with, j + 1, used + 1, parents, out);
      parents.pop_back();
      continue;
    }
    const std::uint16_t* x = columns_[u];
    const bool extend = used + 1 < f.max_optional && j + 1 < m;
    if (extend) {
      std::uint32_t* next = level(ws, used + 1).data();
      count_rows(counts, rows_, q_u * r_v, dense_limit_, [&](std::size_t i) {
        const std::uint32_t c = code[i] * r_u + x[i];
        next[i] = c;
        return c;
      });
      out.emplace_back(with, score_counts(counts, q_u, r_v));
      walk(f, ws, next, q_u, with, j + 1, m, used + 1, parents, out);
    } else {
      count_rows(counts, rows_, q_u * r_v, dense_limit_,
                 [&](std::size_t i) { return code[i] * r_u + x[i]; });
      out.emplace_back(with, score_counts(counts, q_u, r_v));
    }
    parents.pop_back();
  }
}

void Bdeu::score_family(const Family& f, std::vector<std::pair<ParentMask, double>>& out) const {
  Workspace& ws = workspace();
  std::vector<int> parents(f.required.begin(), f.required.end());
  const int v = f.node;
  const int r_v = levels_[v];
  // Codes of (v, required): the root of the walk.
  std::uint64_t q = 1;
  bool dense = static_cast<std::uint64_t>(r_v) <= dense_limit_;
  for (int u : f.required) {
    q *= static_cast<std::uint64_t>(levels_[u]);
    dense = dense && q * r_v <= dense_limit_;
  }
  if (!dense) {
    if (f.first_optional < 0) {
      out.emplace_back(0, score_general(v, parents, ws));
      return;
    }
    const int j = f.first_optional;
    parents.push_back(f.optional[j]);
    out.emplace_back(ParentMask{1} << j, score_general(v, parents, ws));
    walk_general(f, ws, ParentMask{1} << j, j + 1, 1, parents, out);
    return;
  }
  std::uint32_t* root = level(ws, 0).data();
  const std::uint16_t* x_v = columns_[v];
  for (std::size_t i = 0; i < rows_; ++i) root[i] = x_v[i];
  for (int u : f.required) {
    const std::uint16_t* x = columns_[u];
    const std::uint32_t r_u = static_cast<std::uint32_t>(levels_[u]);
    for (std::size_t i = 0; i < rows_; ++i) root[i] = root[i] * r_u + x[i];
  }
  if (f.first_optional < 0) {
    std::uint32_t* counts = ws.counts.data();
    count_rows(counts, rows_, q * r_v, dense_limit_, [&](std::size_t i) { return root[i]; });
    out.emplace_back(0, score_counts(counts, q, r_v));
    return;
  }
  if (f.max_optional < 1) return;
  walk(f, ws, root, q, 0, f.first_optional, f.first_optional + 1, 0, parents, out);
}

}  // namespace

std::unique_ptr<LocalScore> make_bdeu(const DataTable& data, double equivalent_sample_size) {
  return std::make_unique<Bdeu>(data, equivalent_sample_size);
}

}  // namespace covey
