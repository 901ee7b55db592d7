#include "common.hpp"

#include <iostream>
#include <thread>

namespace covey::cli {

namespace {
CLI::Validator number_check(const char* name, bool allow_zero) {
  return CLI::Validator(
      [allow_zero](std::string& text) -> std::string {
        double value = 0;
        if (!CLI::detail::lexical_cast(text, value)) return "'" + text + "' is not a number";
        if (allow_zero ? value >= 0 : value > 0) return {};
        return std::string(allow_zero ? "must be at least 0" : "must be positive") + " (got " +
               text + ")";
      },
      name, name);
}
}  // namespace

const CLI::Validator kPositive = number_check("POSITIVE", false);
const CLI::Validator kNonNegative = number_check("NONNEGATIVE", true);
namespace {
std::string& stored_command_line() {
  static std::string line;
  return line;
}
}  // namespace

const std::string& command_line() {
  return stored_command_line();
}

void set_command_line(int argc, char** argv) {
  std::string line;
  for (int i = 0; i < argc; ++i) {
    if (i) line += ' ';
    line += argv[i];
  }
  stored_command_line() = line;
}

void add_threads_option(CLI::App& cmd, int& threads) {
  cmd.add_option("--threads", threads,
                 "Worker threads (0 = all cores); results do not depend on it")
      ->check(kNonNegative);
}

std::unique_ptr<tbb::global_control> apply_threads(int threads) {
  if (threads <= 0) return nullptr;
  return std::make_unique<tbb::global_control>(tbb::global_control::max_allowed_parallelism,
                                               static_cast<std::size_t>(threads));
}

void print_json(const nlohmann::json& value) {
  std::cout << value.dump(2) << "\n";
}

}  // namespace covey::cli
