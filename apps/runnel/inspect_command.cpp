// runnel inspect FILE...: placeholder registration until the readers land (issue 2); replaced by the real shell.
#include "command.hpp"

namespace runnel_app {

Command add_inspect_command(CLI::App& root) {
  auto* app = root.add_subcommand("inspect", "Summarise gauge, climate or load files: sites, variables, time range");
  auto files = std::make_shared<std::vector<std::string>>();
  app->add_option("files", *files, "Input files (CF NetCDF, runnel HDF5, CSV)")->required();
  return {app, [] { return static_cast<int>(exit_run_failed); }};
}

}  // namespace runnel_app
