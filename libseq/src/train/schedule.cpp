#include "libseq/train/schedule.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>

#include "libseq/error.hpp"

namespace libseq::train {

std::string to_string(ScheduleType type) {
  switch (type) {
    case ScheduleType::constant: return "constant";
    case ScheduleType::step: return "step";
    case ScheduleType::cosine: return "cosine";
    case ScheduleType::plateau: return "plateau";
  }
  return "unknown";
}

ScheduleType parse_schedule_type(std::string_view text, std::string_view key) {
  if (text == "constant") return ScheduleType::constant;
  if (text == "step") return ScheduleType::step;
  if (text == "cosine") return ScheduleType::cosine;
  if (text == "plateau") return ScheduleType::plateau;
  throw ConfigError(std::string(key) + " = '" + std::string(text) +
                    "': expected one of constant, step, cosine, plateau");
}

void ScheduleOptions::validate() const {
  std::ostringstream problems;
  auto rule = [&](bool ok, const char* key, double value, const char* expectation) {
    if (!ok) problems << "\n  schedule." << key << " = " << value << ": expected " << expectation;
  };
  rule(step_epochs >= 1, "step_epochs", static_cast<double>(step_epochs), "an integer >= 1");
  rule(step_gamma > 0 && step_gamma <= 1, "step_gamma", step_gamma, "a value in (0, 1]");
  rule(std::isfinite(min_learning_rate) && min_learning_rate >= 0, "min_learning_rate", min_learning_rate,
       "a finite value >= 0");
  rule(plateau_factor > 0 && plateau_factor < 1, "plateau_factor", plateau_factor, "a value in (0, 1)");
  rule(std::isfinite(plateau_threshold) && plateau_threshold >= 0, "plateau_threshold", plateau_threshold,
       "a finite value >= 0");
  const std::string text = problems.str();
  if (!text.empty()) throw ConfigError("invalid schedule options:" + text);
}

LearningRateSchedule::LearningRateSchedule(const ScheduleOptions& options, double base_rate,
                                           std::size_t total_epochs)
    : options_(options), base_rate_(base_rate), total_epochs_(total_epochs), rate_(base_rate) {
  options_.validate();
  if (!(base_rate > 0) || total_epochs == 0) {
    throw ConfigError("learning-rate schedule: expected a base rate > 0 and at least one epoch, got rate " +
                      std::to_string(base_rate) + " and " + std::to_string(total_epochs) + " epochs");
  }
  if (options_.type == ScheduleType::cosine && options_.min_learning_rate > base_rate) {
    throw ConfigError("schedule.min_learning_rate = " + std::to_string(options_.min_learning_rate) +
                      ": expected at most the learning rate " + std::to_string(base_rate) + " for a cosine schedule");
  }
  rate_ = rate_for(0);
}

double LearningRateSchedule::rate_for(std::size_t epoch) const {
  switch (options_.type) {
    case ScheduleType::constant:
    case ScheduleType::plateau: return rate_;
    case ScheduleType::step:
      // StepLR closed form: η_e = η_0 · γ^⌊e / N⌋.
      return base_rate_ * std::pow(options_.step_gamma, static_cast<double>(epoch / options_.step_epochs));
    case ScheduleType::cosine: {
      // SGDR without restarts (Loshchilov & Hutter 2017, Eq. 5) with T_max = total epochs:
      // η_e = η_min + (η_0 − η_min)(1 + cos(π e / T_max)) / 2.
      const double progress = static_cast<double>(std::min(epoch, total_epochs_)) / static_cast<double>(total_epochs_);
      const double floor = options_.min_learning_rate;
      return floor + (base_rate_ - floor) * (1.0 + std::cos(std::numbers::pi * progress)) / 2.0;
    }
  }
  return rate_;
}

double LearningRateSchedule::end_epoch(double validation_loss) {
  ++epoch_;
  if (options_.type != ScheduleType::plateau) {
    rate_ = rate_for(epoch_);
    return rate_;
  }
  // ReduceLROnPlateau, mode "min", threshold_mode "rel": improvement when loss < best·(1 − threshold).
  const bool improved =
      std::isfinite(validation_loss) && (!has_best_ || validation_loss < best_ * (1.0 - options_.plateau_threshold));
  if (improved) {
    best_ = validation_loss;
    has_best_ = true;
    bad_epochs_ = 0;
  } else {
    ++bad_epochs_;
  }
  if (cooldown_left_ > 0) {
    --cooldown_left_;
    bad_epochs_ = 0;
  }
  if (bad_epochs_ > options_.plateau_patience) {
    const double reduced = std::max(rate_ * options_.plateau_factor, options_.min_learning_rate);
    // torch ignores reductions smaller than its eps = 1e-8.
    if (rate_ - reduced > 1e-8) {
      rate_ = reduced;
      ++reductions_;
    }
    cooldown_left_ = options_.plateau_cooldown;
    bad_epochs_ = 0;
  }
  return rate_;
}

}  // namespace libseq::train
