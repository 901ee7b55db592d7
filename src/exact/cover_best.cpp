#include "covey/exact/cover_best.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_reduce.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <numeric>
#include <string>

#include "cover_local.hpp"
#include "covey/core/error.hpp"
#include "covey/graph/cover_class.hpp"

namespace covey {
namespace {

using detail::CoverLocalScores;

// max over subsets: best[Y] = max_{S within Y} score[S] with its argument (first found wins).
void subset_max(const double* score, int m, double* best, unsigned* arg) {
  for (unsigned y = 0; y < (1U << m); ++y) {
    best[y] = score[y];
    arg[y] = y;
    for (unsigned t = y; t; t &= t - 1) {
      const unsigned smaller = y & ~(t & (~t + 1));
      if (best[smaller] > best[y]) best[y] = best[smaller], arg[y] = arg[smaller];
    }
  }
}

// Everything about one cover set C that does not depend on the order of C.
struct CoverMaxima {
  const CoverLocalScores* local = nullptr;
  int m = 0, no = 0;
  std::vector<double> leaf, inner, link;  // subset maxima, same layout as CoverLocalScores
  std::vector<unsigned> leaf_arg, inner_arg, link_arg;

  explicit CoverMaxima(const CoverLocalScores& l) : local(&l), m(l.m), no(l.num_outside()) {
    const std::size_t w = std::size_t{1} << m;
    leaf.resize(l.leaf.size()), leaf_arg.resize(l.leaf.size());
    inner.resize(l.inner.size()), inner_arg.resize(l.inner.size());
    link.resize(l.link.size()), link_arg.resize(l.link.size());
    for (std::size_t b = 0; b < l.leaf.size(); b += w)
      subset_max(&l.leaf[b], m, &leaf[b], &leaf_arg[b]);
    for (std::size_t b = 0; b < l.inner.size(); b += w)
      subset_max(&l.inner[b], m, &inner[b], &inner_arg[b]);
    for (std::size_t b = 0; b < l.link.size(); b += w)
      subset_max(&l.link[b], m, &link[b], &link_arg[b]);
  }
};

// The DP of docs/mathematics.md section 3 for one order of C. State T: members that already have
// their one outside parent (a link). Each outside vertex is a leaf (parents within C) or a link to
// a nonempty A outside T, with parents before the first member of A; members score their best
// parent set among their predecessors (plus the link, if any).
class OrderDp {
 public:
  OrderDp(const CoverMaxima& cm, const std::vector<int>& order) : cm_(cm), m_(cm.m) {
    const unsigned full = (1U << m_) - 1;
    pred_.assign(m_, 0);
    std::vector<int> rank(m_);
    for (int t = 0; t < m_; ++t) rank[order[t]] = t;
    for (int t = 0; t < m_; ++t)
      for (int s = 0; s < t; ++s) pred_[order[t]] |= 1U << order[s];
    first_pred_.assign(full + 1, 0);
    for (unsigned a = 1; a <= full; ++a) {
      int first = -1;
      for (unsigned t = a; t; t &= t - 1) {
        const int j = std::countr_zero(t);
        if (first < 0 || rank[j] < rank[first]) first = j;
      }
      first_pred_[a] = pred_[first];
    }
  }

  // Best total score; with `choices`, also records each outside vertex's decision per state.
  double run(std::vector<unsigned>* choices, unsigned* best_state) const {
    const unsigned states = 1U << m_, full = states - 1;
    const std::size_t w = states;
    std::vector<double> val(states, -INFINITY), next(states), gain(states);
    val[0] = 0;
    if (choices) choices->assign(std::size_t(cm_.no) * states, 0);
    for (int i = 0; i < cm_.no; ++i) {
      const double* leaf = &cm_.leaf[i * w];
      const double leaf_gain = leaf[full];
      for (unsigned a = 1; a <= full; ++a) {
        double g = leaf[first_pred_[a]];
        for (unsigned t = a; t; t &= t - 1) {
          const int j = std::countr_zero(t);
          g += cm_.link[((std::size_t(i) * m_ + j) << m_) | pred_[j]];
        }
        gain[a] = g;
      }
      for (unsigned T = 0; T <= full; ++T) {
        double best = val[T] + leaf_gain;
        unsigned pick = 0;
        for (unsigned a = T; a; a = (a - 1) & T) {
          const double c = val[T & ~a] + gain[a];
          if (c > best) best = c, pick = a;
        }
        next[T] = best;
        if (choices) (*choices)[std::size_t(i) * states + T] = pick;
      }
      val.swap(next);
    }
    double best = -INFINITY;
    unsigned best_t = 0;
    for (unsigned T = 0; T <= full; ++T) {
      double total = val[T];
      for (int j = 0; j < m_; ++j)
        if (!((T >> j) & 1U)) total += cm_.inner[(std::size_t(j) << m_) | pred_[j]];
      if (total > best) best = total, best_t = T;
    }
    if (best_state) *best_state = best_t;
    return best;
  }

  Dag reconstruct(int n) const {
    std::vector<unsigned> choices;
    unsigned T = 0;
    run(&choices, &T);
    const CoverLocalScores& l = *cm_.local;
    const unsigned states = 1U << m_;
    const unsigned full = states - 1;
    Dag dag(n);
    unsigned linked = T;
    for (int i = cm_.no - 1; i >= 0; --i) {
      const unsigned a = choices[std::size_t(i) * states + T];
      const int u = l.outside[i];
      const std::size_t base = std::size_t(i) << m_;
      if (a == 0) {
        detail::add_member_parents(dag, u, l.members, cm_.leaf_arg[base | full]);
        continue;
      }
      detail::add_member_parents(dag, u, l.members, cm_.leaf_arg[base | first_pred_[a]]);
      for (unsigned t = a; t; t &= t - 1) {
        const int j = std::countr_zero(t);
        const unsigned q = cm_.link_arg[((std::size_t(i) * m_ + j) << m_) | pred_[j]];
        detail::add_member_parents(dag, l.members[j], l.members, q);
        dag.add_edge(u, l.members[j]);
      }
      T &= ~a;
    }
    for (int j = 0; j < m_; ++j)
      if (!((linked >> j) & 1U))
        detail::add_member_parents(dag, l.members[j], l.members,
                                   cm_.inner_arg[(std::size_t(j) << m_) | pred_[j]]);
    return dag;
  }

 private:
  const CoverMaxima& cm_;
  int m_;
  std::vector<unsigned> pred_;        // C-local predecessors of each member
  std::vector<unsigned> first_pred_;  // predecessors of the first member of each set A
};

struct Candidate {
  double value = -INFINITY;
  std::size_t cover_index = 0;
  std::size_t order_index = 0;
  bool better_than(const Candidate& o) const {
    if (value != o.value) return value > o.value;
    return std::tie(cover_index, order_index) < std::tie(o.cover_index, o.order_index);
  }
};

std::vector<int> nth_order(int m, std::size_t index) {
  std::vector<int> order(m);
  std::iota(order.begin(), order.end(), 0);
  for (std::size_t i = 0; i < index; ++i) std::next_permutation(order.begin(), order.end());
  return order;
}

}  // namespace

void check_cover_bound(const ScoreTable& table, int k, const char* option) {
  const int n = table.num_variables();
  if (n == 0) throw OptionError(std::string(option) + ": the score table has no variables");
  if (k < 0 || k >= n)
    throw OptionError(std::string(option) + " " + std::to_string(k) + ": the cover bound must be " +
                      "at least 0 and below the number of variables (" + std::to_string(n) + ")");
  if (k > detail::kMaxCoverBound)
    throw OptionError(std::string(option) + " " + std::to_string(k) + ": cover bounds above " +
                      std::to_string(detail::kMaxCoverBound) + " are not supported");
}

CoverBestResult best_dag_in_cover_class(const ScoreTable& table, int k) {
  check_cover_bound(table, k);
  const int n = table.num_variables();
  // Padding a cover keeps it a cover, so covers of size exactly k reach every DAG of D_k.
  const std::vector<VertexList> covers = detail::cover_sets(n, k, k);
  const Candidate best = tbb::parallel_reduce(
      tbb::blocked_range<std::size_t>(0, covers.size()), Candidate{},
      [&](const tbb::blocked_range<std::size_t>& range, Candidate acc) {
        for (std::size_t c = range.begin(); c != range.end(); ++c) {
          const CoverLocalScores local = detail::cover_local_scores(table, covers[c]);
          const CoverMaxima maxima(local);
          std::vector<int> order(k);
          std::iota(order.begin(), order.end(), 0);
          std::size_t index = 0;
          do {
            const Candidate cand{OrderDp(maxima, order).run(nullptr, nullptr), c, index++};
            if (cand.better_than(acc)) acc = cand;
          } while (std::next_permutation(order.begin(), order.end()));
        }
        return acc;
      },
      [](const Candidate& a, const Candidate& b) { return b.better_than(a) ? b : a; });
  if (best.value == -INFINITY)
    throw InputError("cover bound " + std::to_string(k) + ": no DAG whose moral graph has a " +
                     "vertex cover of size <= " + std::to_string(k) + " uses only parent sets " +
                     "of the table (required edges may need a larger cover)");
  const CoverLocalScores local = detail::cover_local_scores(table, covers[best.cover_index]);
  const CoverMaxima maxima(local);
  CoverBestResult result;
  result.dag = OrderDp(maxima, nth_order(k, best.order_index)).reconstruct(n);
  result.log_score = log_weight(table, result.dag);
  result.cover = minimum_moral_cover(result.dag, k).value();
  return result;
}

}  // namespace covey
