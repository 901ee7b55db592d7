// `covey import-scores`, `covey export-scores` and `covey info`: moving score tables between
// covey's HDF5 layout and the plain-text TSV format, and describing a table.
#include <iostream>
#include <variant>

#include "command.hpp"
#include "common.hpp"
#include "core/attributes_json.hpp"
#include "covey/scores/score_io.hpp"

namespace covey::cli {
namespace {

void setup_import(CLI::App& app) {
  auto* cmd = app.add_subcommand("import-scores", "Convert a TSV file of local scores to HDF5");
  auto input = std::make_shared<std::string>();
  auto output = std::make_shared<std::string>();
  auto force = std::make_shared<bool>(false);
  cmd->add_option("FILE", *input, "TSV local scores (see docs/file-formats.md)")->required();
  cmd->add_option("-o,--output", *output, "HDF5 score table to write")->required();
  add_force_option(*cmd, *force);
  cmd->callback([input, output, force] {
    ScoreTable table = read_scores_tsv(*input);
    table.metadata().command_line = command_line();
    write_scores_hdf5(table, *output, *force);
  });
}

void setup_export(CLI::App& app) {
  auto* cmd = app.add_subcommand("export-scores", "Write a score table as TSV local scores");
  auto input = std::make_shared<std::string>();
  auto output = std::make_shared<std::string>();
  auto force = std::make_shared<bool>(false);
  cmd->add_option("SCORES", *input, "score table (HDF5 or .tsv)")->required();
  cmd->add_option("-o,--output", *output, "TSV file to write")->required();
  add_force_option(*cmd, *force);
  cmd->callback([input, output, force] { write_scores_tsv(load_scores(*input), *output, *force); });
}

void setup_info(CLI::App& app) {
  auto* cmd = app.add_subcommand("info", "Describe a score table: variables, kinds, parent sets");
  auto input = std::make_shared<std::string>();
  auto json = std::make_shared<bool>(false);
  cmd->add_option("SCORES", *input, "score table (HDF5 or .tsv)")->required();
  cmd->add_flag("--json", *json, "Print JSON");
  cmd->callback([input, json] {
    const ScoreTable table = load_scores(*input);
    const ScoreMetadata& m = table.metadata();
    nlohmann::json out;
    out["file"] = *input;
    out["score"] = m.score;
    out["prior"] = m.prior;
    out["parameters"] = attributes_to_json(m.parameters);
    out["max_indegree"] = m.max_indegree;
    out["num_rows"] = m.num_rows;
    out["source"] = m.source;
    out["covey_version"] = m.covey_version;
    out["command_line"] = m.command_line;
    out["memory_bytes"] = table.memory_bytes();
    out["total_parent_sets"] = table.total_parent_sets();
    out["variables"] = nlohmann::json::array();
    for (int v = 0; v < table.num_variables(); ++v) {
      const Variable& var = table.variables()[v];
      const auto became = attribute_string(m.parameters, "column:" + var.name);
      out["variables"].push_back(
          {{"name", var.name},
           {"kind", m.score == "imported" ? "imported" : to_string(var.kind)},
           {"levels", var.levels},
           {"became", became ? *became : ""},
           {"candidate_parents", table.candidates(v).size()},
           {"parent_sets", table.num_parent_sets(v)}});
    }
    const auto standardized = m.parameters.find("standardized");
    if (standardized != m.parameters.end() && std::holds_alternative<bool>(standardized->second))
      out["units"] = std::get<bool>(standardized->second)
                         ? "standardized: each column scaled to mean 0 and standard deviation 1 "
                           "before BGe"
                         : "raw: columns scored in their own units (--raw-units)";
    if (*json) return print_json(out);
    std::cout << *input << ": " << table.num_variables() << " variables, "
              << table.total_parent_sets() << " parent sets, score " << m.score << ", prior "
              << m.prior << ", " << table.memory_bytes() / 1024.0 / 1024.0 << " MiB\n";
    if (m.num_rows >= 0)
      std::cout << "scored from " << m.num_rows << " rows of " << m.source << "\n";
    Attributes shown;  // the per-column phrases go into the table below
    for (const auto& [key, value] : m.parameters)
      if (key.rfind("column:", 0) != 0) shown.emplace(key, value);
    if (!shown.empty()) std::cout << "parameters: " << attributes_to_json(shown).dump() << "\n";
    if (out.contains("units")) std::cout << "units: " << out["units"].get<std::string>() << "\n";
    std::cout << "variable\tkind\tlevels\tcandidates\tparent_sets\tbecame\n";
    for (const auto& v : out["variables"])
      std::cout << v["name"].get<std::string>() << '\t' << v["kind"].get<std::string>() << '\t'
                << v["levels"].size() << '\t' << v["candidate_parents"] << '\t' << v["parent_sets"]
                << '\t' << v["became"].get<std::string>() << '\n';
  });
}

const Registration import_registration(20, setup_import);
const Registration export_registration(21, setup_export);
const Registration info_registration(22, setup_info);

}  // namespace
}  // namespace covey::cli
