#include "covey/graph/enumerate.hpp"

#include <bit>
#include <cmath>
#include <vector>

#include "covey/core/error.hpp"

namespace covey {
namespace {

class LayerEnumerator {
 public:
  LayerEnumerator(int n, const ParentSetFilter& allowed,
                  const std::function<void(const Dag&)>& visit)
      : n_(n), visit_(visit), dag_(n), options_(n) {
    // Each vertex's allowed parent sets, listed once (2^(n-1) candidates each for n <= 8).
    for (int v = 0; v < n; ++v) {
      const std::uint64_t others = ((std::uint64_t{1} << n) - 1) & ~(std::uint64_t{1} << v);
      for (std::uint64_t s = others;; s = (s - 1) & others) {
        if (allowed(v, s)) options_[v].push_back(s);
        if (s == 0) break;
      }
    }
  }

  std::uint64_t run() {
    const std::uint64_t all = (std::uint64_t{1} << n_) - 1;
    for (std::uint64_t sinks = all; sinks; sinks = (sinks - 1) & all) layer(all & ~sinks, sinks);
    return count_;
  }

 private:
  // `layer` holds the vertices placed last (current sinks of the placed part); `above` the
  // vertices not yet placed. Choose the next layer `next` (sinks of `above`), then parent sets
  // for `layer` inside `above` whose union covers `next`.
  void layer(std::uint64_t above, std::uint64_t current) {
    if (above == 0) {
      assign(current, 0, 0, [&] { emit(); });
      return;
    }
    for (std::uint64_t next = above; next; next = (next - 1) & above)
      assign(current, above, next, [&, above, next] { layer(above & ~next, next); });
  }

  // Gives each vertex of `verts` an allowed parent set inside `within`, so that together they
  // contain `need`; then calls `then`.
  template <class Then>
  void assign(std::uint64_t verts, std::uint64_t within, std::uint64_t need, const Then& then) {
    if (verts == 0) {
      if (need == 0) then();
      return;
    }
    const int v = std::countr_zero(verts);
    const std::uint64_t rest = verts & (verts - 1);
    for (std::uint64_t s : options_[v]) {
      if (s & ~within) continue;
      // The last vertex must finish the cover.
      if (rest == 0 && (need & ~s)) continue;
      dag_.parent_mask(v) = s;
      assign(rest, within, need & ~s, then);
    }
    dag_.parent_mask(v) = 0;
  }

  void emit() {
    ++count_;
    visit_(dag_);
  }

  int n_;
  const std::function<void(const Dag&)>& visit_;
  Dag dag_;
  std::vector<std::vector<std::uint64_t>> options_;
  std::uint64_t count_ = 0;
};

}  // namespace

std::uint64_t for_each_dag(int n, const ParentSetFilter& allowed,
                           const std::function<void(const Dag&)>& visit) {
  if (n < 0 || n > 8) throw InputError("DAG enumeration supports 0 to 8 variables");
  if (n == 0) {
    visit(Dag(0));
    return 1;
  }
  return LayerEnumerator(n, allowed, visit).run();
}

std::uint64_t for_each_dag(const ScoreTable& table,
                           const std::function<void(const Dag&, double)>& visit) {
  const int n = table.num_variables();
  return for_each_dag(
      n, [&](int v, std::uint64_t s) { return table.log_score_global(v, s) > -INFINITY; },
      [&](const Dag& dag) { visit(dag, log_weight(table, dag)); });
}

}  // namespace covey
