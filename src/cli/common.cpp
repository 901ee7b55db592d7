#include "common.hpp"

#include <cmath>
#include <cstdio>
#include <iostream>
#include <thread>

#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"

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

std::uint64_t parse_count(const std::string& text, const std::string& option) {
  std::size_t used = 0;
  double value = -1;
  try {
    value = std::stod(text, &used);
  } catch (const std::exception&) {
    used = 0;
  }
  if (used != text.size() || !(value >= 0) || value > 1e19 || value != std::floor(value))
    throw InputError(option + ": '" + text + "' is not a whole number (e.g. 100000 or 1e5)");
  return static_cast<std::uint64_t>(value);
}

const CLI::Validator kCount(
    [](std::string& text) -> std::string {
      try {
        text = std::to_string(parse_count(text, "count"));
      } catch (const InputError&) {
        return "'" + text + "' is not a whole number (e.g. 100000 or 1e5)";
      }
      return {};
    },
    "COUNT", "COUNT");

void add_top_option(CLI::App& cmd, std::size_t& top) {
  top = 20;
  cmd.add_option("--top", top, "Rows shown per table of the text output (0: all)")
      ->transform(kCount)
      ->capture_default_str();
}

void add_max_time_option(CLI::App& cmd, std::string& text, const std::string& meaning) {
  cmd.add_option("--max-time", text, meaning + " (a duration such as 90s, 10m, 2h)")
      ->capture_default_str();
}

void add_seed_option(CLI::App& cmd, std::uint64_t& seed, const std::string& what) {
  cmd.add_option("--seed", seed, "Seed of " + what + "; results do not depend on --threads")
      ->check(CLI::Range(std::uint64_t{0}, std::uint64_t{9223372036854775807ULL}))
      ->capture_default_str();
}

nlohmann::json options_json(const CLI::App& app) {
  nlohmann::json out = nlohmann::json::object();
  for (const CLI::App* cmd : app.get_subcommands({})) {
    nlohmann::json options = nlohmann::json::array();
    for (const CLI::Option* opt : cmd->get_options()) {
      if (opt->get_name() == "--help" || opt->get_lnames().empty()) continue;  // positionals
      options.push_back({{"names", opt->get_lnames()},
                         {"flag", opt->get_expected_min() == 0},
                         {"required", opt->get_required()},
                         {"default", opt->get_default_str()},
                         {"type", opt->get_type_name()},
                         {"help", opt->get_description()}});
    }
    out[cmd->get_name()] = options;
  }
  return out;
}
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
  cmd.add_option("--threads", threads, "Worker threads (0: all cores); results do not depend on it")
      ->check(kNonNegative)
      ->capture_default_str();
}

void add_force_option(CLI::App& cmd, bool& force) {
  cmd.add_flag("--force", force, "replace output files that exist (default: refuse)");
}

void add_memory_limit_option(CLI::App& cmd, std::string& text) {
  cmd.add_option("--memory-limit", text,
                 "Refuse to start above this estimated memory, a size such as 512M, 4G (default: "
                 "COVEY_MEMORY_LIMIT or 80% of RAM)");
}

std::uint64_t memory_limit(const std::string& text) {
  return text.empty() ? 0 : parse_memory_size(text, "--memory-limit");
}

std::unique_ptr<tbb::global_control> apply_threads(int threads) {
  if (threads <= 0) return nullptr;
  return std::make_unique<tbb::global_control>(tbb::global_control::max_allowed_parallelism,
                                               static_cast<std::size_t>(threads));
}

std::string option_flag(const std::string& field) {
  // Library fields whose flag is not their own name.
  static const std::pair<const char*, const char*> kRenamed[] = {
      {"bins", "--bin"},
      {"ess", "--equivalent-sample-size"}, {"k", "--cover"},     {"max_rhat", "--rhat"},
      {"max_seconds", "--max-time"},       {"min_ess", "--ess"}, {"overwrite", "--force"},
  };
  for (const auto& [name, flag] : kRenamed)
    if (field == name) return flag;
  std::string flag = "--" + field;
  for (char& c : flag)
    if (c == '_' || c == '.') c = '-';
  return flag;
}

std::string error_message(const std::exception& error) {
  if (const auto* fields = dynamic_cast<const FieldMessage*>(&error))
    return fields->render(option_flag);
  return error.what();
}

void print_json(const nlohmann::json& value) {
  std::cout << value.dump(2) << "\n";
}

nlohmann::json json_number(double x) {
  if (std::isnan(x)) return nullptr;
  if (std::isinf(x)) return x > 0 ? "inf" : "-inf";
  return x;
}

std::string format_number(const char* spec, double x) {
  if (std::isnan(x)) return "undef";
  if (std::isinf(x)) return x > 0 ? "inf" : "-inf";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, spec, x);
  return buffer;
}

std::size_t display_width(const std::string& text) {
  std::size_t width = 0;
  for (const char c : text) width += (static_cast<unsigned char>(c) & 0xC0) != 0x80;
  return width;
}

std::string pad_right(const std::string& text, std::size_t width) {
  const std::size_t w = display_width(text);
  return w >= width ? text : text + std::string(width - w, ' ');
}

}  // namespace covey::cli
