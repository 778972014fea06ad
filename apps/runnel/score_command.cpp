// runnel score RESULTS.h5: re-scores a results file with other metrics, intervals or a sub-period
// (docs/commands/score.md).
#include <iostream>

#include "command.hpp"
#include "libseq/caution.hpp"
#include "libseq/data/periods.hpp"
#include "libseq/io/results.hpp"
#include "libseq/pipeline/run.hpp"
#include "libseq/pipeline/score.hpp"

namespace runnel_app {

Command add_score_command(CLI::App& root) {
  auto* app = root.add_subcommand("score", "Re-score a results file: other metrics, intervals or a sub-period");
  struct Args {
    std::string results;
    std::string period;
    std::vector<std::string> metrics;
    std::vector<double> intervals;
    std::size_t bootstrap = 0;
    std::string output;
  };
  auto args = std::make_shared<Args>();
  app->add_option("results", args->results, "Results file written by runnel run (results.h5)")->required();
  app->add_option("--period", args->period, "Score only issue times in START..END (ISO 8601)");
  app->add_option("--metric", args->metrics, "Metric to report (repeatable; default: every applicable one)");
  app->add_option("--interval", args->intervals, "Central interval coverage to score (repeatable; default 0.9)")
      ->check(CLI::Range(0.01, 0.999));
  app->add_option("--bootstrap", args->bootstrap, "Moving-block bootstrap resamples for metric intervals");
  app->add_option("-o,--output", args->output, "Write the re-scored results (restricted to the period) here");
  return {app, [args]() -> int {
            const libseq::io::RunResults results = libseq::io::read_results_hdf5(args->results);
            std::optional<libseq::data::Period> period;
            if (!args->period.empty()) period = libseq::data::parse_period(args->period, "--period");
            libseq::pipeline::ScoringOptions options;
            options.metrics = args->metrics;
            if (!args->intervals.empty()) options.intervals = args->intervals;
            options.bootstrap_resamples = args->bootstrap;
            libseq::pipeline::RunSummary summary;
            summary.results = libseq::pipeline::rescore(results, period, options);
            if (!args->output.empty()) {
              libseq::io::write_results_hdf5(args->output, summary.results);
              summary.outputs.push_back(args->output);
            }
            std::cout << summary.full_report();
            for (const auto& path : summary.outputs) std::cout << "wrote " << path.string() << "\n";
            std::cout << "\n" << libseq::caution_text() << "\n";
            return exit_ok;
          }};
}

}  // namespace runnel_app
