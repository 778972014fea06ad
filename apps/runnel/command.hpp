#pragma once
// How subcommands plug into main.cpp: each subcommand file defines one `add_<name>_command` that registers its
// options on the root CLI11 app and returns the function to run once parsing succeeded.

#include <CLI/CLI.hpp>
#include <functional>
#include <vector>

namespace runnel_app {

/// Exit codes of every command (documented in docs/commands/README.md).
enum ExitCode : int { exit_ok = 0, exit_usage = 1, exit_bad_input = 2, exit_run_failed = 3 };

/// A registered subcommand: its CLI11 node and what to run when it was chosen.
struct Command {
  CLI::App* app = nullptr;
  std::function<int()> run;
};

Command add_inspect_command(CLI::App& root);
Command add_init_command(CLI::App& root);
Command add_run_command(CLI::App& root);
Command add_report_command(CLI::App& root);
Command add_fit_command(CLI::App& root);
Command add_forecast_command(CLI::App& root);
Command add_score_command(CLI::App& root);

}  // namespace runnel_app
