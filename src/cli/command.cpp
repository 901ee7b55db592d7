#include "command.hpp"

#include <algorithm>
#include <utility>
#include <vector>

namespace covey::cli {
namespace {
std::vector<std::pair<int, CommandSetup>>& registry() {
  static std::vector<std::pair<int, CommandSetup>> commands;
  return commands;
}
}  // namespace

Registration::Registration(int order, CommandSetup setup) {
  registry().emplace_back(order, std::move(setup));
}

void setup_all_commands(CLI::App& app) {
  auto& commands = registry();
  std::stable_sort(commands.begin(), commands.end(),
                   [](const auto& a, const auto& b) { return a.first < b.first; });
  for (auto& [order, setup] : commands) setup(app);
}

}  // namespace covey::cli
