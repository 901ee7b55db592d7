#include "covey/chains/structure_chain.hpp"

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstring>
#include <limits>
#include <numbers>

#include "block_move.hpp"
#include "chain_testing.hpp"
#include "covey/core/error.hpp"
#include "move_kernels.hpp"

namespace covey {
namespace {

constexpr double kLn2 = std::numbers::ln2;
// Log Hastings factor that makes accept_change() accept every proposal whose parent sets are in
// the table: under rejection skipping the score ratio was accepted through the skip bound
// (docs/chains.md, "Rejection skipping"), so only the table, cycles and the restriction decide.
constexpr double kBoundAccepted = std::numeric_limits<double>::infinity();

std::uint64_t probability_threshold(double p) {
  if (p <= 0) return 0;
  if (p >= 1) return ~std::uint64_t{0};
  return static_cast<std::uint64_t>(std::ldexp(p, 64));
}

// Ancestor rows (docs/chains.md, "Ancestor sets"): W words a row when W > 0, known at compile
// time so that a row is built in registers and written once (a row written word by word and then
// read as wider vectors stalls store forwarding); W = 0 reads the word count `words` at run time.
template <int W>
int row_words(int words) {
  return W > 0 ? W : words;
}

// Two words of a row (GCC and Clang vector extension).
using Word2 = std::uint64_t __attribute__((vector_size(16)));

// row = the union over the parents p of a node (local mask `parents` over its candidates `cands`)
// of {p} and p's ancestor row.
template <int W>
void set_row_from_parents(std::uint64_t* row, const std::uint64_t* anc, int words,
                          const std::int32_t* cands, ParentMask parents) {
  if constexpr (W == 0) {
    std::fill(row, row + words, 0);
    for (ParentMask m = parents; m; m &= m - 1) {
      const int p = cands[std::countr_zero(m)];
      const std::uint64_t* ap = anc + std::size_t(p) * words;
      for (int k = 0; k < words; ++k) row[k] |= ap[k];
      row[p >> 6] |= std::uint64_t{1} << (p & 63);
    }
  } else if constexpr (W == 1) {
    std::uint64_t acc = 0;
    for (ParentMask m = parents; m; m &= m - 1) {
      const int p = cands[std::countr_zero(m)];
      acc |= anc[p] | (std::uint64_t{1} << p);
    }
    row[0] = acc;
  } else {
    // Pairs of words as vectors, loaded and stored whole (rows stored as words and read back
    // as vectors stall store forwarding); p's own bit is selected by a compare, not a branch.
    constexpr int kPairs = (W + 1) / 2;
    Word2 acc[kPairs] = {};
    for (ParentMask m = parents; m; m &= m - 1) {
      const int p = cands[std::countr_zero(m)];
      const std::uint64_t* ap = anc + std::size_t(p) * W;
      const Word2 own = Word2{} + (std::uint64_t{1} << (p & 63));
      const Word2 word = Word2{} + std::uint64_t(p >> 6);
      for (int k = 0; k < kPairs; ++k) {
        const Word2 index = Word2{std::uint64_t(2 * k), std::uint64_t(2 * k + 1)};
        Word2 bits;
        if (2 * k + 1 < W)
          std::memcpy(&bits, ap + 2 * k, sizeof bits);
        else
          bits = Word2{ap[2 * k], 0};
        acc[k] |= bits | (own & Word2(index == word));
      }
    }
    for (int k = 0; k < kPairs; ++k) {
      if (2 * k + 1 < W)
        std::memcpy(row + 2 * k, &acc[k], sizeof acc[k]);
      else
        row[2 * k] = acc[k][0];
    }
  }
}

// row |= add (one row of W words, or `words` when W = 0).
template <int W>
void or_row(std::uint64_t* row, const std::uint64_t* add, int words) {
  for (int k = 0; k < row_words<W>(words); ++k) row[k] |= add[k];
}

// Whether every bit of `sub` is in `row`.
template <int W>
bool row_contains(const std::uint64_t* row, const std::uint64_t* sub, int words) {
  std::uint64_t missing = 0;
  for (int k = 0; k < row_words<W>(words); ++k) missing |= sub[k] & ~row[k];
  return missing == 0;
}

// Calls f.template operator()<W>() with W the compile-time word count for 1 to 4 words (up to
// 256 variables), 0 beyond.
template <class F>
decltype(auto) with_row_words(int words, F&& f) {
  switch (words) {
    case 1:
      return f.template operator()<1>();
    case 2:
      return f.template operator()<2>();
    case 3:
      return f.template operator()<3>();
    case 4:
      return f.template operator()<4>();
    default:
      return f.template operator()<0>();
  }
}

}  // namespace

const char* move_name(Move move) {
  switch (move) {
    case Move::kAdd:
      return "add";
    case Move::kDelete:
      return "delete";
    case Move::kReverse:
      return "reverse";
    case Move::kRev:
      return "rev";
    case Move::kTeleport:
      return "teleport";
    case Move::kBlock:
      return "block";
  }
  return "?";
}

std::uint64_t MoveCounts::total_proposed() const {
  std::uint64_t t = 0;
  for (auto p : proposed) t += p;
  return t;
}

MoveCounts& MoveCounts::operator+=(const MoveCounts& other) {
  for (int m = 0; m < kNumMoves; ++m) {
    proposed[m] += other.proposed[m];
    accepted[m] += other.accepted[m];
  }
  return *this;
}

StructureChain::StructureChain(const ScoreTable& table, const ChainConfig& config)
    : StructureChain(table, config, nullptr) {}

StructureChain make_faulty_chain(const ScoreTable& table, const ChainConfig& config,
                                 const ChainFaults& faults) {
  return StructureChain(table, config, &faults);
}

StructureChain::StructureChain(const ScoreTable& table, const ChainConfig& config,
                               const ChainFaults* faults)
    : table_(&table),
      config_(config),
      faults_(faults ? std::make_unique<const ChainFaults>(*faults) : nullptr),
      faulty_moves_(faults ? faults->drop_hastings : 0),
      n_(table.num_variables()),
      words_(Dag::words_for(n_)) {
  if (config.rev_rate < 0 || config.teleport_rate < 0 || config.block_rate < 0 ||
      config.rev_rate + config.teleport_rate + config.block_rate > 1)
    throw OptionError(
        "move rates: {rev_rate}, {teleport_rate} and {block_rate} must be >= 0 with sum <= 1");
  if (config.teleport_rate > 0 && !config.teleport)
    throw OptionError("{teleport_rate} > 0 needs a teleport sampler ({teleport_cover})");
  // The DAG itself is kept for the class tests of teleports and cover limits (any n), and for
  // narrow tables always (dag() and the moves' checks read it).
  track_dag_ = n_ <= kMaxExactVariables || config.teleport || config.restriction;
  rev_threshold_ = probability_threshold(config.rev_rate);
  teleport_threshold_ = probability_threshold(config.rev_rate + config.teleport_rate);
  block_threshold_ =
      probability_threshold(config.rev_rate + config.teleport_rate + config.block_rate);
  mixed_kernels_ = config.rev_rate > 0 || config.teleport_rate > 0 || config.block_rate > 0;
  if (config.block_rate > 0 || config.block_size > 0)
    block_ = make_block_move(table, config, block_fault_of(faults_.get()));
  if (config.rev_rate > 0) rev_ = std::make_unique<RevTables>(table);
  if (!faults_ || !faults_->exact_local_moves) {
    screen_ = std::make_unique<ScreenScores>(table);
    if (!screen_->usable()) screen_.reset();
  }

  cand_.assign(std::size_t(n_) * kMaxCandidates, -1);
  for (int v = 0; v < n_; ++v) {
    const auto cands = table.candidates(v);
    for (std::size_t b = 0; b < cands.size(); ++b) {
      cand_[std::size_t(v) * kMaxCandidates + b] = cands[b];
      const int u = cands[b];
      pairs_.push_back({u, v, static_cast<std::int8_t>(b),
                        static_cast<std::int8_t>(table.candidate_position(u, v))});
    }
  }
  if (screen_) toggle_base_.assign(n_, ToggleBase{});
  local_.assign(n_, 0);
  score_.assign(n_, 0);
  anc_.assign(std::size_t(n_) * words_, 0);
  list_.assign(n_, 0);
  stack_.assign(n_, 0);
  stack_rest_.assign(n_, 0);
  mark_.assign(n_, 0);
  bits_a_.assign(words_, 0);
  bits_b_.assign(words_, 0);
  bits_c_.assign(words_, 0);
  bits_d_.assign(words_, 0);
  if (track_dag_) dag_ = Dag(n_);
  // Start at the empty graph when allowed; otherwise the caller must set a start state.
  for (int v = 0; v < n_; ++v) score_[v] = table.log_score(v, 0);
  if (config.skip_rejections) build_skip_bounds();
}

StructureChain::~StructureChain() = default;
StructureChain::StructureChain(StructureChain&&) noexcept = default;

bool StructureChain::empty_graph_allowed() const {
  for (int v = 0; v < n_; ++v)
    if (table_->find(v, 0) < 0) return false;
  return true;
}

// ---- State -------------------------------------------------------------------------------

void StructureChain::set_parents(std::span<const std::uint64_t> words, const std::string& what) {
  if (words.size() != std::size_t(n_) * words_)
    throw InputError(what + ": wrong number of parent words");
  std::vector<ParentMask> local(n_, 0);
  for (int v = 0; v < n_; ++v) {
    for (int w = 0; w < words_; ++w) {
      for (std::uint64_t m = words[std::size_t(v) * words_ + w]; m; m &= m - 1) {
        const int u = w * 64 + std::countr_zero(m);
        const int pos = u < n_ ? table_->candidate_position(v, u) : -1;
        if (pos < 0)
          throw InputError(what + ": edge " + (u < n_ ? table_->name(u) : std::to_string(u)) +
                           " -> " + table_->name(v) + " is not allowed by the score table");
        local[v] |= ParentMask{1} << pos;
      }
    }
  }
  load_state(local, what);
}

void StructureChain::set_dag(const Dag& dag, const std::string& what) {
  if (dag.size() != n_) throw InputError(what + ": wrong number of variables");
  std::vector<ParentMask> local(n_, 0);
  for (int v = 0; v < n_; ++v)
    if (!local_parent_mask(*table_, dag, v, local[v]))
      throw InputError(what + ": a parent of " + table_->name(v) +
                       " is not allowed by the score table");
  load_state(local, what);
}

void StructureChain::load_state(const std::vector<ParentMask>& local, const std::string& what) {
  std::vector<double> score(n_);
  for (int v = 0; v < n_; ++v) {
    const long idx = table_->find(v, local[v]);
    if (idx < 0)
      throw InputError(what + ": the parent set of " + table_->name(v) +
                       " is not in the score table (max in-degree or background knowledge)");
    score[v] = table_->log_scores(v)[idx];
  }
  const std::vector<ParentMask> old_local = local_;
  local_ = local;
  // Acyclicity: Kahn's algorithm over local masks.
  {
    std::vector<int> pending(n_, 0);
    std::vector<std::vector<int>> children(n_);
    for (int v = 0; v < n_; ++v)
      for (ParentMask m = local_[v]; m; m &= m - 1) {
        children[candidate(v, std::countr_zero(m))].push_back(v);
        ++pending[v];
      }
    std::vector<int> ready;
    for (int v = 0; v < n_; ++v)
      if (!pending[v]) ready.push_back(v);
    int placed = 0;
    while (!ready.empty()) {
      const int v = ready.back();
      ready.pop_back();
      ++placed;
      for (int c : children[v])
        if (--pending[c] == 0) ready.push_back(c);
    }
    if (placed != n_) {
      local_ = old_local;
      throw InputError(what + ": the graph has a directed cycle");
    }
  }
  if (track_dag_) {
    Dag next(n_);
    for (int v = 0; v < n_; ++v) set_local_parents(*table_, next, v, local_[v]);
    if (config_.restriction && !config_.restriction->contains(next)) {
      local_ = old_local;
      throw OptionError(what + ": the DAG lies outside the class of {cover_limit}");
    }
    dag_ = next;
  }
  score_ = score;
  num_edges_ = 0;
  for (ParentMask m : local_) num_edges_ += std::popcount(m);
  rebuild_ancestors();
}

// A teleport draw comes from the cover sampler of this table: acyclic, every parent set in the
// table, and inside any --cover-limit class (which must contain the teleport class). Teleports
// are the most expensive move, so they skip load_state's checks and allocations; a violated
// guarantee is an internal error, never a silent wrong state.
void StructureChain::load_teleport_draw(const Dag& next) {
  if (next.size() != n_) throw Error("teleport draw: wrong number of variables");
  for (int v = 0; v < n_; ++v) {
    ParentMask local = 0;
    const long idx = local_parent_mask(*table_, next, v, local) ? table_->find(v, local) : long{-1};
    if (idx < 0) throw Error("teleport draw: a parent set is not in the score table");
    local_[v] = local;
    score_[v] = table_->log_scores(v)[idx];
  }
  dag_ = next;
  num_edges_ = 0;
  for (ParentMask m : local_) num_edges_ += std::popcount(m);
  rebuild_ancestors();
}

void StructureChain::rebuild_ancestors() {
  for (int v = 0; v < n_; ++v) {
    mark_[v] = 1;
    list_[v] = v;
  }
  visit_marked_parents_first(n_, [&](int x) {
    std::uint64_t* a = anc(x);
    std::fill(a, a + words_, 0);
    for (ParentMask m = local_[x]; m; m &= m - 1) {
      const int p = candidate(x, std::countr_zero(m));
      a[p >> 6] |= std::uint64_t{1} << (p & 63);
      const std::uint64_t* ap = anc(p);
      for (int w = 0; w < words_; ++w) a[w] |= ap[w];
    }
  });
}

int StructureChain::list_descendants(int root, bool include_root) {
  // Branch-free: whether w is listed is a coin flip to the branch predictor.
  const std::uint64_t* word = anc_.data() + (root >> 6);
  const int shift = root & 63;
  int count = 0;
  for (int w = 0; w < n_; ++w, word += words_) {
    list_[count] = w;
    count += int((*word >> shift) & 1U) | int(include_root && w == root);
  }
  return count;
}

int StructureChain::mark_descendants(int root, bool include_root) {
  const int count = list_descendants(root, include_root);
  for (int i = 0; i < count; ++i) mark_[list_[i]] = 1;
  return count;
}

void StructureChain::recompute_ancestors_below(int root) {
  // Only root and its descendants can have ancestor sets that depend on root's parents; their
  // ancestor sets are rebuilt parents-first, the others are unchanged.
  if (words_ == 1 && track_dag_) return rebuild_rows_one_word(root);
  const int count = mark_descendants(root, true);
  with_row_words(words_, [&]<int W>() {
    visit_marked_parents_first(count, [&](int x) {
      set_row_from_parents<W>(anc(x), anc_.data(), words_, &cand_[std::size_t(x) * kMaxCandidates],
                              local_[x]);
    });
  });
}

void StructureChain::rebuild_rows_one_word(int root) {
  // n <= 64: the rows to rebuild and the nodes on the depth-first stack as masks, and the parents
  // from the DAG's global masks (dag_, kept in step), so the parents-first order needs no marks
  // and no branch per parent.
  std::uint64_t pending = std::uint64_t{1} << root;
  for (int w = 0; w < n_; ++w) pending |= ((anc_[w] >> root) & 1U) << w;
  std::uint64_t on_stack = 0;
  int stack[kMaxExactVariables];
  int top = 0;
  while (pending) {
    if (top == 0) {
      stack[top++] = std::countr_zero(pending);
      on_stack = std::uint64_t{1} << stack[0];
    }
    const int x = stack[top - 1];
    const std::uint64_t parents = dag_.parent_mask(x);
    if (const std::uint64_t waiting = parents & pending & ~on_stack) {
      const int p = std::countr_zero(waiting);
      stack[top++] = p;
      on_stack |= std::uint64_t{1} << p;
      continue;
    }
    std::uint64_t row = 0;
    for (std::uint64_t m = parents; m; m &= m - 1) {
      const int p = std::countr_zero(m);
      row |= anc_[p] | (std::uint64_t{1} << p);
    }
    anc_[x] = row;
    pending &= ~(std::uint64_t{1} << x);
    on_stack &= ~(std::uint64_t{1} << x);
    --top;
  }
}

void StructureChain::add_ancestors_below(int u, int v) {
  // v's new ancestors are u and anc(u), and so are those of every descendant of v. When v had
  // them all already (u was an ancestor of v), no ancestor set changes.
  std::uint64_t* au = bits_d_.data();
  std::copy(anc(u), anc(u) + words_, au);
  au[u >> 6] |= std::uint64_t{1} << (u & 63);
  with_row_words(words_, [&]<int W>() {
    if (row_contains<W>(anc(v), au, words_)) return;
    const int count = list_descendants(v, true);
    for (int i = 0; i < count; ++i) or_row<W>(anc(list_[i]), au, words_);
  });
}

bool StructureChain::ancestors_of_parents_equal(int v) {
  with_row_words(words_, [&]<int W>() {
    set_row_from_parents<W>(bits_d_.data(), anc_.data(), words_,
                            &cand_[std::size_t(v) * kMaxCandidates], local_[v]);
  });
  return std::equal(bits_d_.begin(), bits_d_.end(), anc(v));
}

double StructureChain::log_score() const {
  double total = 0;
  for (int v = 0; v < n_; ++v) total += score_[v];
  return total;
}

void StructureChain::write_parents(std::uint64_t* out) const {
  std::fill(out, out + std::size_t(n_) * words_, 0);
  for (int v = 0; v < n_; ++v)
    for (ParentMask m = local_[v]; m; m &= m - 1) {
      const int u = candidate(v, std::countr_zero(m));
      out[std::size_t(v) * words_ + (u >> 6)] |= std::uint64_t{1} << (u & 63);
    }
}

std::vector<std::uint64_t> StructureChain::parents_words() const {
  std::vector<std::uint64_t> out(std::size_t(n_) * words_);
  write_parents(out.data());
  return out;
}

Dag StructureChain::dag() const {
  Dag d(n_);
  for (int v = 0; v < n_; ++v) set_local_parents(*table_, d, v, local_[v]);
  return d;
}

bool StructureChain::has_edge(int from, int to) const {
  const int pos = table_->candidate_position(to, from);
  return pos >= 0 && ((local_[to] >> pos) & 1U);
}

bool StructureChain::in_restriction(const Dag& dag) const {
  return !config_.restriction || config_.restriction->contains(dag);
}

bool StructureChain::check_invariants() const {
  std::uint64_t edges = 0;
  for (int v = 0; v < n_; ++v) {
    edges += std::popcount(local_[v]);
    if (table_->log_score(v, local_[v]) != score_[v]) return false;
    ParentMask tracked = 0;
    if (track_dag_ && (!local_parent_mask(*table_, dag_, v, tracked) || tracked != local_[v]))
      return false;
  }
  if (edges != num_edges_) return false;
  // Ancestors by fixpoint iteration (independent of the incremental updates).
  std::vector<std::uint64_t> a(anc_.size(), 0);
  for (bool changed = true; changed;) {
    changed = false;
    for (int v = 0; v < n_; ++v)
      for (ParentMask m = local_[v]; m; m &= m - 1) {
        const int p = candidate(v, std::countr_zero(m));
        for (int w = 0; w < words_; ++w) {
          std::uint64_t add = a[std::size_t(p) * words_ + w];
          if (w == (p >> 6)) add |= std::uint64_t{1} << (p & 63);
          std::uint64_t& dst = a[std::size_t(v) * words_ + w];
          if ((dst | add) != dst) {
            dst |= add;
            changed = true;
          }
        }
      }
  }
  for (int v = 0; v < n_; ++v)
    if (test(&a[std::size_t(v) * words_], v)) return false;  // cycle
  if (skip_ && !skip_bounds_consistent()) return false;
  return a == anc_;
}

// ---- Steps -------------------------------------------------------------------------------

bool StructureChain::step(Rng& rng) {
  if (skip_) return quiet_steps(rng, 1) == 0 && event_step(rng);
  if (mixed_kernels_) {
    const std::uint64_t r = rng();
    if (r < rev_threshold_) {
      rev_move(rng);
      return false;
    }
    if (r < teleport_threshold_) return teleport(rng);
    if (r < block_threshold_) return block_move(rng);
  }
  local_move(rng);
  return false;
}

void StructureChain::local_move(Rng& rng) {
  local_move_on_slot(rng, uniform_below(rng, 2 * pairs_.size()), false);
}

void StructureChain::local_move_on_slot(Rng& rng, std::uint64_t pick, bool bounded) {
  const Pair& pair = pairs_[pick >> 1];
  const ParentMask bit = ParentMask{1} << pair.pos_in_to;
  if (!(local_[pair.to] & bit))
    propose_add(rng, pair.from, pair.to, bit, bounded);  // both coin sides: q(add) = 1/|P|
  else if (pick & 1)
    propose_delete(rng, pair.from, pair.to, bit, bounded);  // q(delete) = 1/(2|P|)
  else
    propose_reverse(rng, pair, bit, bounded);  // q(reverse) = 1/(2|P|) both ways
}

// Metropolis-Hastings decision for new parent sets of one or two nodes, with log Hastings factor
// `log_hastings`; fills in their exact scores. A set not in the table is a rejection without a
// draw. With the screening scores, most rejections are decided on their quantised levels
// (move_kernels.hpp).
template <std::size_t N>
bool StructureChain::accept_change(Rng& rng, NodeChange (&change)[N], double log_hastings) {
  const auto exact_ratio = [&] {
    double log_ratio = log_hastings;
    for (NodeChange& c : change) {
      if (screen_) c.score = screen_->exact_at(c.at);
      log_ratio += c.score - score_[c.v];
    }
    return log_ratio;
  };
  if (!screen_) {
    for (NodeChange& c : change) {
      const long idx = table_->find(c.v, c.next);
      if (idx < 0) return false;
      c.score = table_->log_scores(c.v)[idx];
    }
    return accept(rng, exact_ratio());
  }
  double screened = log_hastings, margin = 0;
  for (NodeChange& c : change) {
    ToggleBase& base = toggle_base_[c.v];
    if (base.set != local_[c.v]) screen_->toggle_base(c.v, local_[c.v], base);
    const ParentMask toggled = c.next ^ local_[c.v];
    // One toggled parent in every proposal of an acyclic chain. A state with a 2-cycle (only the
    // tests' deliberately broken block move makes one) can propose its own set: look it up.
    c.at = std::has_single_bit(toggled) ? screen_->toggled_position(base, toggled)
                                        : screen_->position(c.v, c.next);
    double term;
    if (!screen_->screened_term(c.v, c.at, score_[c.v], term)) return false;
    screened += term;
    margin += screen_->margin(c.v);
  }
  return screened_accept(rng, screened, margin, exact_ratio);
}

void StructureChain::propose_add(Rng& rng, int u, int v, ParentMask bit, bool bounded) {
  ++counts_.proposed[int(Move::kAdd)];
  if (test(anc(u), v)) return;  // v ~> u already: the edge would close a cycle
  NodeChange change[1] = {{v, local_[v] | bit, 0}};
  // Hastings factor q(G'->G)/q(G->G') = (1/(2|P|)) / (1/|P|) = 1/2.
  const double log_hastings = dropped(Move::kAdd) ? 0.0 : -kLn2;
  if (!accept_change(rng, change, bounded ? kBoundAccepted : log_hastings)) return;
  const ParentMask next = change[0].next;
  const double s = change[0].score;
  if (track_dag_) {  // always on under a restriction (checked in the constructor)
    dag_.add_edge(u, v);
    if (!in_restriction(dag_)) {
      dag_.remove_edge(u, v);
      return;
    }
  }
  ++counts_.accepted[int(Move::kAdd)];
  local_[v] = next;
  score_[v] = s;
  ++num_edges_;
  add_ancestors_below(u, v);
}

void StructureChain::propose_delete(Rng& rng, int u, int v, ParentMask bit, bool bounded) {
  ++counts_.proposed[int(Move::kDelete)];
  NodeChange change[1] = {{v, local_[v] & ~bit, 0}};
  // Hastings factor (1/|P|) / (1/(2|P|)) = 2.
  const double log_hastings = dropped(Move::kDelete) ? 0.0 : kLn2;
  if (!accept_change(rng, change, bounded ? kBoundAccepted : log_hastings)) return;
  const ParentMask next = change[0].next;
  const double s = change[0].score;
  if (track_dag_) {
    dag_.remove_edge(u, v);
    if (!in_restriction(dag_)) {
      dag_.add_edge(u, v);
      return;
    }
  }
  ++counts_.accepted[int(Move::kDelete)];
  local_[v] = next;
  score_[v] = s;
  --num_edges_;
  // Often u stays an ancestor of v through another parent: then no ancestor set changes.
  if (!ancestors_of_parents_equal(v)) recompute_ancestors_below(v);
}

void StructureChain::propose_reverse(Rng& rng, const Pair& pair, ParentMask bit, bool bounded) {
  ++counts_.proposed[int(Move::kReverse)];
  const int u = pair.from, v = pair.to;
  if (pair.pos_in_from < 0) return;  // v may never be a parent of u
  // Reversing u -> v closes a cycle iff another path u ~> v exists, i.e. u is an ancestor of
  // another parent of v.
  for (ParentMask m = local_[v] & ~bit; m; m &= m - 1)
    if (test(anc(candidate(v, std::countr_zero(m))), u)) return;
  NodeChange change[2] = {{v, local_[v] & ~bit, 0},
                          {u, local_[u] | (ParentMask{1} << pair.pos_in_from), 0}};
  // Symmetric proposal: the reverse move picks (v, u) and tails with the same probability.
  if (!accept_change(rng, change, bounded ? kBoundAccepted : 0.0)) return;
  const ParentMask next_v = change[0].next, next_u = change[1].next;
  const double s_v = change[0].score, s_u = change[1].score;
  if (track_dag_) {
    dag_.remove_edge(u, v);
    dag_.add_edge(v, u);
    if (!in_restriction(dag_)) {
      dag_.remove_edge(v, u);
      dag_.add_edge(u, v);
      return;
    }
  }
  ++counts_.accepted[int(Move::kReverse)];
  local_[v] = next_v;
  local_[u] = next_u;
  score_[v] = s_v;
  score_[u] = s_u;
  // Every node whose ancestors change (v, u and their descendants) is u or below u before the
  // move: v was a descendant of u.
  recompute_ancestors_below(u);
}

bool StructureChain::teleport(Rng& rng) {
  ++counts_.proposed[int(Move::kTeleport)];
  const TeleportSource& source = *config_.teleport;
  const bool drop = dropped(Move::kTeleport);
  // With proposal weights w_p = w the acceptance probability is 1[G in D_k]: decide before
  // drawing, so a rejected teleport costs only the membership test.
  if (!drop && !source.support().contains(dag_)) return false;
  const Dag next = source.draw(rng);
  if (drop) {
    const double log_ratio = log_weight(*table_, next) - log_score();
    if (!accept(rng, log_ratio) || !in_restriction(next)) return false;
  }
  load_teleport_draw(next);
  ++counts_.accepted[int(Move::kTeleport)];
  return !drop;
}

}  // namespace covey
