// covey: Bayesian posterior inference over Bayesian-network structures.
#include <CLI/CLI.hpp>
#include <exception>
#include <iostream>
#include <new>
#include <string>
#include <utility>

#include "command.hpp"
#include "common.hpp"
#include "covey/core/error.hpp"
#include "covey/core/version.hpp"

int main(int argc, char** argv) {
  covey::cli::set_command_line(argc, argv);
  CLI::App app{
      "covey: the posterior distribution over Bayesian-network structures (DAGs) from data.\n"
      "Score data, compute exact results on cover-bounded DAGs, run hybrid MCMC, check "
      "convergence, compare and report."};
  app.set_version_flag("--version", std::string("covey ") + covey::kVersion);
  app.require_subcommand(1);
  app.fallthrough(false);
  covey::cli::setup_all_commands(app);
  // Not an option of the help: the option table that tests/cli_vocabulary_test.cpp checks.
  if (argc == 2 && std::string(argv[1]) == "--list-options-json") {
    covey::cli::print_json(covey::cli::options_json(app));
    return 0;
  }
  // A word that names no command: say so and list them, rather than the parser's wording.
  std::string names;
  bool known = false;
  for (const CLI::App* cmd : std::as_const(app).get_subcommands({})) {
    names += (names.empty() ? "" : ", ") + cmd->get_name();
    known = known || (argc >= 2 && cmd->get_name() == argv[1]);
  }
  if (argc >= 2 && argv[1][0] != '-' && !known) {
    std::cerr << "covey: unknown command '" << argv[1] << "'; commands: " << names << "\n";
    return 2;
  }
  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    std::cerr << "covey: error: " << e.what() << " (see --help)\n";
    return 2;
  } catch (const covey::cli::CommandExit& e) {
    std::cerr << "covey: " << e.what() << "\n";
    return e.code();
  } catch (const std::bad_alloc&) {
    std::cerr << "covey: error: out of memory (reduce the problem size or see --help for the "
                 "options that shrink it)\n";
    return 3;
  } catch (const covey::ResourceError& e) {
    std::cerr << "covey: error: " << covey::cli::error_message(e) << "\n";
    return 3;
  } catch (const std::exception& e) {
    std::cerr << "covey: error: " << covey::cli::error_message(e) << "\n";
    return 1;
  }
  return 0;
}
