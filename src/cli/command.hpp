#pragma once
// Subcommand registry: each src/cli/cmd_*.cpp registers itself with a static Registration, so
// adding a command touches no other file. Commands stay thin: parse options, call the library,
// print text or JSON.
#include <CLI/CLI.hpp>
#include <functional>
#include <string>

namespace covey::cli {

using CommandSetup = std::function<void(CLI::App& parent)>;

struct Registration {
  // `order` sorts the commands in `covey --help` (the order of the user's path).
  Registration(int order, CommandSetup setup);
};

void setup_all_commands(CLI::App& app);

}  // namespace covey::cli
