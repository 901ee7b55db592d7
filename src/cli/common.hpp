#pragma once
// Pieces every command shares: thread control, JSON printing, the reconstructed command line.
#include <CLI/CLI.hpp>
#include <cstdint>
#include <exception>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include <tbb/global_control.h>

namespace covey::cli {

// The command line as typed (for provenance metadata in output files).
const std::string& command_line();
void set_command_line(int argc, char** argv);

// Number checks for options, named like CLI11's own (the help shows INT:POSITIVE, ...) but with
// a plain message: "--draws: must be positive (got 0)".
extern const CLI::Validator kPositive;
extern const CLI::Validator kNonNegative;
// Counts as users type them, in every option that takes one: 100000, 1e5, 2.5e7 (a whole
// number); rewrites the text to its digits for the typed option behind it.
extern const CLI::Validator kCount;
// The whole number `text` stands for (see kCount); InputError naming `option` otherwise.
std::uint64_t parse_count(const std::string& text, const std::string& option);

// The one spelling of the options several commands share (tests/cli_vocabulary_test.cpp holds
// every command to it): --top, --max-time, --seed.
void add_top_option(CLI::App& cmd, std::size_t& top);
void add_max_time_option(CLI::App& cmd, std::string& text, const std::string& meaning);
void add_seed_option(CLI::App& cmd, std::uint64_t& seed, const std::string& what);

// Adds --threads to a subcommand; apply_threads() installs the limit (0 = all cores).
void add_threads_option(CLI::App& cmd, int& threads);
// --memory-limit SIZE, the ceiling of every command's memory estimate; memory_limit() parses it
// (0 when not given: default_memory_limit(), that is COVEY_MEMORY_LIMIT or 80% of RAM).
void add_memory_limit_option(CLI::App& cmd, std::string& text);
// --force: replace existing output files (every command that writes one has it; the library
// refuses otherwise, see require_new_output).
void add_force_option(CLI::App& cmd, bool& force);
std::uint64_t memory_limit(const std::string& text);
std::unique_ptr<tbb::global_control> apply_threads(int threads);

// JSON has no NaN or infinity: undefined values are null, infinite ones the string "inf".
nlohmann::json json_number(double x);
// printf-formatted number, "undef" for NaN and "inf"/"-inf" for infinities.
std::string format_number(const char* spec, double x);

// Columns a text takes on a terminal (UTF-8: continuation bytes take none; names hold arrows
// such as "→"), and the text padded with spaces to `width` columns.
std::size_t display_width(const std::string& text);
std::string pad_right(const std::string& text, std::size_t width);

// The flag that sets a library field named in an OptionError: "--" + the field with '_' and '.'
// as '-' ("bge.alpha_w" -> "--bge-alpha-w"), or the flag of the few fields spelled otherwise.
std::string option_flag(const std::string& field);
// An exception's message as the CLI prints it: OptionError fields spelled as their flags.
std::string error_message(const std::exception& error);

// Every command's options as JSON (names, flag, required, default, type, help): what the hidden
// `covey --list-options-json` prints for the vocabulary test.
nlohmann::json options_json(const CLI::App& app);

// Prints JSON to stdout, two-space indented, with a trailing newline.
void print_json(const nlohmann::json& value);

// Thrown by a command whose output is complete but whose outcome needs a distinct exit status
// (e.g. `check --strict` when thresholds fail); main() prints "covey: <message>" on stderr and
// exits with `code`.
class CommandExit : public std::exception {
 public:
  CommandExit(int code, std::string message) : code_(code), message_(std::move(message)) {}
  int code() const { return code_; }
  const char* what() const noexcept override { return message_.c_str(); }

 private:
  int code_;
  std::string message_;
};

}  // namespace covey::cli
