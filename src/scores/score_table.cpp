#include "covey/scores/score_table.hpp"

#include <algorithm>
#include <bit>
#include <cinttypes>
#include <cmath>
#include <cstdio>
#include <numeric>
#include <unordered_set>

#include "covey/core/error.hpp"

namespace covey {
namespace {

constexpr std::uint64_t kHashMultiplier = 0x9E3779B97F4A7C15ULL;

std::size_t slot_of(ParentMask mask, int shift) {
  return shift >= 64 ? 0 : static_cast<std::size_t>((mask * kHashMultiplier) >> shift);
}

bool canonical_less(ParentMask a, ParentMask b) {
  const int pa = std::popcount(a), pb = std::popcount(b);
  return pa != pb ? pa < pb : a < b;
}

}  // namespace

ScoreTable::ScoreTable(std::vector<Variable> variables, std::vector<NodeScores> nodes,
                       ScoreMetadata metadata)
    : n_(static_cast<int>(variables.size())),
      variables_(std::move(variables)),
      metadata_(std::move(metadata)) {
  if (static_cast<int>(nodes.size()) != n_)
    throw InputError("score table: " + std::to_string(nodes.size()) + " node entries for " +
                     std::to_string(n_) + " variables");
  position_.assign(std::size_t(n_) * n_, -1);
  nodes_.resize(n_);
  for (int v = 0; v < n_; ++v) {
    NodeScores& in = nodes[v];
    const std::string who = "score table, node '" + variables_[v].name + "'";
    if (in.candidates.size() > std::size_t(kMaxCandidates))
      throw InputError(who + ": more than 64 candidate parents");
    if (in.masks.size() != in.log_scores.size())
      throw InputError(who + ": masks and scores differ in number");
    if (in.masks.empty()) throw InputError(who + ": no allowed parent set");
    for (std::size_t i = 0; i < in.candidates.size(); ++i) {
      const int u = in.candidates[i];
      if (u < 0 || u >= n_ || u == v) throw InputError(who + ": invalid candidate parent");
      if (position_[std::size_t(v) * n_ + u] >= 0)
        throw InputError(who + ": candidate parent listed twice");
      position_[std::size_t(v) * n_ + u] = static_cast<std::int16_t>(i);
    }
    const ParentMask allowed_bits =
        in.candidates.size() == 64 ? ~ParentMask{0} : (ParentMask{1} << in.candidates.size()) - 1;
    std::vector<std::size_t> order(in.masks.size());
    std::iota(order.begin(), order.end(), 0);
    std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
      return canonical_less(in.masks[a], in.masks[b]);
    });
    Node& node = nodes_[v];
    node.candidates = std::move(in.candidates);
    node.masks.reserve(order.size());
    node.log_scores.reserve(order.size());
    for (std::size_t i : order) {
      const ParentMask m = in.masks[i];
      if (m & ~allowed_bits) throw InputError(who + ": parent set outside the candidate list");
      if (!node.masks.empty() && node.masks.back() == m)
        throw InputError(who + ": parent set listed twice");
      if (!std::isfinite(in.log_scores[i])) throw InputError(who + ": non-finite log score");
      node.masks.push_back(m);
      node.log_scores.push_back(in.log_scores[i]);
      max_set_size_ = std::max(max_set_size_, std::popcount(m));
    }
    build_index(node);
  }
}

void ScoreTable::build_index(Node& node) {
  std::size_t capacity = 1;
  int bits = 0;
  while (capacity < 2 * node.masks.size()) capacity <<= 1, ++bits;
  node.hash_shift = 64 - bits;
  node.hash_slots.assign(capacity, -1);
  const std::size_t wrap = capacity - 1;
  for (std::size_t i = 0; i < node.masks.size(); ++i) {
    std::size_t s = slot_of(node.masks[i], node.hash_shift);
    while (node.hash_slots[s] >= 0) s = (s + 1) & wrap;
    node.hash_slots[s] = static_cast<std::int32_t>(i);
  }
}

long ScoreTable::find(int v, ParentMask local) const {
  const Node& node = nodes_[v];
  const std::size_t wrap = node.hash_slots.size() - 1;
  std::size_t s = slot_of(local, node.hash_shift);
  for (;;) {
    const std::int32_t idx = node.hash_slots[s];
    if (idx < 0) return -1;
    if (node.masks[idx] == local) return idx;
    s = (s + 1) & wrap;
  }
}

double ScoreTable::log_score(int v, ParentMask local) const {
  const long idx = find(v, local);
  return idx < 0 ? -INFINITY : nodes_[v].log_scores[idx];
}

std::size_t ScoreTable::total_parent_sets() const {
  std::size_t total = 0;
  for (const Node& node : nodes_) total += node.masks.size();
  return total;
}

ParentMask ScoreTable::to_global(int v, ParentMask local) const {
  ParentMask global = 0;
  const auto& cand = nodes_[v].candidates;
  for (ParentMask m = local; m; m &= m - 1) global |= ParentMask{1} << cand[std::countr_zero(m)];
  return global;
}

bool ScoreTable::to_local(int v, ParentMask global, ParentMask& local) const {
  local = 0;
  for (ParentMask m = global; m; m &= m - 1) {
    const int u = std::countr_zero(m);
    if (u >= n_) return false;
    const int pos = candidate_position(v, u);
    if (pos < 0) return false;
    local |= ParentMask{1} << pos;
  }
  return true;
}

double ScoreTable::log_score_global(int v, ParentMask global) const {
  ParentMask local;
  return to_local(v, global, local) ? log_score(v, local) : -INFINITY;
}

std::vector<ParentMask> ScoreTable::global_parent_sets(int v) const {
  std::vector<ParentMask> out;
  out.reserve(nodes_[v].masks.size());
  for (ParentMask m : nodes_[v].masks) out.push_back(to_global(v, m));
  return out;
}

std::vector<int> ScoreTable::parents_of(int v, ParentMask local) const {
  std::vector<int> out;
  for (ParentMask m = local; m; m &= m - 1)
    out.push_back(nodes_[v].candidates[std::countr_zero(m)]);
  std::sort(out.begin(), out.end());
  return out;
}

std::uint64_t ScoreTable::fingerprint() const {
  // FNV-1a over 64-bit words; stable across platforms with IEEE doubles.
  std::uint64_t h = 0xcbf29ce484222325ULL;
  auto mix = [&h](std::uint64_t word) {
    for (int i = 0; i < 8; ++i) {
      h ^= (word >> (8 * i)) & 0xff;
      h *= 0x100000001b3ULL;
    }
  };
  mix(static_cast<std::uint64_t>(n_));
  for (int v = 0; v < n_; ++v) {
    for (char c : variables_[v].name) mix(static_cast<unsigned char>(c));
    mix(nodes_[v].candidates.size());
    for (int c : nodes_[v].candidates) mix(static_cast<std::uint64_t>(c));
    mix(nodes_[v].masks.size());
    for (std::size_t i = 0; i < nodes_[v].masks.size(); ++i) {
      mix(nodes_[v].masks[i]);
      mix(std::bit_cast<std::uint64_t>(nodes_[v].log_scores[i]));
    }
  }
  return h;
}

std::size_t ScoreTable::memory_bytes() const {
  std::size_t bytes = position_.size() * sizeof(std::int16_t);
  for (const Node& node : nodes_)
    bytes += node.candidates.size() * sizeof(int) +
             node.masks.size() * (sizeof(ParentMask) + sizeof(double)) +
             node.hash_slots.size() * sizeof(std::int32_t);
  return bytes;
}

std::size_t ScoreTable::estimate_bytes(int num_variables, std::size_t total_parent_sets) {
  // masks + scores + hash slots (load <= 1/2, so up to 4 slots per set) + position matrix.
  return total_parent_sets * (sizeof(ParentMask) + sizeof(double) + 4 * sizeof(std::int32_t)) +
         std::size_t(num_variables) * num_variables * sizeof(std::int16_t);
}

std::string format_fingerprint(std::uint64_t fingerprint) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%016" PRIx64, fingerprint);
  return buf;
}

std::uint64_t parse_fingerprint(const std::string& text, const std::string& path) {
  std::size_t used = 0;
  std::uint64_t value = 0;
  try {
    value = std::stoull(text, &used, 16);
  } catch (const std::exception&) {
    used = 0;
  }
  if (text.empty() || used != text.size())
    throw InputError(path + ": corrupt table_fingerprint attribute '" + text + "'");
  return value;
}

}  // namespace covey
