// Chains from Python (`covey chain`) and run files opened as arrays. A chain runs on a worker
// thread while the calling thread waits with the GIL held at intervals, so Ctrl-C
// (KeyboardInterrupt) and a stop= callback reach the library's stop flag
// (ChainRunHooks::stop_signal): the run then writes its checkpoint and ends, and resume=True
// continues it bit for bit (docs/chains.md).
#include <pybind11/numpy.h>
#include <pybind11/stl.h>

#include <chrono>
#include <cmath>
#include <csignal>
#include <optional>
#include <thread>

#include "bindings.hpp"
#include "covey/analysis/check.hpp"
#include "covey/chains/chain_run_file.hpp"
#include "covey/chains/chain_runner.hpp"
#include "covey/chains/chain_support.hpp"
#include "covey/core/error.hpp"

namespace covey::python {
namespace {

// The options fixed when a run is created, by keyword; None: the CLI's default (or, on resume,
// the stored value).
struct FixedArguments {
  std::optional<int> chains;
  std::optional<std::uint64_t> thin, burn_in, seed;
  std::optional<int> teleport_cover;
  std::optional<double> teleport_rate, rev_rate;
  std::optional<int> cover_limit;
  std::optional<std::string> start;
  std::optional<int> start_cover;
  std::optional<int> block_size;
  std::optional<double> block_rate;
  std::optional<bool> skip_rejections;
};

// The library's defaults (the CLI's too) for options not given.
ChainRunOptions fixed_options_of(const FixedArguments& a) {
  ChainRunOptions o;
  if (a.chains) o.chains = *a.chains;
  if (a.thin) o.thin = *a.thin;
  if (a.burn_in) o.burn_in = *a.burn_in;
  if (a.seed) o.seed = *a.seed;
  if (a.teleport_cover) o.teleport_cover = *a.teleport_cover;
  if (a.teleport_rate) o.teleport_rate = *a.teleport_rate;
  if (a.rev_rate) o.rev_rate = *a.rev_rate;
  if (a.cover_limit) o.cover_limit = *a.cover_limit;
  if (a.start) o.start = *a.start;
  if (a.start_cover) o.start_cover = *a.start_cover;
  if (a.block_size) o.block_size = *a.block_size;
  if (a.block_rate) o.block_rate = *a.block_rate;
  if (a.skip_rejections) o.skip_rejections = *a.skip_rejections;
  return o;
}

// The fixed options given as keywords, by library field name (the resume rule checks them).
std::vector<std::string> given_fields(const FixedArguments& a) {
  std::vector<std::string> out;
  const std::pair<const char*, bool> keys[] = {{"chains", bool(a.chains)},
                                               {"thin", bool(a.thin)},
                                               {"burn_in", bool(a.burn_in)},
                                               {"seed", bool(a.seed)},
                                               {"teleport_cover", bool(a.teleport_cover)},
                                               {"teleport_rate", bool(a.teleport_rate)},
                                               {"rev_rate", bool(a.rev_rate)},
                                               {"cover_limit", bool(a.cover_limit)},
                                               {"start", bool(a.start)},
                                               {"start_cover", bool(a.start_cover)},
                                               {"block_size", bool(a.block_size)},
                                               {"block_rate", bool(a.block_rate)},
                                               {"skip_rejections", bool(a.skip_rejections)}};
  for (const auto& [key, is_given] : keys)
    if (is_given) out.emplace_back(key);
  return out;
}

py::dict options_dict(const ChainRunOptions& o) {
  py::dict d;
  d["chains"] = o.chains;
  d["thin"] = o.thin;
  d["burn_in"] = o.burn_in;
  d["seed"] = o.seed;
  d["rev_rate"] = o.rev_rate;
  d["teleport_rate"] = o.teleport_rate;
  d["teleport_cover"] = o.teleport_cover;
  d["cover_limit"] = o.cover_limit;
  d["start"] = o.start;
  d["start_cover"] = o.start_cover;
  d["block_size"] = o.block_size;
  d["block_rate"] = o.block_rate;
  d["skip_rejections"] = o.skip_rejections;
  return d;
}

py::object attribute_value(const AttributeValue& v) {
  return std::visit([](const auto& x) -> py::object { return py::cast(x); }, v);
}

py::dict summary_dict(const ChainRunSummary& s) {
  py::dict proposals, accepted, acceptance;
  for (int m = 0; m < kNumMoves; ++m) {
    proposals[move_name(m)] = s.counts.proposed[m];
    accepted[move_name(m)] = s.counts.accepted[m];
    acceptance[move_name(m)] =
        s.counts.proposed[m]
            ? py::object(py::float_(double(s.counts.accepted[m]) / double(s.counts.proposed[m])))
            : py::object(py::none());
  }
  py::dict d;
  d["output"] = s.path;
  d["chains"] = s.chains;
  d["steps"] = s.steps;
  d["session_steps"] = s.session_steps;
  d["draws"] = s.draws;
  d["checkpoints"] = s.checkpoints;
  d["seconds"] = s.seconds;
  d["checkpoint_seconds"] = s.checkpoint_seconds;
  d["proposals_per_second"] = s.proposals_per_second();
  d["acceptance"] = acceptance;
  d["proposals"] = proposals;
  d["accepted"] = accepted;
  d["regenerations"] = s.total_regenerations();
  d["regenerations_per_chain"] = s.regenerations;
  d["stop_reason"] = s.stop_reason;
  if (s.convergence_checked) {
    // The keys of the CLI's --json summary (cmd_chain.cpp) and of `check`'s verdict.
    const Verdict& v = s.convergence;
    const auto counts = [](const Verdict::Counts& n) {
      py::dict out;
      out["passing"] = n.passing;
      out["failing"] = n.failing;
      out["undefined"] = n.undefined;
      return out;
    };
    const VerdictText text = stopping_verdict_text(s);
    py::dict c;
    c["converged"] = v.converged();
    c["state"] = to_string(v.state);
    c["max_rhat"] = v.max_rhat;
    c["min_ess"] = std::fmin(v.min_ess_bulk, v.min_ess_tail);
    c["min_ess_bulk"] = v.min_ess_bulk;
    c["min_ess_tail"] = v.min_ess_tail;
    py::dict thresholds;
    thresholds["rhat"] = s.convergence_thresholds.max_rhat;
    thresholds["ess"] = s.convergence_thresholds.min_ess;
    c["thresholds"] = thresholds;
    c["features"] = v.features;
    c["passing"] = v.passing;
    c["failing"] = v.failing;
    c["undefined"] = v.undefined;
    c["rhat"] = counts(v.rhat);
    c["ess_bulk"] = counts(v.ess_bulk);
    c["ess_tail"] = counts(v.ess_tail);
    c["checks"] = s.convergence_checks;
    c["text"] = text.outcome;
    c["caveats"] = text.caveats;
    d["convergence"] = c;
  }
  if (!std::isnan(s.teleport_mass_bound_log10))
    d["teleport_mass_bound_log10"] = s.teleport_mass_bound_log10;
  if (!s.teleport_note.empty()) d["teleport_note"] = s.teleport_note;
  return d;
}

// A duration: seconds as a number, or a text such as "90s", "10m", "2h".
double seconds_of(const py::object& duration, const char* keyword) {
  if (py::isinstance<py::str>(duration))
    return parse_duration(duration.cast<std::string>(), keyword);
  return duration.cast<double>();
}

// Runs the chains on a worker thread; every `poll` the calling thread takes the GIL to run
// Python's signal handlers and the stop callback. A KeyboardInterrupt (or any exception from
// them) stops the run at its next segment with a checkpoint and is raised afterwards.
ChainRunSummary run_interruptible(const ScoreTable& table, const std::string& path,
                                  const ChainRunOptions& options, ChainRunHooks hooks, bool resume,
                                  const py::object& stop, const py::object& report) {
  std::atomic<int> stop_flag{0};
  std::atomic<bool> done{false};
  std::atomic<std::uint64_t> steps{0}, target{0};
  hooks.stop_signal = &stop_flag;
  hooks.on_segment = [&](std::uint64_t now, std::uint64_t goal) {
    steps = now;
    target = goal;
  };
  const auto start = std::chrono::steady_clock::now();
  auto last_report = start;
  std::uint64_t reported = 0;
  // Calls report(steps, target, seconds) about twice a second while the steps advance.
  auto report_progress = [&](bool force) {
    const auto now = std::chrono::steady_clock::now();
    if (report.is_none() || steps == reported) return;
    if (!force && now - last_report < std::chrono::milliseconds(500)) return;
    reported = steps;
    last_report = now;
    report(reported, target.load(), std::chrono::duration<double>(now - start).count());
  };
  ChainRunSummary summary;
  std::exception_ptr failure;
  std::optional<py::error_already_set> interruption;
  // Asked to stop before it starts: the run makes its first segment and checkpoints.
  if (!stop.is_none() && py::bool_(stop())) stop_flag = SIGINT;
  {
    py::gil_scoped_release release;
    std::thread worker([&] {
      try {
        summary = run_chains(table, path, options, hooks, resume);
      } catch (...) {
        failure = std::current_exception();
      }
      done = true;
    });
    while (!done) {
      std::this_thread::sleep_for(std::chrono::milliseconds(50));
      if (stop_flag.load() != 0) continue;
      py::gil_scoped_acquire acquire;
      try {
        if (PyErr_CheckSignals() != 0) throw py::error_already_set();
        if (!stop.is_none() && py::bool_(stop())) stop_flag = SIGINT;
        report_progress(false);
      } catch (py::error_already_set& e) {
        interruption.emplace(std::move(e));
        stop_flag = SIGINT;
      }
    }
    worker.join();
  }
  if (failure) std::rethrow_exception(failure);
  report_progress(true);
  if (interruption) throw std::move(*interruption);
  return summary;
}

py::object chain(const py::object& table_or_path, const std::string& path,
                 const FixedArguments& fixed, std::optional<double> steps,
                 const py::object& max_time, const py::object& checkpoint_every,
                 const py::object& check_every, double until_rhat, double until_ess,
                 const std::string& sampler_path, const py::object& memory_limit, int threads,
                 bool resume, bool force, bool progress, const py::object& stop,
                 const py::object& report) {
  const auto table = table_of(table_or_path);
  ChainRunOptions o = fixed_options_of(fixed);
  o.overwrite = force;
  if (steps) {
    if (!(*steps >= 0) || *steps != std::floor(*steps) || *steps > 1e19)
      throw OptionError("{steps} must be a whole number of steps (e.g. 1000000 or 1e6)");
    o.steps = static_cast<std::uint64_t>(*steps);
  }
  if (!max_time.is_none()) o.max_seconds = seconds_of(max_time, "max_time");
  o.checkpoint_every = seconds_of(checkpoint_every, "checkpoint_every");
  if (!check_every.is_none()) o.check_every = seconds_of(check_every, "check_every");
  o.until_rhat = until_rhat;
  o.until_ess = until_ess;
  o = resume ? resume_options(path, o, given_fields(fixed)) : with_default_choices(o);
  const auto thread_ceiling = thread_limit(threads);
  std::unique_ptr<ChainSupport> support;
  {
    py::gil_scoped_release release;
    support =
        std::make_unique<ChainSupport>(*table, o, sampler_path, memory_limit_of(memory_limit));
  }
  ChainRunHooks hooks = support->hooks();
  hooks.progress = progress;
  hooks.command_line = "python: covey.chain";
  const ChainRunSummary summary = run_interruptible(*table, path, o, hooks, resume, stop, report);
  return summary_dict(summary);
}

// A run file (or the members of an MPI run) as arrays; chains side by side, cut to the
// shortest member.
class Run {
 public:
  explicit Run(const std::string& path) {
    for (const std::string& member : run_member_files(path))
      members_.push_back(ChainRun::open(member));
    for (const ChainRun& run : members_) {
      if (run.variables() != members_.front().variables())
        throw InputError(run.path() + ": variables differ from " + members_.front().path());
      draws_ = std::min(draws_, run.num_draws());
      chains_ += run.num_chains();
    }
  }
  int chains() const { return chains_; }
  std::uint64_t num_draws() const { return draws_; }
  const ChainRun& first() const { return members_.front(); }

  // [chain, draw, from, to]: true when the draw holds the edge from -> to.
  py::array_t<bool> edges() const {
    const int n = first().num_variables(), words = first().words_per_node();
    py::array_t<bool> out(
        {py::ssize_t(chains_), py::ssize_t(draws_), py::ssize_t(n), py::ssize_t(n)});
    auto a = out.mutable_unchecked<4>();
    int c = 0;
    for (const ChainRun& run : members_)
      for (int local = 0; local < run.num_chains(); ++local, ++c) {
        const std::vector<std::uint64_t> rows = run.draws(local);
        const std::size_t stride = std::size_t(n) * words;
        for (std::size_t t = 0; t < draws_; ++t)
          for (int v = 0; v < n; ++v)
            for (int u = 0; u < n; ++u)
              a(c, t, u, v) =
                  (rows[t * stride + std::size_t(v) * words + (u >> 6)] >> (u & 63)) & 1U;
      }
    return out;
  }

  // [chain, draw] of a per-draw series of the run file (log scores, steps).
  template <class T, class Read>
  py::array_t<T> series(Read read) const {
    py::array_t<T> out({py::ssize_t(chains_), py::ssize_t(draws_)});
    auto a = out.template mutable_unchecked<2>();
    int c = 0;
    for (const ChainRun& run : members_)
      for (int local = 0; local < run.num_chains(); ++local, ++c) {
        const auto values = read(run, local);
        for (std::size_t t = 0; t < draws_; ++t) a(c, t) = values[t];
      }
    return out;
  }

 private:
  std::vector<ChainRun> members_;
  int chains_ = 0;
  std::uint64_t draws_ = UINT64_MAX;
};

}  // namespace

void bind_chains(py::module_& m) {
  m.def(
      "_chain",
      [](const py::object& table, const std::string& path, std::optional<int> chains,
         std::optional<double> steps, std::optional<std::uint64_t> thin,
         std::optional<std::uint64_t> burn_in, std::optional<std::uint64_t> seed,
         std::optional<int> teleport_cover, std::optional<double> teleport_rate,
         std::optional<double> rev_rate, std::optional<int> cover_limit,
         std::optional<std::string> start, std::optional<int> start_cover,
         std::optional<int> block_size, std::optional<double> block_rate,
         std::optional<bool> skip_rejections, const py::object& max_time,
         const py::object& checkpoint_every, const py::object& check_every, double until_rhat,
         double until_ess, const std::string& sampler_path, const py::object& memory_limit,
         int threads, bool resume, bool force, bool progress, const py::object& stop,
         const py::object& report) {
        const FixedArguments fixed{chains,        thin,       burn_in,        seed,  teleport_cover,
                                   teleport_rate, rev_rate,   cover_limit,    start, start_cover,
                                   block_size,    block_rate, skip_rejections};
        return chain(table, path, fixed, steps, max_time, checkpoint_every, check_every, until_rhat,
                     until_ess, sampler_path, memory_limit, threads, resume, force, progress,
                     stop, report);
      },
      py::arg("table"), py::arg("path"), py::arg("chains"), py::arg("steps"), py::arg("thin"),
      py::arg("burn_in"), py::arg("seed"), py::arg("teleport_cover"), py::arg("teleport_rate"),
      py::arg("rev_rate"), py::arg("cover_limit"), py::arg("start"), py::arg("start_cover"),
      py::arg("block_size"), py::arg("block_rate"), py::arg("skip_rejections"), py::arg("max_time"),
      py::arg("checkpoint_every"), py::arg("check_every"), py::arg("until_rhat"),
      py::arg("until_ess"), py::arg("sampler"), py::arg("memory_limit"),
      py::arg("threads"), py::arg("resume"), py::arg("force"), py::arg("progress"), py::arg("stop"),
      py::arg("report"));

  py::class_<Run>(m, "_Run")
      .def(py::init<const std::string&>(), py::arg("path"))
      .def_property_readonly("chains", &Run::chains)
      .def_property_readonly("num_draws", &Run::num_draws)
      .def_property_readonly("variables", [](const Run& r) { return r.first().variables(); })
      .def_property_readonly("steps", [](const Run& r) { return r.first().steps(); })
      .def_property_readonly("options",
                             [](const Run& r) { return options_dict(r.first().options()); })
      .def_property_readonly("sessions",
                             [](const Run& r) {
                               py::list out;
                               for (const Attributes& session : r.first().sessions()) {
                                 py::dict d;
                                 for (const auto& [name, value] : session)
                                   d[py::str(name)] = attribute_value(value);
                                 out.append(d);
                               }
                               return out;
                             })
      .def("edges", &Run::edges)
      .def("log_scores",
           [](const Run& r) {
             return r.series<double>([](const ChainRun& run, int c) { return run.log_scores(c); });
           })
      .def("draw_steps", [](const Run& r) {
        return r.series<std::int64_t>([](const ChainRun& run, int c) { return run.draw_steps(c); });
      });
}

}  // namespace covey::python
