#include "common.hpp"

#include <iostream>
#include <thread>

namespace covey::cli {
namespace {
std::string& stored_command_line() {
  static std::string line;
  return line;
}
}  // namespace

const std::string& command_line() { return stored_command_line(); }

void set_command_line(int argc, char** argv) {
  std::string line;
  for (int i = 0; i < argc; ++i) {
    if (i) line += ' ';
    line += argv[i];
  }
  stored_command_line() = line;
}

void add_threads_option(CLI::App& cmd, int& threads) {
  cmd.add_option("--threads", threads, "Worker threads (0 = all cores); results do not depend on it")
      ->check(CLI::NonNegativeNumber);
}

std::unique_ptr<tbb::global_control> apply_threads(int threads) {
  if (threads <= 0) return nullptr;
  return std::make_unique<tbb::global_control>(tbb::global_control::max_allowed_parallelism,
                                               static_cast<std::size_t>(threads));
}

void print_json(const nlohmann::json& value) { std::cout << value.dump(2) << "\n"; }

}  // namespace covey::cli
