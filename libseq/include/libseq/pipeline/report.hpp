#pragma once
/// @file report.hpp
/// The HTML report of a run: one self-contained file (inline CSS, a small inline script, charts as inline SVG)
/// that opens offline, built only from io::RunResults. What each element shows and how it is computed:
/// docs/report.md.

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <limits>
#include <span>
#include <string>
#include <vector>

#include "libseq/io/results.hpp"

namespace libseq::pipeline {

/// What the report shows and how much of it. Defaults suit a run of a few hundred sites.
struct ReportOptions {
  /// Heading of the report; empty uses RunResults::title (or "runnel results" when that is empty too).
  std::string title;
  /// Method whose quantiles give the shaded bands, the PIT histogram and the reliability diagram.
  std::string network_method = "network";
  /// Upper bound on the points drawn per series in the hindcast charts; longer series are thinned keeping each
  /// bucket's minimum and maximum, so peaks survive. Costs about 8 bytes per point per series in the file.
  std::size_t max_points_per_series = 1500;
  /// Leads (in steps, values of RunResults::leads) that get a hindcast chart; empty chooses automatically: the
  /// first lead and then up to `max_chart_leads` − 1 more, evenly spread and including the last.
  std::vector<std::int64_t> chart_leads;
  /// How many leads get a hindcast chart when `chart_leads` is empty.
  std::size_t max_chart_leads = 3;
  /// Equal-width bins of the PIT histogram over [0, 1].
  std::size_t pit_bins = 10;
  /// How many site sections (in site order) are expanded when the page opens; the others are collapsed.
  std::size_t open_sites = 1;

  /// @throws libseq::ConfigError listing every option out of range (key, value, expectation).
  void validate() const;
};

/// The report as one HTML document (UTF-8).
/// @throws libseq::ConfigError when `options` is invalid; libseq::DataError when `results` fails
/// RunResults::validate() or a lead of `options.chart_leads` is not among RunResults::leads.
/// Pure function of its arguments; thread-safe.
std::string render_report(const io::RunResults& results, const ReportOptions& options = {});

/// Renders the report and writes it to `path` through a temporary file and a rename (io::write_text_atomically),
/// so a reader never sees half a file.
/// @throws what render_report throws; libseq::IoError naming the path when it cannot be written.
void write_report(const std::filesystem::path& path, const io::RunResults& results, const ReportOptions& options = {});

/// PIT of one observation from a quantile set: the predictive CDF F(y) taken as the piecewise-linear curve through
/// the points (q_j, τ_j); below the lowest quantile τ_1/2 and above the highest (1 + τ_Q)/2, the middle of the tail
/// that a quantile set does not describe (metrics::pit_quantiles, so the report agrees with the scorecard).
/// Crossed quantiles are sorted first; where several quantiles equal
/// y the result is the mean of their levels. `levels` (Q values in (0, 1), increasing) pairs with `quantiles`
/// (Q values). Returns NaN when y or a quantile is not finite, or when Q is 0 or the sizes differ.
double quantile_set_pit(std::span<const double> levels, std::span<const float> quantiles, double observed);

/// One point of a reliability diagram.
struct ReliabilityPoint {
  double nominal = std::numeric_limits<double>::quiet_NaN();   ///< quantile level τ
  double observed = std::numeric_limits<double>::quiet_NaN();  ///< fraction of cases with y ≤ q_τ; NaN if no case
  std::size_t cases = 0;                                       ///< cases with finite y and finite quantiles
};

/// Per-site statistics of a quantile forecast that the report draws.
struct QuantileCalibration {
  std::vector<std::size_t> pit_counts;        ///< PIT histogram: counts per equal bin of [0, 1], last bin closed
  std::vector<ReliabilityPoint> reliability;  ///< one point per quantile level
  std::size_t cases = 0;                      ///< cases with a finite PIT
};

/// PIT histogram (quantile_set_pit per case) and reliability points of n cases: `observed` has n values,
/// `quantiles` n × Q (case-major), `levels` Q. Cases with a missing observation or quantile are skipped.
/// @throws libseq::DataError when the sizes disagree; libseq::ConfigError when `bins` is 0.
QuantileCalibration quantile_calibration(std::span<const double> levels, std::span<const float> quantiles,
                                         std::span<const float> observed, std::size_t bins);

}  // namespace libseq::pipeline
