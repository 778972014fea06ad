#pragma once
/// @file schedule.hpp
/// Learning-rate schedules applied between epochs: constant, step decay, cosine annealing to a floor, and reduce on
/// plateau of the validation loss. Rules follow torch.optim.lr_scheduler (StepLR, CosineAnnealingLR in closed
/// form, ReduceLROnPlateau in "min" mode with a relative threshold) so they can be checked against it.

#include <cstddef>
#include <string>
#include <string_view>

namespace libseq::train {

/// Which schedule a LearningRateSchedule follows.
enum class ScheduleType {
  constant,  ///< The optimiser's learning rate throughout.
  step,      ///< Multiply by `step_gamma` every `step_epochs` epochs.
  cosine,    ///< Half-cosine from the base rate to `min_learning_rate` over the run (Loshchilov & Hutter 2017).
  plateau    ///< Multiply by `plateau_factor` when the validation loss stops improving.
};

/// "constant", "step", "cosine" or "plateau".
std::string to_string(ScheduleType type);
/// Inverse of to_string. @throws libseq::ConfigError naming `key` and listing the accepted names.
ScheduleType parse_schedule_type(std::string_view text, std::string_view key = "schedule");

/// Settings of a schedule; only the fields of the chosen type are used (all are validated).
struct ScheduleOptions {
  ScheduleType type = ScheduleType::constant;
  /// step: epochs between decays; >= 1.
  std::size_t step_epochs = 10;
  /// step: factor applied at each decay, in (0, 1].
  double step_gamma = 0.5;
  /// cosine: the floor reached at the end of the run; plateau: the rate never goes below it. >= 0.
  double min_learning_rate = 0.0;
  /// plateau: factor applied when the loss has not improved for more than `plateau_patience` epochs, in (0, 1).
  double plateau_factor = 0.1;
  /// plateau: epochs without improvement tolerated before a reduction.
  std::size_t plateau_patience = 10;
  /// plateau: a loss counts as an improvement when below best·(1 − threshold); >= 0 (torch's "rel" mode).
  double plateau_threshold = 1e-4;
  /// plateau: epochs after a reduction during which no further reduction happens and bad epochs are not counted.
  std::size_t plateau_cooldown = 0;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// The learning rate per epoch. Epochs are counted from 0. Call rate() for the rate of the current epoch, train
/// the epoch, then end_epoch(validation_loss) to move to the next one. Not thread-safe; one per member.
class LearningRateSchedule {
 public:
  /// `base_rate` is the optimiser's learning rate (> 0); `total_epochs` the planned run length (cosine uses it).
  /// @throws libseq::ConfigError when options are invalid or base_rate <= 0 or total_epochs == 0.
  LearningRateSchedule(const ScheduleOptions& options, double base_rate, std::size_t total_epochs);

  /// The rate for the current epoch.
  double rate() const { return rate_; }
  /// Index of the current epoch.
  std::size_t epoch() const { return epoch_; }
  /// Ends the current epoch with its validation loss (plateau uses it; NaN counts as no improvement) and
  /// returns the rate of the next epoch.
  double end_epoch(double validation_loss);
  /// Number of plateau reductions so far.
  std::size_t reductions() const { return reductions_; }

 private:
  double rate_for(std::size_t epoch) const;

  ScheduleOptions options_;
  double base_rate_;
  std::size_t total_epochs_;
  std::size_t epoch_ = 0;
  double rate_;
  double best_ = 0.0;
  bool has_best_ = false;
  std::size_t bad_epochs_ = 0;
  std::size_t cooldown_left_ = 0;
  std::size_t reductions_ = 0;
};

}  // namespace libseq::train
