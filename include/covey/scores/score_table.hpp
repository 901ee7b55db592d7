#pragma once
// The local score table: for each node v and each allowed parent set S, s_v(S) = log f_v(S)
// (log marginal likelihood plus log modular prior factor). Parent sets not in the table are not
// allowed (weight 0). This is the one input of every engine.
//
// Each node has an ordered list of candidate parents (at most 64); a parent set is stored as a
// "local mask" over that list, so lookups are O(1) whatever the number of variables. Engines for
// n <= 64 may use "global masks" (bit u = variable u) through to_global()/to_local().
#include <cstdint>
#include <map>
#include <span>
#include <string>
#include <vector>

#include "covey/core/attributes.hpp"
#include "covey/data/variables.hpp"

namespace covey {

using ParentMask = std::uint64_t;
inline constexpr int kMaxCandidates = 64;

// Provenance of a table: how the scores were made. Stored with the table and shown by `info`.
struct ScoreMetadata {
  std::string score = "imported";  // "bdeu", "bge" or "imported"
  std::string prior = "uniform";   // "uniform", "edge-penalty", "parent-count"
  Attributes parameters;           // score and prior parameters, e.g. equivalent_sample_size
  int max_indegree = -1;           // -1: not bounded by construction
  long long num_rows = -1;         // rows of data scored; -1 when imported
  std::string source;              // data file the table was made from
  std::string command_line;
  std::string covey_version;
};

// The scores of one node, as handed to the ScoreTable constructor.
struct NodeScores {
  std::vector<int> candidates;     // candidate parents (variable indices, distinct)
  std::vector<ParentMask> masks;   // allowed parent sets, as masks over `candidates`
  std::vector<double> log_scores;  // one finite log score per mask
};

class ScoreTable {
 public:
  ScoreTable() = default;
  // Validates (candidates distinct and not the node itself, masks within the candidate list and
  // distinct, scores finite, every node with at least one allowed set) and sorts each node's
  // sets canonically: by size, then by mask. Throws InputError on violation.
  ScoreTable(std::vector<Variable> variables, std::vector<NodeScores> nodes,
             ScoreMetadata metadata = {});

  int num_variables() const { return static_cast<int>(variables_.size()); }
  const std::vector<Variable>& variables() const { return variables_; }
  const std::string& name(int v) const { return variables_[v].name; }
  const ScoreMetadata& metadata() const { return metadata_; }
  ScoreMetadata& metadata() { return metadata_; }

  std::span<const int> candidates(int v) const { return nodes_[v].candidates; }
  // Position of u in v's candidate list, or -1 when u can never be a parent of v.
  int candidate_position(int v, int u) const { return position_[std::size_t(v) * n_ + u]; }

  // Allowed parent sets of v in canonical order, and their log scores.
  std::span<const ParentMask> parent_sets(int v) const { return nodes_[v].masks; }
  std::span<const double> log_scores(int v) const { return nodes_[v].log_scores; }
  std::size_t num_parent_sets(int v) const { return nodes_[v].masks.size(); }
  std::size_t total_parent_sets() const;
  int max_parent_set_size() const { return max_set_size_; }

  // Index of a local mask among v's parent sets, or -1 when not allowed. O(1) expected.
  long find(int v, ParentMask local) const;
  // Log score of a local mask; -infinity when the set is not allowed.
  double log_score(int v, ParentMask local) const;

  // Conversions for n <= 64. to_local() returns false when a parent is not a candidate.
  ParentMask to_global(int v, ParentMask local) const;
  bool to_local(int v, ParentMask global, ParentMask& local) const;
  // Log score of a global mask (n <= 64); -infinity when not allowed.
  double log_score_global(int v, ParentMask global) const;
  // All of v's allowed parent sets as global masks (n <= 64), in canonical order.
  std::vector<ParentMask> global_parent_sets(int v) const;

  // Parent variable indices of a local mask, ascending.
  std::vector<int> parents_of(int v, ParentMask local) const;

  // A 64-bit digest of the variables, candidates, parent sets and exact score bits: files derived
  // from a table (samplers, traces) store it to detect being used with a different table.
  std::uint64_t fingerprint() const;

  // Bytes held by the table, and the estimate for a table with these counts (checked before
  // building large tables).
  std::size_t memory_bytes() const;
  static std::size_t estimate_bytes(int num_variables, std::size_t total_parent_sets);

 private:
  struct Node {
    std::vector<int> candidates;
    std::vector<ParentMask> masks;
    std::vector<double> log_scores;
    std::vector<std::int32_t> hash_slots;  // open addressing: index into masks, -1 empty
    int hash_shift = 64;
  };
  void build_index(Node& node);

  int n_ = 0;
  int max_set_size_ = 0;
  std::vector<Variable> variables_;
  std::vector<Node> nodes_;
  std::vector<std::int16_t> position_;  // n*n: candidate position or -1
  ScoreMetadata metadata_;
};

// A table fingerprint as stored in files: 16 lowercase hex digits; and back, with InputError
// naming `path` when the text is not one.
std::string format_fingerprint(std::uint64_t fingerprint);
std::uint64_t parse_fingerprint(const std::string& text, const std::string& path);

}  // namespace covey
