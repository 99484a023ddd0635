// cylzone command-line tool: argument parsing and printing only; all numerical work is in the
// library. Exit codes (commands.hpp): 0 success / all conform, 1 a characteristic does not
// conform, 2 input or argument error, 3 conformance not proven.
#include <CLI/CLI.hpp>
#include <exception>
#include <iostream>

#include "cli/commands.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/version.hpp"

int main(int argc, char** argv) {
  // The name is fixed so the usage line never shows the path the binary was started from.
  CLI::App app{"cylzone: full-depth cylindrical-zone evaluation of bores from probe points",
               "cylzone"};
  app.set_version_flag("--version", std::string("cylzone ") + cylzone::version_string);
  app.require_subcommand(1);
  app.footer(std::string(cylzone::cli::exit_code_help) + "\n");
  cylzone::cli::CommandResult result;
  cylzone::cli::add_check_command(app, result);
  cylzone::cli::add_fit_command(app, result);
  cylzone::cli::add_audit_command(app, result);
  cylzone::cli::add_forecast_command(app, result);
  cylzone::cli::add_advise_command(app, result);
  // CLI11 reports a mistyped command as "a subcommand is required": name it instead.
  if (argc > 1 && argv[1][0] != '-' && app.get_subcommands([&](CLI::App* sub) {
        return sub->get_name() == argv[1];
      }).empty()) {
    std::cerr << "cylzone: error: unknown command '" << cylzone::cli::one_line(argv[1], 100)
              << "' (expected check, fit, audit, forecast or advise; cylzone --help lists them)\n";
    return cylzone::cli::exit_input_error;
  }
  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);  // help and version go to stdout, exit 0
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    // Unknown option, missing value, bad number, missing argument: the tool's one-line form.
    std::cerr << "cylzone: error: " << cylzone::cli::one_line(e.what())
              << " (cylzone --help lists the options)\n";
    return cylzone::cli::exit_input_error;
  }
  try {
    return result.run ? result.run() : cylzone::cli::exit_input_error;
  } catch (const cylzone::InputError& e) {
    std::cerr << "cylzone: error: " << cylzone::cli::one_line(e.what()) << '\n';
  } catch (const cylzone::FitError& e) {
    std::cerr << "cylzone: error: " << cylzone::cli::one_line(result.context + e.what()) << '\n';
  } catch (const std::exception& e) {
    std::cerr << "cylzone: error: " << cylzone::cli::one_line(e.what()) << '\n';
  }
  return cylzone::cli::exit_input_error;
}
