// runnel init: writes a commented starter job file, or prints the job-file reference (docs/config.md).
#include <filesystem>
#include <iostream>

#include "command.hpp"
#include "libseq/caution.hpp"
#include "libseq/io/results.hpp"
#include "libseq/pipeline/job.hpp"

namespace runnel_app {

Command add_init_command(CLI::App& root) {
  auto* app = root.add_subcommand("init", "Write a commented starter job file (or print the job-file reference)");
  struct Args {
    std::string example;
    std::string output;
    bool reference = false;
    bool force = false;
  };
  auto args = std::make_shared<Args>();
  std::string kinds;
  for (const auto& k : libseq::pipeline::example_kinds()) kinds += (kinds.empty() ? "" : "|") + k;
  app->add_option("--example", args->example, "Starter job to write: " + kinds);
  app->add_option("-o,--output", args->output, "Where to write it (default: <example>.toml)");
  app->add_flag("--reference", args->reference, "Print the job-file reference in Markdown instead");
  app->add_flag("--force", args->force, "Overwrite an existing file");
  return {app, [args]() -> int {
            if (args->reference) {
              std::cout << libseq::pipeline::config_reference();
              return exit_ok;
            }
            if (args->example.empty()) {
              std::cerr << "runnel init: give --example with one of the kinds, or --reference\n";
              return exit_usage;
            }
            const std::string text = libseq::pipeline::example_job(args->example);
            const std::filesystem::path path = args->output.empty() ? args->example + ".toml" : args->output;
            if (std::filesystem::exists(path) && !args->force) {
              std::cerr << "runnel init: " << path.string() << " exists; use --force to overwrite it\n";
              return exit_bad_input;
            }
            libseq::io::write_text_atomically(path, text);
            std::cout << "wrote " << path.string() << "\n";
            return exit_ok;
          }};
}

}  // namespace runnel_app
