// runnel run JOB.toml: the batch hindcast job (docs/commands/run.md).
#include <iostream>

#include "command.hpp"
#include "libseq/caution.hpp"
#include "libseq/pipeline/job.hpp"
#include "libseq/pipeline/run.hpp"
#include "progress.hpp"

namespace runnel_app {

Command add_run_command(CLI::App& root) {
  auto* app = root.add_subcommand("run", "Run a batch hindcast job: train, calibrate, score against baselines, write");
  struct Args {
    std::string job;
    int threads = 0;
    std::uint64_t seed = 0;
    bool quiet = false;
    bool resume = false;
  };
  auto args = std::make_shared<Args>();
  app->add_option("job", args->job, "Job file (TOML; see docs/config.md)")->required();
  auto* threads = app->add_option("--threads", args->threads, "OpenMP threads (overrides job.threads)")
                      ->check(CLI::Range(1, 1024));
  auto* seed = app->add_option("--seed", args->seed, "Base seed (overrides job.seed)");
  app->add_flag("-q,--quiet", args->quiet, "No progress output");
  app->add_flag("--resume", args->resume, "Continue a killed run: models already finished are not retrained");
  return {app, [args, threads, seed]() -> int {
            const libseq::pipeline::JobConfig job = libseq::pipeline::load_job(args->job);
            libseq::pipeline::RunOptions options;
            if (threads->count()) options.threads = args->threads;
            if (seed->count()) options.seed = args->seed;
            options.resume = args->resume;
            ProgressPrinter printer(args->quiet);
            options.progress = [&printer](const libseq::pipeline::Progress& p) { printer(p); };
            const auto summary = libseq::pipeline::run_job(job, options);
            printer.finish();
            std::cout << summary.full_report() << "\n" << summary.brief_report() << "\n"
                      << libseq::caution_text() << "\n";
            return exit_ok;
          }};
}

}  // namespace runnel_app
