#include "libseq/data/windows.hpp"

#include <cmath>

#include "libseq/error.hpp"

namespace libseq::data {

std::string to_string(WindowMode mode) { return mode == WindowMode::forecast ? "forecast" : "simulation"; }

WindowMode parse_window_mode(std::string_view text, std::string_view key) {
  if (text == "forecast") return WindowMode::forecast;
  if (text == "simulation") return WindowMode::simulation;
  throw ConfigError(std::string(key) + ": '" + std::string(text) + "' is not one of forecast, simulation");
}

void WindowOptions::validate() const {
  std::vector<std::string> problems;
  if (lookback_steps < 1) problems.push_back("windows.lookback: must be at least 1 step");
  if (lookback_steps > 100000) problems.push_back("windows.lookback: more than 100000 steps is not supported");
  if (horizon_steps < 1) problems.push_back("windows.horizon: must be at least 1 step");
  if (mode == WindowMode::simulation && horizon_steps != 1) {
    problems.push_back("windows.horizon: must be 1 in simulation mode (the simulated step itself), got " +
                       std::to_string(horizon_steps));
  }
  if (issue_every < 1) problems.push_back("windows.issue_every: must be at least 1 step");
  if (mode == WindowMode::simulation && future_inputs_known) {
    problems.push_back("windows.future_inputs_known: has no meaning in simulation mode");
  }
  if (!problems.empty()) {
    std::string message = "window options: " + std::to_string(problems.size()) + " problem(s):";
    for (const auto& p : problems) message += "\n  " + p;
    throw ConfigError(message);
  }
}

std::size_t WindowOptions::sequence_steps() const {
  return mode == WindowMode::forecast ? lookback_steps + horizon_steps : lookback_steps;
}

std::size_t batch_input_size(const FeaturePlan& plan, const WindowOptions& options) {
  const std::size_t columns = plan.dynamic_feature_count() - (plan.options().lagged_target ? 2 : 0);
  const bool lagged = options.mode == WindowMode::forecast && plan.options().lagged_target;
  return columns + (lagged ? 2 : 0);
}

namespace {

// Target step of lead k (0-based) of a window.
std::size_t target_step(const WindowOptions& options, std::size_t issue, std::size_t lead) {
  return options.mode == WindowMode::forecast ? issue + 1 + lead : issue;
}

}  // namespace

std::vector<Window> make_windows(const FeatureTable& table, const WindowOptions& options, IndexRange targets,
                                 bool require_target) {
  options.validate();
  std::vector<Window> out;
  const std::size_t steps = table.time_count();
  const std::size_t leads = options.lead_count();
  const std::size_t first_issue = options.lookback_steps - 1;
  for (std::size_t s = 0; s < table.site_count(); ++s) {
    for (std::size_t issue = first_issue; issue < steps; ++issue) {
      const std::size_t first_target = target_step(options, issue, 0);
      const std::size_t last_target = target_step(options, issue, leads - 1);
      if (last_target >= steps) break;
      if (!targets.contains(first_target) || !targets.contains(last_target)) continue;
      if (options.issue_every > 1) {
        const std::int64_t period = static_cast<std::int64_t>(options.issue_every) * table.step_seconds();
        const std::int64_t t = table.start_seconds() + static_cast<std::int64_t>(first_target) * table.step_seconds();
        if (((t % period) + period) % period != 0) continue;
      }
      if (require_target) {
        bool any = false;
        for (std::size_t k = 0; k < leads && !any; ++k) {
          any = std::isfinite(table.scaled_target(s, target_step(options, issue, k)));
        }
        if (!any) continue;
      }
      out.push_back({static_cast<std::uint32_t>(s), static_cast<std::uint32_t>(issue)});
    }
  }
  return out;
}

std::vector<Window> make_issue_windows(const FeatureTable& table, const WindowOptions& options,
                                       const std::vector<std::size_t>& issue_steps) {
  options.validate();
  std::vector<Window> out;
  for (std::size_t s = 0; s < table.site_count(); ++s) {
    for (std::size_t issue : issue_steps) {
      if (issue + 1 < options.lookback_steps || issue >= table.time_count()) {
        throw DataError("forecast issue step " + std::to_string(issue) + " needs " +
                        std::to_string(options.lookback_steps) + " steps of history on an axis of " +
                        std::to_string(table.time_count()) + " steps");
      }
      out.push_back({static_cast<std::uint32_t>(s), static_cast<std::uint32_t>(issue)});
    }
  }
  return out;
}

void fill_batch(const FeatureTable& table, const WindowOptions& options, std::span<const Window> windows,
                std::span<const std::size_t> indices, WindowBatch& batch) {
  const FeaturePlan& plan = table.plan();
  const bool lagged = options.mode == WindowMode::forecast && plan.options().lagged_target;
  const std::size_t columns = table.column_count();
  const std::size_t dynamic_inputs = plan.options().dynamic_inputs.size();
  batch.steps = options.sequence_steps();
  batch.batch = indices.size();
  batch.input_size = columns + (lagged ? 2 : 0);
  batch.static_size = table.static_count();
  batch.leads = options.lead_count();
  batch.inputs.assign(batch.steps * batch.batch * batch.input_size, 0.0f);
  batch.statics.assign(batch.batch * batch.static_size, 0.0f);
  batch.targets.assign(batch.batch * batch.leads, missing_value);
  const std::size_t total_steps = table.time_count();

  for (std::size_t b = 0; b < indices.size(); ++b) {
    const Window& w = windows[indices[b]];
    const std::size_t first = w.issue + 1 - options.lookback_steps;
    for (std::size_t t = 0; t < batch.steps; ++t) {
      const std::size_t step = first + t;
      float* out = batch.inputs.data() + (t * batch.batch + b) * batch.input_size;
      const bool future = step > w.issue;
      if (step < total_steps) {
        const auto row = table.dynamic(w.site, step);
        for (std::size_t j = 0; j < columns; ++j) {
          const bool is_dynamic_input = j < dynamic_inputs;
          if (future && is_dynamic_input && !options.future_inputs_known) continue;
          out[j] = std::isfinite(row[j]) ? row[j] : 0.0f;
        }
      }
      if (lagged && !future && step < total_steps) {
        const float y = table.scaled_target(w.site, step);
        if (std::isfinite(y)) {
          out[columns] = y;
          out[columns + 1] = 1.0f;
        }
      }
    }
    const auto statics = table.statics(w.site);
    std::copy(statics.begin(), statics.end(), batch.statics.begin() + b * batch.static_size);
    for (std::size_t k = 0; k < batch.leads; ++k) {
      const std::size_t step = target_step(options, w.issue, k);
      if (step < total_steps) batch.targets[b * batch.leads + k] = table.scaled_target(w.site, step);
    }
  }
}

}  // namespace libseq::data
