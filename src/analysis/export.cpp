// Exports of chain runs for scripts (include/covey/analysis/export.hpp).
#include "covey/analysis/export.hpp"

#include <charconv>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <ostream>

#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/diagnostics/diagnostics.hpp"

namespace covey {

namespace {

// A CSV field (RFC 4180): quoted when it holds a comma, quote, line break or outer blank.
std::string csv_field(const std::string& text) {
  const bool plain = text.find_first_of(",\"\r\n") == std::string::npos &&
                     (text.empty() || (text.front() != ' ' && text.back() != ' '));
  if (plain) return text;
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

// The shortest text that reads back as the same double; NA where undefined (NaN); Inf/-Inf as R and
// pandas read them.
std::string csv_number(double v) {
  if (std::isnan(v)) return "NA";
  if (std::isinf(v)) return v > 0 ? "Inf" : "-Inf";
  char text[40];
  const auto end = std::to_chars(text, text + sizeof text, v).ptr;  // shortest round trip
  return std::string(text, end);
}

template <typename Write>
void write_atomically(const std::string& path, const Write& write) {
  AtomicOutput output(path);
  {
    std::ofstream out(output.temp_path(), std::ios::binary);
    write(out);
    out.flush();
    if (!out) throw ResourceError(path + ": write failed");
  }
  output.commit();
}

}  // namespace

void write_feature_csv(std::ostream& out, const RunDiagnostics& d,
                       const std::vector<std::string>& names) {
  const std::size_t draws = static_cast<std::size_t>(d.chains) * d.iterations;
  out << "kind,from,to,probability,mcse,mcse_reliable,rhat,ess_bulk,ess_tail\n";
  for (std::size_t i = 0; i < d.features.size(); ++i) {
    const FeatureId& f = d.features[i];
    const FeatureSummary& s = d.summaries[i];
    const bool score = f.kind == FeatureKind::kScore;
    out << to_string(f.kind) << ',' << (score ? "" : csv_field(names[std::size_t(f.from)])) << ','
        << (score ? "" : csv_field(names[std::size_t(f.to)])) << ',' << csv_number(s.mean) << ','
        << csv_number(s.mcse) << ','
        << (score                            ? "NA"
            : mcse_unreliable(s.mean, draws) ? "FALSE"
                                             : "TRUE")
        << ',' << csv_number(s.rhat) << ',' << csv_number(s.ess_bulk) << ','
        << csv_number(s.ess_tail) << '\n';
  }
}

void write_edge_draws_csv(std::ostream& out, const RunFeatures& draws,
                          const std::vector<std::string>& names) {
  const int n = draws.num_variables();
  const std::size_t iterations = static_cast<std::size_t>(draws.iterations());
  const std::size_t total = iterations * static_cast<std::size_t>(draws.chains());
  // One byte per edge and draw (a double each would be 8 times the memory at 30 variables).
  std::vector<std::vector<char>> columns;  // per edge, all chains, chain-major
  std::vector<double> buffer(total);
  out << ".chain,.iteration,.draw";
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v) {
      if (u == v) continue;
      out << ',' << csv_field(names[std::size_t(u)] + "->" + names[std::size_t(v)]);
      draws.edge(u, v, buffer);
      auto& column = columns.emplace_back(total);
      for (std::size_t at = 0; at < total; ++at) column[at] = buffer[at] != 0 ? '1' : '0';
    }
  out << '\n';
  std::string row;
  for (int c = 0; c < draws.chains(); ++c)
    for (std::size_t t = 0; t < iterations; ++t) {
      const std::size_t at = static_cast<std::size_t>(c) * iterations + t;
      row = std::to_string(c + 1) + ',' + std::to_string(t + 1) + ',' + std::to_string(at + 1);
      for (const auto& column : columns) {
        row += ',';
        row += column[at];
      }
      out << row << '\n';
    }
}

void export_runs(const ExportRequest& request) {
  if (request.probabilities.empty() && request.edge_draws.empty())
    throw OptionError("export: give {probabilities} or {edge_draws} (or both)");
  if (!request.probabilities.empty() && request.edge_draws.empty() == false &&
      std::filesystem::absolute(request.probabilities).lexically_normal() ==
          std::filesystem::absolute(request.edge_draws).lexically_normal())
    throw OptionError("export: {probabilities} and {edge_draws} name the same file " +
                      request.edge_draws);
  // The one rule of every writer (require_new_output), before the runs are read.
  for (const std::string* path : {&request.probabilities, &request.edge_draws})
    if (!path->empty()) require_new_output(*path, request.force);
  const std::vector<ChainRun> runs = open_runs(request.runs);
  const std::vector<std::string>& names = runs.front().variables();
  const RunFeatures draws(runs, request.kinds.ancestors);
  if (!request.probabilities.empty()) {
    const std::vector<FeatureId> features = list_features(draws.num_variables(), request.kinds);
    const RunDiagnostics d = diagnose_run_with_progress(draws, features, "export: diagnostics");
    write_atomically(request.probabilities,
                     [&](std::ostream& out) { write_feature_csv(out, d, names); });
  }
  if (!request.edge_draws.empty())
    write_atomically(request.edge_draws,
                     [&](std::ostream& out) { write_edge_draws_csv(out, draws, names); });
}

}  // namespace covey
