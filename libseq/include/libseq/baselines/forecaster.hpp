#pragma once
/// @file forecaster.hpp
/// The one interface every classical baseline offers, so the batch job calls persistence, climatology, ridge ARX,
/// exponential smoothing and the local level model the same way: fit on a range of a target series (NaN = missing)
/// with optional input series, then forecast leads 1..H from a list of issue indices.
///
/// Index convention: an issue index t means the forecast is made with the target known up to and including step t
/// (and inputs up to step t, or up to t + lead for a method told that future inputs are known). Lead h (1-based)
/// forecasts step t + h. Ranges are half-open [begin, end) in steps of the series.

#include <cstddef>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/data/time_axis.hpp"

namespace libseq::baselines {

/// A half-open range of time-step indices [begin, end). Empty when begin >= end.
struct IndexRange {
  std::size_t begin = 0;
  std::size_t end = 0;
  bool empty() const { return begin >= end; }
  std::size_t size() const { return empty() ? 0 : end - begin; }
  bool contains(std::size_t i) const { return i >= begin && i < end; }
};

/// Non-owning views of one site's series: the target and optional exogenous inputs, all of the same length,
/// NaN = missing. The caller keeps the storage alive while a Forecaster uses the views.
struct SeriesSet {
  std::span<const double> target;              ///< Target series, one value per step.
  std::vector<std::span<const double>> inputs;  ///< Input series (e.g. precipitation, temperature), same length.
  data::TimeAxis axis;  ///< Time of each step; only climatology needs it (length must match the target then).

  std::size_t length() const { return target.size(); }
  /// @throws libseq::DataError naming `what` when an input's length differs from the target's.
  void check(std::string_view what) const;
};

/// Point forecasts laid out issue-major: value(i, h) is the forecast from issues[i] for lead h + 1.
/// NaN where a method cannot forecast (e.g. persistence with no observed value before the issue).
struct PointForecasts {
  std::vector<std::size_t> issues;  ///< Issue indices, in the order requested.
  std::size_t horizon = 0;          ///< Number of leads H.
  std::vector<double> values;       ///< issues.size() × horizon.
  double value(std::size_t issue_row, std::size_t lead_index) const { return values[issue_row * horizon + lead_index]; }
  double& value(std::size_t issue_row, std::size_t lead_index) { return values[issue_row * horizon + lead_index]; }
};

/// Quantile forecasts laid out issue-major, then lead, then probability.
struct QuantileForecasts {
  std::vector<std::size_t> issues;     ///< Issue indices, in the order requested.
  std::size_t horizon = 0;             ///< Number of leads H.
  std::vector<double> probabilities;   ///< Non-exceedance probabilities in (0, 1), as requested.
  std::vector<double> values;          ///< issues.size() × horizon × probabilities.size().
  double value(std::size_t issue_row, std::size_t lead_index, std::size_t prob_index) const {
    return values[(issue_row * horizon + lead_index) * probabilities.size() + prob_index];
  }
};

/// A fitted-then-forecast classical method. Not thread-safe while fit() runs; after fit(), forecast() is const and
/// may be called from several threads at once.
class Forecaster {
 public:
  virtual ~Forecaster() = default;

  /// Short method name as used in score tables ("persistence", "seasonal_naive", ...).
  virtual std::string name() const = 0;

  /// Fits on the steps of `fit_range` of `series`. `validation_range` is used only by methods that choose a
  /// hyper-parameter (ridge ARX penalty); others ignore it.
  /// @throws libseq::DataError when the range lies outside the series or holds too few observed values.
  virtual void fit(const SeriesSet& series, IndexRange fit_range, IndexRange validation_range) = 0;

  /// Point forecasts for leads 1..horizon from each issue index, using `series` only up to the issue (see the file
  /// comment for inputs). `series` must be the series given to fit() or a longer record of it.
  /// @throws libseq::Error (DataError or ConfigError) when not fitted, an issue is out of range, or the horizon
  /// exceeds what the method was fitted for.
  virtual PointForecasts forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                                  std::size_t horizon) const = 0;

  /// Earliest issue index forecast() accepts after fit() (the fit range start for filters, the longest lag for
  /// ARX); 0 for methods without such a limit.
  virtual std::size_t first_issue() const { return 0; }
};

/// The baselines a run can ask for by name.
enum class BaselineKind { persistence, seasonal_naive, climatology, ridge_arx, exp_smoothing, local_level };

/// Name of a baseline kind ("persistence", "seasonal_naive", "climatology", "ridge_arx", "exp_smoothing",
/// "local_level").
std::string to_string(BaselineKind kind);

/// Parses a baseline name as written by to_string. @throws libseq::ConfigError listing the accepted names.
BaselineKind parse_baseline_kind(std::string_view text);

}  // namespace libseq::baselines
