// runnel report RESULTS.h5 [-o REPORT.html]: reads a results file, writes the self-contained HTML report
// (libseq::pipeline::write_report), prints where it went and the caution text. Usage: docs/commands/report.md.
#include <filesystem>
#include <iostream>
#include <memory>

#include "command.hpp"
#include "libseq/caution.hpp"
#include "libseq/io/results.hpp"
#include "libseq/pipeline/report.hpp"

namespace runnel_app {

Command add_report_command(CLI::App& root) {
  struct Arguments {
    std::string results;
    std::string output;
    libseq::pipeline::ReportOptions options;
  };
  auto args = std::make_shared<Arguments>();
  auto* app = root.add_subcommand("report",
                                  "Write a self-contained HTML report (charts, scores, provenance) of a "
                                  "results file");
  app->add_option("results", args->results, "Results file written by `runnel run` (HDF5)")->required();
  app->add_option("-o,--output", args->output, "Report to write (default: the results path with .html)");
  app->add_option("--lead", args->options.chart_leads,
                  "Lead (steps) to chart; repeat for several (default: first, "
                  "middle and last)");
  app->add_option("--max-points", args->options.max_points_per_series, "Most points drawn per series")
      ->capture_default_str();
  app->add_option("--open-sites", args->options.open_sites, "Site sections expanded when the page opens")
      ->capture_default_str();
  return {app, [args] {
            args->options.validate();
            std::filesystem::path output = args->output;
            if (output.empty()) output = std::filesystem::path(args->results).replace_extension(".html");
            const auto results = libseq::io::read_results_hdf5(args->results);
            libseq::pipeline::write_report(output, results, args->options);
            std::cout << "report: " << output.string() << " (" << results.sites.size() << " sites)\n"
                      << libseq::caution_text() << "\n";
            return static_cast<int>(exit_ok);
          }};
}

}  // namespace runnel_app
