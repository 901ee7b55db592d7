#pragma once
// Pieces every command shares: thread control, JSON printing, the reconstructed command line.
#include <CLI/CLI.hpp>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include <tbb/global_control.h>

namespace covey::cli {

// The command line as typed (for provenance metadata in output files).
const std::string& command_line();
void set_command_line(int argc, char** argv);

// Adds --threads to a subcommand; apply_threads() installs the limit (0 = all cores).
void add_threads_option(CLI::App& cmd, int& threads);
std::unique_ptr<tbb::global_control> apply_threads(int threads);

// Prints JSON to stdout, two-space indented, with a trailing newline.
void print_json(const nlohmann::json& value);

}  // namespace covey::cli
