#pragma once
/// @file windows.hpp
/// Training and forecasting samples: (site, issue step) pairs with a lookback and a horizon, read as views of a
/// FeatureTable and packed into time-major batches for the recurrent networks.

#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "libseq/data/features.hpp"

namespace libseq::data {

/// How a sample relates inputs to targets.
enum class WindowMode {
  /// Forecast issued at step i for leads 1..H (steps i+1..i+H): the observed target is an input up to step i.
  forecast,
  /// Simulation of the target at step i from the inputs up to step i only; no observed target is fed (lead 0).
  simulation
};
std::string to_string(WindowMode mode);
WindowMode parse_window_mode(std::string_view text, std::string_view key = "windows.mode");

/// Shape of the samples.
struct WindowOptions {
  WindowMode mode = WindowMode::forecast;
  std::size_t lookback_steps = 30;  ///< History steps fed before (and including) the issue step.
  std::size_t horizon_steps = 1;    ///< Lead times 1..H (forecast mode); must be 1 in simulation mode.
  /// Forecast mode: the dynamic inputs of the target steps are known at issue time (e.g. a weather forecast, or
  /// observed forcings in a "perfect forecast" hindcast). Calendar columns of the target steps are always known.
  bool future_inputs_known = false;
  /// Keep one sample every `issue_every` steps, aligned so that the first lead falls on a whole multiple of
  /// issue_every steps since 1970-01-01T00:00:00Z (e.g. 24 on hourly data: day-ahead forecasts issued at midnight
  /// UTC). 1 keeps every step.
  std::size_t issue_every = 1;

  /// @throws libseq::ConfigError listing every broken rule.
  void validate() const;
  /// Steps per sequence: lookback, plus the horizon in forecast mode (the target steps carry the calendar and,
  /// when known, the dynamic inputs).
  std::size_t sequence_steps() const;
  /// Leads per sample: horizon in forecast mode, 1 in simulation mode.
  std::size_t lead_count() const { return mode == WindowMode::forecast ? horizon_steps : 1; }
};

/// One sample: a site and the step a forecast is issued at (the last observed step), or the simulated step.
struct Window {
  std::uint32_t site = 0;
  std::uint32_t issue = 0;
  friend bool operator==(const Window&, const Window&) = default;
};

/// Samples of `table` whose target steps all fall in `targets` (and whose history lies on the axis). With
/// `require_target`, samples whose every target is missing are dropped (for training); else they are kept.
std::vector<Window> make_windows(const FeatureTable& table, const WindowOptions& options, IndexRange targets,
                                 bool require_target);

/// Samples issued at the given steps for every site, whatever the data after the issue step (operational
/// forecasts; targets beyond the axis are missing).
std::vector<Window> make_issue_windows(const FeatureTable& table, const WindowOptions& options,
                                       const std::vector<std::size_t>& issue_steps);

/// A time-major batch ready for the networks: step t of sample b, input j at inputs[(t*batch + b)*input_size + j].
struct WindowBatch {
  std::size_t steps = 0;
  std::size_t batch = 0;
  std::size_t input_size = 0;
  std::size_t static_size = 0;
  std::size_t leads = 0;
  std::vector<float> inputs;   ///< steps × batch × input_size; missing inputs presented as 0 (the scaled mean)
  std::vector<float> statics;  ///< batch × static_size
  std::vector<float> targets;  ///< batch × leads, scaled; NaN = missing
};

/// Per-step input width of a batch for `plan` and `options` (columns plus the lagged-target pair in forecast mode).
std::size_t batch_input_size(const FeaturePlan& plan, const WindowOptions& options);

/// Packs `windows[indices...]` into a batch. Inputs per step: table columns (dynamic inputs, calendar), then in
/// forecast mode with lagged_target the scaled observed target and its availability flag (0, 0 after the issue
/// step or where missing). Dynamic inputs of target steps are 0 unless future_inputs_known.
void fill_batch(const FeatureTable& table, const WindowOptions& options, std::span<const Window> windows,
                std::span<const std::size_t> indices, WindowBatch& batch);

}  // namespace libseq::data
