#pragma once
/// @file early_stopping.hpp
/// Early stopping on a validation loss (Prechelt 1998, "Early stopping — but when?", the patience criterion):
/// keep a copy of the parameters of the best epoch, stop after `patience` epochs without an improvement larger
/// than `min_delta`, and restore the best copy.

#include <cstddef>
#include <limits>
#include <span>
#include <vector>

namespace libseq::train {

/// Settings of early stopping.
struct EarlyStoppingOptions {
  /// Whether the run stops early; when false the best parameters are still tracked and restored if
  /// `restore_best` is set.
  bool enabled = true;
  /// Epochs without improvement after which training stops; >= 1.
  std::size_t patience = 10;
  /// An epoch improves when its validation loss is below best − min_delta (absolute, loss units); >= 0.
  double min_delta = 0.0;
  /// Copy the parameters of the best epoch back at the end of the run.
  bool restore_best = true;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// Tracks the best validation loss and a copy of the parameters that achieved it. Not thread-safe; one per member.
template <typename Scalar>
class EarlyStopping {
 public:
  /// @throws libseq::ConfigError when options are invalid.
  explicit EarlyStopping(const EarlyStoppingOptions& options);

  /// Records the validation loss of `epoch` (0-based) and, when it improves, copies `parameters`. Returns true
  /// when training should stop now (enabled and `patience` epochs in a row without improvement). A non-finite
  /// loss never improves.
  bool update(std::size_t epoch, double validation_loss, std::span<const Scalar> parameters);

  /// Writes the best parameters into `parameters` (same length as recorded); false when no epoch improved.
  bool restore(std::span<Scalar> parameters) const;

  bool has_best() const { return has_best_; }
  /// Epoch of the best loss; meaningful only when has_best().
  std::size_t best_epoch() const { return best_epoch_; }
  /// Best validation loss; +inf before any improvement.
  double best_loss() const { return best_loss_; }
  /// Epochs since the last improvement.
  std::size_t epochs_without_improvement() const { return stale_; }
  const EarlyStoppingOptions& options() const { return options_; }

 private:
  EarlyStoppingOptions options_;
  bool has_best_ = false;
  std::size_t best_epoch_ = 0;
  double best_loss_ = std::numeric_limits<double>::infinity();
  std::size_t stale_ = 0;
  std::vector<Scalar> best_parameters_;
};

}  // namespace libseq::train
