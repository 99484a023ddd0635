// cylzone command-line tool: argument parsing and printing only; all numerical work is in the
// library. Exit codes: 0 success / all conform, 1 a non-conforming result, 2 input error.
#include <CLI/CLI.hpp>
#include <exception>
#include <iostream>

#include "cli/commands.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/version.hpp"

int main(int argc, char** argv) {
  CLI::App app{"cylzone: full-depth cylindrical-zone evaluation of bores from probe points"};
  app.set_version_flag("--version", std::string("cylzone ") + cylzone::version_string);
  app.require_subcommand(1);
  cylzone::cli::CommandResult result;
  cylzone::cli::add_check_command(app, result);
  cylzone::cli::add_fit_command(app, result);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? 0 : cylzone::cli::exit_input_error;
  }
  try {
    return result.run ? result.run() : cylzone::cli::exit_input_error;
  } catch (const cylzone::InputError& e) {
    std::cerr << "cylzone: error: " << e.what() << '\n';
  } catch (const cylzone::FitError& e) {
    std::cerr << "cylzone: error: " << result.context << e.what() << '\n';
  } catch (const std::exception& e) {
    std::cerr << "cylzone: error: " << e.what() << '\n';
  }
  return cylzone::cli::exit_input_error;
}
