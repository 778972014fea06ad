#pragma once
/// @file climatology.hpp
/// Climatology: the mean (and empirical quantiles) of the fit period's values that share the target step's position
/// in the year (daily data) or in the week or day (sub-daily data), pooled over a circular window of neighbouring
/// positions.

#include <cstddef>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/baselines/forecaster.hpp"

namespace libseq::baselines {

/// What position of the target step the climatology is conditioned on.
enum class ClimatologySlot {
  automatic,    ///< day_of_year for a daily axis, step_of_week for a sub-daily one.
  day_of_year,  ///< 366 slots by (month, day); 29 February is its own slot. Daily axes only.
  step_of_week, ///< 604800 / step slots from Monday 00:00 UTC (168 for hourly, 336 for half-hourly data).
  step_of_day,  ///< 86400 / step slots from 00:00 UTC.
};
/// "automatic", "day_of_year", "step_of_week", "step_of_day".
std::string to_string(ClimatologySlot slot);
/// @throws libseq::ConfigError listing the accepted names.
ClimatologySlot parse_climatology_slot(std::string_view text);

/// Options of the climatology forecaster.
struct ClimatologyOptions {
  ClimatologySlot slot = ClimatologySlot::automatic;
  /// Half-width of the circular pooling window, in slots: day_of_year pools days d − w..d + w (so 15 gives a
  /// 31-day window); step_of_week / step_of_day pool neighbouring steps. 0 pools the slot alone.
  std::size_t window_half_width = 15;
  /// Fewest observed values a slot needs; slots with fewer forecast NaN.
  std::size_t min_count = 1;
  /// @throws libseq::ConfigError naming `climatology.window_half_width` or `climatology.min_count` when the
  /// window is wider than the cycle would allow (checked in fit) or min_count is 0.
  void validate() const;
};

/// Climatology forecaster. The forecast of step t + h is the mean of the fit-period values in the pooled window of
/// that step's slot; it does not depend on the issue step's value.
class Climatology final : public Forecaster {
 public:
  /// @throws libseq::ConfigError from options.validate().
  explicit Climatology(ClimatologyOptions options);
  std::string name() const override { return "climatology"; }
  /// @throws libseq::DataError when the axis length differs from the target's, the axis step does not divide the
  /// cycle (day_of_year needs a 1-day step; step_of_* need a step dividing one day), or the range is invalid.
  /// @throws libseq::ConfigError when 2·window_half_width + 1 exceeds the number of slots.
  void fit(const SeriesSet& series, IndexRange fit_range, IndexRange validation_range) override;
  /// Forecast steps beyond the series end are placed on the series' time axis extended at the same step.
  PointForecasts forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                          std::size_t horizon) const override;

  /// Climatological empirical quantiles (Hyndman & Fan definition 7) of the pooled values for each
  /// (issue, lead, probability): the climatology's own predictive distribution.
  /// @throws libseq::ConfigError when a probability is outside [0, 1].
  QuantileForecasts climatological_quantiles(const SeriesSet& series, std::span<const std::size_t> issues,
                                             std::size_t horizon, std::span<const double> probabilities) const;

  /// Slot index of step i of an axis (0-based), for the fitted slot kind.
  std::size_t slot_of(const data::TimeAxis& axis, std::size_t step) const;
  /// Number of slots of the fitted slot kind.
  std::size_t slot_count() const { return pooled_.size(); }
  /// Pooled, ascending fit values of a slot.
  const std::vector<double>& pooled_values(std::size_t slot) const { return pooled_.at(slot); }

 private:
  ClimatologyOptions options_;
  ClimatologySlot resolved_ = ClimatologySlot::automatic;
  std::vector<std::vector<double>> pooled_;
  std::vector<double> means_;
};

}  // namespace libseq::baselines
