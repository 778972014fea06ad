// runnel forecast --bundle B --data FILE --issue-time T --horizon H: an operational forecast from a model bundle
// written by `runnel fit`, without retraining (libseq::pipeline::forecast_from_bundle). Usage and exit codes:
// docs/commands/forecast.md.
#include <iostream>
#include <memory>

#include "command.hpp"
#include "libseq/caution.hpp"
#include "libseq/data/time_axis.hpp"
#include "libseq/pipeline/operational.hpp"

namespace runnel_app {


Command add_forecast_command(CLI::App& root) {
  auto* app = root.add_subcommand("forecast",
                                  "Issue calibrated quantile forecasts from a model bundle and the "
                                  "latest data");
  struct Args {
    std::string bundle;
    std::vector<std::string> data;
    std::string issue_time;
    std::size_t horizon = 0;
    std::string output = "forecast.csv";
    std::string netcdf;
    int threads = 0;
  };
  auto args = std::make_shared<Args>();
  app->add_option("--bundle", args->bundle, "Model bundle written by `runnel fit`")->required();
  app->add_option("--data", args->data, "Data file with the latest values (repeat for several)")->required();
  app->add_option("--issue-time", args->issue_time, "Issue time, ISO 8601 UTC: the last step the forecast may use")
      ->required();
  app->add_option("--horizon", args->horizon, "Lead times 1..H (at most the job's horizon)")->required();
  app->add_option("-o,--output", args->output, "CSV forecast to write")->capture_default_str();
  app->add_option("--netcdf", args->netcdf, "Also write the forecast as CF NetCDF-4 here");
  auto* threads =
      app->add_option("--threads", args->threads, "OpenMP threads (overrides the job's)")->check(CLI::Range(1, 1024));
  return {app, [args, threads]() -> int {
            const auto issue = libseq::data::parse_iso8601(args->issue_time, "--issue-time");
            libseq::pipeline::ForecastOptions options;
            if (threads->count()) options.threads = args->threads;
            options.csv = args->output;
            if (!args->netcdf.empty()) options.netcdf = args->netcdf;
            const std::vector<std::filesystem::path> data(args->data.begin(), args->data.end());
            const auto forecast =
                libseq::pipeline::forecast_from_bundle(args->bundle, data, issue, args->horizon, options);
            std::cout << forecast.brief_report() << libseq::caution_text() << "\n";
            return exit_ok;
          }};
}

}  // namespace runnel_app
