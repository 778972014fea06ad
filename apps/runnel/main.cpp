// runnel: the command-line tool. Parses the subcommand, runs it, and maps libseq errors to documented exit codes
// (0 ok, 1 usage, 2 bad input, 3 run failed; see docs/commands/README.md).

#include <iostream>

#include "command.hpp"
#include "libseq/error.hpp"
#include "libseq/version.hpp"

int main(int argc, char** argv) {
  using namespace runnel_app;
  CLI::App root{"runnel: recurrent-network ensembles for calibrated probabilistic forecasts of gauge, climate and "
                "load records"};
  root.require_subcommand(1);
  root.set_version_flag("--version", "runnel " + libseq::version() + " (" + libseq::git_commit() + ")");
  std::vector<Command> commands{add_inspect_command(root), add_init_command(root), add_run_command(root),
                                add_report_command(root), add_fit_command(root),
                                add_forecast_command(root), add_score_command(root)};
  try {
    root.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return root.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return root.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return root.exit(e);
  } catch (const CLI::ParseError& e) {
    root.exit(e);
    return exit_usage;
  }
  for (const Command& command : commands) {
    if (!command.app->parsed()) continue;
    try {
      return command.run();
    } catch (const libseq::Error& e) {
      // Config, I/O, format and data errors are the user's input at fault; anything else is a failed run.
      const bool bad_input = dynamic_cast<const libseq::ConfigError*>(&e) || dynamic_cast<const libseq::IoError*>(&e) ||
                             dynamic_cast<const libseq::FormatError*>(&e) || dynamic_cast<const libseq::DataError*>(&e);
      std::cerr << "runnel " << command.app->get_name() << ": " << e.what() << "\n";
      return bad_input ? exit_bad_input : exit_run_failed;
    } catch (const std::exception& e) {
      std::cerr << "runnel " << command.app->get_name() << ": failed: " << e.what() << "\n";
      return exit_run_failed;
    }
  }
  return exit_usage;
}
