// runnel fit JOB.toml [-o model.h5]: trains the job's models once and writes one model bundle of the whole job
// (libseq::pipeline::fit_job), for `runnel forecast`. Usage and exit codes: docs/commands/fit.md.
#include <iostream>
#include <memory>

#include "command.hpp"
#include "libseq/caution.hpp"
#include "libseq/pipeline/job.hpp"
#include "libseq/pipeline/operational.hpp"
#include "progress.hpp"

namespace runnel_app {


Command add_fit_command(CLI::App& root) {
  auto* app = root.add_subcommand("fit",
                                  "Train a job's models once and write one model bundle for operational "
                                  "forecasts");
  struct Args {
    std::string job;
    std::string output;
    int threads = 0;
    std::uint64_t seed = 0;
    bool quiet = false;
  };
  auto args = std::make_shared<Args>();
  app->add_option("job", args->job, "Job file (TOML; see docs/config.md)")->required();
  app->add_option("-o,--output", args->output, "Bundle to write (default: model.h5 in the job's output directory)");
  auto* threads =
      app->add_option("--threads", args->threads, "OpenMP threads (overrides job.threads)")->check(CLI::Range(1, 1024));
  auto* seed = app->add_option("--seed", args->seed, "Base seed (overrides job.seed)");
  app->add_flag("-q,--quiet", args->quiet, "No progress output");
  return {app, [args, threads, seed]() -> int {
            const libseq::pipeline::JobConfig job = libseq::pipeline::load_job(args->job);
            libseq::pipeline::RunOptions options;
            if (threads->count()) options.threads = args->threads;
            if (seed->count()) options.seed = args->seed;
            ProgressPrinter printer(args->quiet);
            options.progress = [&printer](const libseq::pipeline::Progress& p) { printer(p); };
            const auto summary = libseq::pipeline::fit_job(job, options, args->output);
            printer.finish();
            std::cout << summary.brief_report() << libseq::caution_text() << "\n";
            return exit_ok;
          }};
}

}  // namespace runnel_app
