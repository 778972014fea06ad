// runnel inspect FILE... [--json] [--variable NAME]...: a thin shell over libseq::pipeline::inspect_files.
#include <iostream>
#include <memory>

#include "command.hpp"
#include "libseq/pipeline/inspect.hpp"

namespace runnel_app {

Command add_inspect_command(CLI::App& root) {
  struct Arguments {
    std::vector<std::string> files;
    std::vector<std::string> variables;
    bool json = false;
  };
  auto args = std::make_shared<Arguments>();
  auto* app = root.add_subcommand("inspect",
                                  "Summarise gauge, climate or load files: format, sites, variables, "
                                  "time axis and missing values");
  app->add_option("files", args->files, "Input files (CF NetCDF, runnel HDF5 or CSV; told apart by content)")
      ->required();
  app->add_flag("--json", args->json, "Print the report as JSON instead of text tables");
  app->add_option("--variable", args->variables,
                  "Read only this variable (name or CF standard_name); repeat for several")
      ->allow_extra_args(false);

  return {app, [args] {
            libseq::io::ReadOptions options;
            options.variables = args->variables;
            std::vector<std::filesystem::path> paths(args->files.begin(), args->files.end());
            const libseq::pipeline::InspectReport report = libseq::pipeline::inspect_files(paths, options);
            std::cout << (args->json ? report.to_json() : report.to_text());
            if (report.failed_count() == 0) return static_cast<int>(exit_ok);
            // One line on stderr naming the files that failed; their errors are in the report itself.
            std::string failed;
            for (const auto& file : report.files) {
              if (!file.ok()) failed += (failed.empty() ? "" : ", ") + file.path;
            }
            std::cerr << "runnel inspect: " << report.failed_count() << " of " << report.files.size()
                      << " files could not be read: " << failed << "\n";
            return static_cast<int>(exit_bad_input);
          }};
}

}  // namespace runnel_app
