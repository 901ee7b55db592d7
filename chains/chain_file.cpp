// Chain-run files: writer (chains/chain_file_writer.hpp) and reader
// (include/covey/chains/chain_run_file.hpp). Layout: docs/file-formats.md, "Chain runs".
#include <fcntl.h>
#include <signal.h>
#include <sys/resource.h>
#include <unistd.h>

#include <algorithm>
#include <bit>
#include <cerrno>
#include <chrono>
#include <cinttypes>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <limits>
#include <optional>

#include "chain_file_writer.hpp"
#include "chain_options_json.hpp"
#include "core/attributes_json.hpp"
#include "core/h5.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/core/version.hpp"
#include "covey/graph/dag.hpp"

namespace covey {
namespace chain_file {
namespace {

std::uint64_t unix_time_ms() {
  return static_cast<std::uint64_t>(std::chrono::duration_cast<std::chrono::milliseconds>(
                                        std::chrono::system_clock::now().time_since_epoch())
                                        .count());
}

// Rows of draws: about 512 KiB of raw words per chunk.
std::size_t draw_chunk_rows(std::size_t width) {
  return std::max<std::size_t>(16, 65536 / std::max<std::size_t>(width, 1));
}

std::vector<std::uint64_t> pack_text(const std::string& text) {
  if (text.size() > (kRngWords - 1) * 8)
    throw Error("random-stream state too long for the checkpoint record");
  std::vector<std::uint64_t> out(kRngWords, 0);
  out[0] = text.size();
  std::memcpy(out.data() + 1, text.data(), text.size());
  return out;
}

std::string unpack_text(const std::vector<std::uint64_t>& words, const std::string& path) {
  if (words.size() != kRngWords || words[0] > (kRngWords - 1) * 8)
    throw InputError(path + ": corrupt random-stream record");
  std::string text(words[0], '\0');
  std::memcpy(text.data(), words.data() + 1, text.size());
  return text;
}

std::vector<std::uint64_t> counts_row(const ChainCheckpoint& s) {
  std::vector<std::uint64_t> row;
  row.reserve(kCountsWidth);
  row.push_back(s.steps);
  row.push_back(s.regenerations);
  for (auto p : s.counts.proposed) row.push_back(p);
  for (auto a : s.counts.accepted) row.push_back(a);
  return row;
}

void replace_attr(H5::H5Object& obj, const std::string& name, const std::string& value) {
  if (obj.attrExists(name)) obj.removeAttr(name);
  h5::set_attr(obj, name, value);
}

// Scalar options as attributes of their own, for h5dump readers; `options` holds them all.
void write_option_attributes(H5::H5File& file, const nlohmann::json& options) {
  for (const auto& [key, value] : options.items()) {
    const std::string name = "option_" + key;
    if (value.is_string())
      h5::set_attr(file, name, value.get<std::string>());
    else if (value.is_boolean())
      h5::set_attr(file, name, static_cast<long long>(value.get<bool>()));
    else if (value.is_number_unsigned() &&
             value.get<std::uint64_t>() > std::uint64_t(std::numeric_limits<long long>::max()))
      h5::set_attr(file, name, std::to_string(value.get<std::uint64_t>()));
    else if (value.is_number_integer())
      h5::set_attr(file, name, value.get<long long>());
    else if (value.is_number_float())
      h5::set_attr(file, name, value.get<double>());
  }
}

void append_blocks(H5::H5File& file, const std::vector<ChainBlock>& blocks, std::uint64_t steps,
                   double elapsed_seconds) {
  const long long chains = h5::get_attr_int(file, "num_chains");
  if (static_cast<long long>(blocks.size()) != chains)
    throw Error("checkpoint: one block per chain is needed");
  const std::size_t width = std::size_t(h5::get_attr_int(file, "num_variables")) *
                            std::size_t(h5::get_attr_int(file, "words_per_node"));
  std::uint64_t draws = 0;
  for (int c = 0; c < chains; ++c) {
    const ChainBlock& b = blocks[c];
    H5::Group g = file.openGroup(chain_group_name(c));
    h5::append_rows(g, kDraws, b.draws, width);
    h5::append_series(g, kLogScores, b.log_scores);
    h5::append_series(g, kDrawSteps, b.draw_steps);
    h5::append_series(g, kRegenerations, b.regenerations);
    h5::append_rows(g, kStateParents, b.state.parents, width);
    h5::append_rows(g, kStateRng, pack_text(b.state.rng_state), kRngWords);
    h5::append_rows(g, kStateCounts, counts_row(b.state), kCountsWidth);
    if (g.nameExists(kStateSkipWait))
      h5::append_rows(
          g, kStateSkipWait,
          std::vector<std::uint64_t>{b.state.skip_wait ? 1U : 0U, b.state.skip_wait.value_or(0)},
          2);
    const std::uint64_t rows = h5::num_rows(g, kDraws);
    if (c > 0 && rows != draws) throw Error("checkpoint: chains have different draw counts");
    draws = rows;
  }
  // The checkpoint record last: the reader trusts the row counts it names.
  H5::Group root = file.openGroup("/");
  h5::append_rows(
      root, kCheckpoints,
      {steps, draws, unix_time_ms(), static_cast<std::uint64_t>(elapsed_seconds * 1000)},
      kCheckpointWidth);
}

// The root attributes a run file and a manifest share: what the file is, who wrote it, and the
// table and variables its chains are over.
void write_identity(H5::H5File& file, const char* format, long long version, const Header& header) {
  h5::set_attr(file, "format", std::string(format));
  h5::set_attr(file, "format_version", version);
  h5::set_attr(file, "covey_version", std::string(kVersion));
  h5::set_attr(file, "command_line", header.session.value("command_line", std::string()));
  h5::set_attr(file, "table_fingerprint", format_fingerprint(header.fingerprint));
  h5::set_attr(file, "num_variables", static_cast<long long>(header.variables.size()));
}

// The file-size limit of this process (ulimit -f), if there is one.
std::optional<std::uintmax_t> file_size_limit() {
  rlimit limit{};
  if (::getrlimit(RLIMIT_FSIZE, &limit) != 0 || limit.rlim_cur == RLIM_INFINITY) return {};
  return static_cast<std::uintmax_t>(limit.rlim_cur);
}

}  // namespace

std::string chain_group_name(int chain) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "chain_%03d", chain);
  return buf;
}

void create(const std::string& path, const Header& header, const std::vector<ChainBlock>& blocks,
            std::uint64_t steps, double elapsed_seconds) {
  AtomicOutput out(path);
  h5::guard(path, [&] {
    H5::H5File file = h5::create(out.temp_path());
    write_identity(file, kChainRunFormat, kChainRunFormatVersion, header);
    h5::set_attr(file, "words_per_node", static_cast<long long>(header.words_per_node));
    h5::set_attr(file, "num_chains", static_cast<long long>(header.num_chains));
    std::vector<int> global = header.global_chains;
    if (global.empty())
      for (int c = 0; c < header.num_chains; ++c) global.push_back(c);
    if (static_cast<int>(global.size()) != header.num_chains)
      throw Error("chain_file::create: one global index per chain is needed");
    h5::set_attr_json(file, "global_chains", global);
    if (header.mpi_rank >= 0) {
      h5::set_attr(file, "mpi_rank", static_cast<long long>(header.mpi_rank));
      h5::set_attr(file, "mpi_ranks", static_cast<long long>(header.mpi_ranks));
    }
    if (header.options.contains("seed"))
      h5::set_attr(file, "seed", std::to_string(header.options["seed"].get<std::uint64_t>()));
    h5::set_attr_json(file, "options", header.options);
    write_option_attributes(file, header.options);
    nlohmann::json moves = nlohmann::json::array();
    for (int m = 0; m < kNumMoves; ++m) moves.push_back(move_name(m));
    h5::set_attr_json(file, "move_names", moves);
    h5::set_attr_json(file, "sessions", nlohmann::json::array({header.session}));
    const std::string names = nlohmann::json(header.variables).dump();
    if (names.size() < 60000) h5::set_attr(file, "variable_names", names);  // else: dataset only
    H5::Group root = file.openGroup("/");
    h5::write_strings(root, kVariables, header.variables);
    h5::create_rows(root, kCheckpoints, kCheckpointWidth, 64);
    const std::size_t width = header.variables.size() * header.words_per_node;
    for (int c = 0; c < header.num_chains; ++c) {
      H5::Group g = file.createGroup(chain_group_name(c));
      h5::set_attr(g, "chain", static_cast<long long>(global[c]));
      h5::create_rows(g, kDraws, width, draw_chunk_rows(width));
      h5::create_series_double(g, kLogScores);
      h5::create_series_int64(g, kDrawSteps);
      h5::create_series_int64(g, kRegenerations, 1024);
      h5::create_rows(g, kStateParents, width, 16);
      h5::create_rows(g, kStateRng, kRngWords, 4);
      h5::create_rows(g, kStateCounts, kCountsWidth, 64);
      if (header.options.value("skip_rejections", false)) h5::create_rows(g, kStateSkipWait, 2, 64);
    }
    append_blocks(file, blocks, steps, elapsed_seconds);
    file.close();
  });
  out.commit();
}

namespace {

// An upper bound of the bytes a checkpoint adds to the run file: the new rows uncompressed, plus
// one whole chunk of every growing dataset of every chain (appending to a partly filled chunk
// stores a new copy of it), plus room for metadata.
std::uintmax_t checkpoint_growth_bound(const std::vector<ChainBlock>& blocks) {
  std::uintmax_t bytes = std::uintmax_t{256} << 10;
  for (const ChainBlock& b : blocks) {
    const std::uintmax_t width = std::max<std::size_t>(b.state.parents.size(), 1);
    bytes += 8 * (b.draws.size() + b.log_scores.size() + b.draw_steps.size() +
                  b.regenerations.size() + b.state.parents.size() + kRngWords + kCountsWidth);
    bytes += 8 * (std::max<std::uintmax_t>(16 * width, 65536) + 2 * 4096 + 1024 + 16 * width +
                  4 * kRngWords + 64 * kCountsWidth + 64 * kCheckpointWidth);
  }
  return bytes;
}

// Makes sure the next checkpoint file fits before any byte of it is written, so that a full disk
// or a file-size limit gives one clear error and leaves the last checkpoint as it is (a failing
// write inside HDF5 would leave the library in a state it does not recover from cleanly).
// `temp` is the copy of the run file: its blocks up to `need` are reserved without changing its
// size (where the file system supports that); the reservation beyond the final size is
// released by release_reservation().
void reserve_checkpoint_room(const std::string& path, const std::string& temp,
                             std::uintmax_t need) {
  if (const auto limit = file_size_limit(); limit && need > *limit)
    throw ResourceError(path + ": cannot write the next checkpoint: the file would need up to " +
                        format_bytes(static_cast<double>(need)) +
                        ", above the file size limit (ulimit -f) of " +
                        format_bytes(static_cast<double>(*limit)) +
                        "; the last checkpoint is intact (raise the limit, then {resume})");
  const int fd = ::open(temp.c_str(), O_WRONLY);
  if (fd < 0) return;
  const int rc = ::fallocate(fd, FALLOC_FL_KEEP_SIZE, 0, static_cast<off_t>(need));
  const int err = rc == 0 ? 0 : errno;
  ::close(fd);
  if (err == ENOSPC || err == EDQUOT)
    throw ResourceError(path +
                        ": cannot write the next checkpoint: no space left on the device "
                        "for up to " +
                        format_bytes(static_cast<double>(need)) +
                        "; the last checkpoint is intact (free space, then {resume})");
}

void release_reservation(const std::string& temp) {
  std::error_code ec;
  const std::uintmax_t size = std::filesystem::file_size(temp, ec);
  if (!ec) ::truncate(temp.c_str(), static_cast<off_t>(size));
}

}  // namespace

void append_checkpoint(const std::string& path, const std::vector<ChainBlock>& blocks,
                       std::uint64_t steps, double elapsed_seconds,
                       const nlohmann::json* new_session) {
  AtomicOutput out(path);
  std::error_code ec;
  const std::uintmax_t old_size = std::filesystem::file_size(path, ec);
  if (ec) throw FileError(path + ": cannot read the run file: " + ec.message());
  const std::uintmax_t need = old_size + checkpoint_growth_bound(blocks);
  if (const auto limit = file_size_limit(); limit && old_size > *limit)
    throw ResourceError(path + ": cannot copy the run file for a checkpoint: it is larger than " +
                        "the file size limit (ulimit -f); the last checkpoint is intact");
  std::filesystem::copy_file(path, out.temp_path(),
                             std::filesystem::copy_options::overwrite_existing, ec);
  if (ec)
    throw ResourceError(path + ": cannot copy the run file for a checkpoint: " + ec.message() +
                        "; the last checkpoint is intact");
  reserve_checkpoint_room(path, out.temp_path(), need);
  h5::guard(path, [&] {
    H5::H5File file = h5::open_write(out.temp_path());
    if (new_session) {
      nlohmann::json sessions = h5::get_attr_json(file, "sessions");
      sessions.push_back(*new_session);
      replace_attr(file, "sessions", sessions.dump());
    }
    append_blocks(file, blocks, steps, elapsed_seconds);
    file.close();
  });
  release_reservation(out.temp_path());
  out.commit();
}

std::string member_path(const std::string& path, int rank) {
  const std::filesystem::path p(path);
  std::filesystem::path name = p.stem();
  name += ".rank" + std::to_string(rank);
  name += p.extension();
  return (p.parent_path() / name).string();
}

void write_manifest(const std::string& path, const std::vector<std::string>& members,
                    const std::vector<std::vector<int>>& chains, const Header& header) {
  nlohmann::json list = nlohmann::json::array();
  int total = 0;
  for (std::size_t r = 0; r < members.size(); ++r) {
    list.push_back({{"file", std::filesystem::path(members[r]).filename().string()},
                    {"rank", r},
                    {"chains", chains[r]}});
    total += static_cast<int>(chains[r].size());
  }
  AtomicOutput out(path);
  h5::guard(path, [&] {
    H5::H5File file = h5::create(out.temp_path());
    write_identity(file, kChainManifestFormat, kChainManifestFormatVersion, header);
    h5::set_attr(file, "num_chains", static_cast<long long>(total));
    h5::set_attr(file, "num_ranks", static_cast<long long>(members.size()));
    h5::set_attr_json(file, "options", header.options);
    h5::set_attr_json(file, "members", list);
    file.close();
  });
  out.commit();
}

void remove_stale_temporaries(const std::string& path) {
  namespace fs = std::filesystem;
  const fs::path target(path);
  const fs::path dir = target.parent_path().empty() ? fs::path(".") : target.parent_path();
  const std::string prefix = "." + target.filename().string() + ".tmp-";
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(dir, ec)) {
    const std::string name = entry.path().filename().string();
    if (name.rfind(prefix, 0) != 0) continue;
    const std::string rest = name.substr(prefix.size());
    const auto dash = rest.find('-');
    if (dash == std::string::npos) continue;
    long pid = 0;
    try {
      pid = std::stol(rest.substr(0, dash));
    } catch (const std::exception&) {
      continue;
    }
    if (pid <= 0 || pid == ::getpid()) continue;
    if (::kill(static_cast<pid_t>(pid), 0) == 0 || errno != ESRCH) continue;  // still running
    fs::remove(entry.path(), ec);
  }
}

}  // namespace chain_file

// ---- Reader ------------------------------------------------------------------------------

using namespace chain_file;

ChainRun ChainRun::open(const std::string& path) {
  ChainRun run;
  run.path_ = path;
  h5::guard(path, [&] {
    H5::H5File file = h5::open_read(path);
    if (!h5::has_attr(file, "format") || h5::get_attr_string(file, "format") != kChainRunFormat)
      throw InputError(path + ": not a covey chain-run file (format attribute is not '" +
                       std::string(kChainRunFormat) + "')");
    const long long version = h5::get_attr_int(file, "format_version");
    if (version != kChainRunFormatVersion)
      throw InputError(path + ": chain-run format version " + std::to_string(version) +
                       " is not supported (this covey reads version " +
                       std::to_string(kChainRunFormatVersion) + ")");
    run.fingerprint_ = parse_fingerprint(h5::get_attr_string(file, "table_fingerprint"), path);
    // Checked before anything is sized by it: each chain is a group of the root.
    const long long num_chains = h5::get_attr_int(file, "num_chains");
    if (num_chains < 1 || static_cast<unsigned long long>(num_chains) > file.getNumObjs())
      throw InputError(path + ": corrupt num_chains attribute (" + std::to_string(num_chains) +
                       ")");
    run.num_chains_ = static_cast<int>(num_chains);
    run.words_ = static_cast<int>(h5::get_attr_int(file, "words_per_node"));
    run.options_ = fixed_options_from_json(h5::get_attr_json(file, "options"), path);
    if (h5::has_attr(file, "global_chains")) {
      try {
        run.global_chains_ = h5::get_attr_json(file, "global_chains").get<std::vector<int>>();
      } catch (const nlohmann::json::exception&) {
        throw InputError(path + ": corrupt global_chains attribute");
      }
      if (static_cast<int>(run.global_chains_.size()) != run.num_chains_)
        throw InputError(path + ": global_chains does not list every chain");
    } else {
      for (int c = 0; c < run.num_chains_; ++c) run.global_chains_.push_back(c);
    }
    if (h5::has_attr(file, "mpi_rank")) {
      run.mpi_rank_ = static_cast<int>(h5::get_attr_int(file, "mpi_rank"));
      run.mpi_ranks_ = static_cast<int>(h5::get_attr_int(file, "mpi_ranks"));
    }
    const nlohmann::json sessions = h5::get_attr_json(file, "sessions");
    if (!sessions.is_array()) throw InputError(path + ": corrupt sessions attribute");
    for (const nlohmann::json& session : sessions)
      run.sessions_.push_back(attributes_from_json(session, path + ": sessions attribute"));
    H5::Group root = file.openGroup("/");
    run.variables_ = h5::read_strings(root, kVariables);
    const long long n = h5::get_attr_int(file, "num_variables");
    if (n != static_cast<long long>(run.variables_.size()) || n < 1 || run.num_chains_ < 1 ||
        run.words_ != Dag::words_for(n))
      throw InputError(path + ": inconsistent chain-run header");
    run.num_checkpoints_ = h5::num_rows(root, kCheckpoints);
    if (run.num_checkpoints_ == 0) throw InputError(path + ": the run has no checkpoint");
    const auto last = h5::read_rows(root, kCheckpoints, run.num_checkpoints_ - 1, 1);
    run.steps_ = last[0];
    run.num_draws_ = last[1];
    run.elapsed_seconds_ = double(last[3]) / 1000.0;
    for (int c = 0; c < run.num_chains_; ++c) {
      const std::string name = chain_group_name(c);
      if (!file.nameExists(name)) throw InputError(path + ": missing group " + name);
      H5::Group g = file.openGroup(name);
      const std::size_t draws = h5::num_rows(g, kDraws);
      if (draws != run.num_draws_ || h5::num_rows(g, kLogScores) != draws ||
          h5::num_rows(g, kDrawSteps) != draws ||
          h5::num_rows(g, kStateParents) != run.num_checkpoints_ ||
          h5::num_rows(g, kStateRng) != run.num_checkpoints_ ||
          h5::num_rows(g, kStateCounts) != run.num_checkpoints_)
        throw InputError(path + ": " + name + " does not match the last checkpoint record");
    }
  });
  return run;
}

void ChainRun::check_chain(int chain) const {
  if (chain < 0 || chain >= num_chains_)
    throw InputError(path_ + ": no chain " + std::to_string(chain));
}

std::vector<std::uint64_t> ChainRun::draws(int chain) const {
  check_chain(chain);
  return h5::guard(path_, [&] {
    H5::H5File file = h5::open_read(path_);
    H5::Group g = file.openGroup(chain_group_name(chain));
    return h5::read_rows(g, kDraws, 0, num_draws_);
  });
}

std::vector<double> ChainRun::log_scores(int chain) const {
  check_chain(chain);
  return h5::guard(path_, [&] {
    H5::H5File file = h5::open_read(path_);
    return h5::read_doubles(file.openGroup(chain_group_name(chain)), kLogScores);
  });
}

std::vector<std::int64_t> ChainRun::draw_steps(int chain) const {
  check_chain(chain);
  return h5::guard(path_, [&] {
    H5::H5File file = h5::open_read(path_);
    return h5::read_int64s(file.openGroup(chain_group_name(chain)), kDrawSteps);
  });
}

std::vector<std::int64_t> ChainRun::regenerations(int chain) const {
  check_chain(chain);
  return h5::guard(path_, [&] {
    H5::H5File file = h5::open_read(path_);
    return h5::read_int64s(file.openGroup(chain_group_name(chain)), kRegenerations);
  });
}

ChainCheckpoint ChainRun::checkpoint(int chain) const {
  check_chain(chain);
  return h5::guard(path_, [&] {
    H5::H5File file = h5::open_read(path_);
    H5::Group g = file.openGroup(chain_group_name(chain));
    const std::size_t row = num_checkpoints_ - 1;
    ChainCheckpoint cp;
    cp.parents = h5::read_rows(g, kStateParents, row, 1);
    cp.rng_state = unpack_text(h5::read_rows(g, kStateRng, row, 1), path_);
    const auto counts = h5::read_rows(g, kStateCounts, row, 1);
    if (counts.size() != kCountsWidth) throw InputError(path_ + ": corrupt checkpoint counts");
    cp.steps = counts[0];
    cp.regenerations = counts[1];
    for (int m = 0; m < kNumMoves; ++m) {
      cp.counts.proposed[m] = counts[2 + m];
      cp.counts.accepted[m] = counts[2 + kNumMoves + m];
    }
    if (cp.steps != steps_) throw InputError(path_ + ": checkpoint steps disagree");
    if (g.nameExists(kStateSkipWait)) {
      const auto wait = h5::read_rows(g, kStateSkipWait, row, 1);
      if (wait.size() != 2 || wait[0] > 1) throw InputError(path_ + ": corrupt checkpoint wait");
      if (wait[0]) cp.skip_wait = wait[1];
    }
    return cp;
  });
}

void ChainRun::check_table(const ScoreTable& table) const {
  bool same = table.fingerprint() == fingerprint_ &&
              table.num_variables() == static_cast<int>(variables_.size());
  for (int v = 0; same && v < table.num_variables(); ++v) same = table.name(v) == variables_[v];
  if (!same)
    throw InputError(path_ + ": the run was made from a different score table (fingerprint " +
                     format_fingerprint(fingerprint_) + ", this table " +
                     format_fingerprint(table.fingerprint()) + ")");
}

// ---- Manifests of MPI runs --------------------------------------------------------------

bool is_run_manifest(const std::string& path) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) return false;
  try {
    if (!h5::is_hdf5(path)) return false;
    return h5::guard(path, [&] {
      H5::H5File file = h5::open_read(path);
      return h5::has_attr(file, "format") &&
             h5::get_attr_string(file, "format") == kChainManifestFormat;
    });
  } catch (const std::exception&) {
    return false;
  }
}

RunManifest read_run_manifest(const std::string& path) {
  RunManifest m;
  m.path = path;
  const std::filesystem::path dir = std::filesystem::path(path).parent_path();
  h5::guard(path, [&] {
    H5::H5File file = h5::open_read(path);
    if (!h5::has_attr(file, "format") ||
        h5::get_attr_string(file, "format") != kChainManifestFormat)
      throw InputError(path + ": not a covey chain-run manifest");
    const long long version = h5::get_attr_int(file, "format_version");
    if (version != kChainManifestFormatVersion)
      throw InputError(path + ": manifest format version " + std::to_string(version) +
                       " is not supported (this covey reads version " +
                       std::to_string(kChainManifestFormatVersion) + ")");
    const long long total = h5::get_attr_int(file, "num_chains");
    const nlohmann::json list = h5::get_attr_json(file, "members");
    if (!list.is_array() || list.empty())
      throw InputError(path + ": corrupt manifest (no member list)");
    std::vector<char> seen(std::size_t(std::max(0LL, total)), 0);
    int next = 0;
    for (const auto& entry : list) {
      std::string name;
      std::vector<int> chains;
      try {
        name = entry.at("file").get<std::string>();
        chains = entry.at("chains").get<std::vector<int>>();
      } catch (const nlohmann::json::exception&) {
        throw InputError(path + ": corrupt manifest entry " + entry.dump());
      }
      if (name.empty() || name.find('/') != std::string::npos || chains.empty())
        throw InputError(path + ": corrupt manifest entry " + entry.dump());
      for (int c : chains) {
        // Members hold consecutive blocks of chains in rank order.
        if (c != next || c >= total || seen[std::size_t(c)])
          throw InputError(path + ": corrupt manifest (chain " + std::to_string(c) +
                           " out of order in " + name + ")");
        seen[std::size_t(c)] = 1;
        ++next;
      }
      m.members.push_back((dir / name).string());
      m.chains.push_back(std::move(chains));
    }
    if (next != total)
      throw InputError(path + ": corrupt manifest (members hold " + std::to_string(next) + " of " +
                       std::to_string(total) + " chains)");
    m.num_chains = static_cast<int>(total);
    m.options = fixed_options_from_json(h5::get_attr_json(file, "options"), path);
  });
  return m;
}

std::vector<std::string> run_member_files(const std::string& path) {
  if (!is_run_manifest(path)) return {path};
  const RunManifest m = read_run_manifest(path);
  for (std::size_t r = 0; r < m.members.size(); ++r) {
    std::error_code ec;
    if (!std::filesystem::is_regular_file(m.members[r], ec))
      throw InputError(path + ": member file " + m.members[r] + " of rank " + std::to_string(r) +
                       " is missing (keep the rank files beside the manifest)");
  }
  return m.members;
}

}  // namespace covey
