#pragma once
/// @file trainer.hpp
/// Training of one network (one ensemble member): mini-batch epochs with shuffling from the member's seed, full or
/// truncated backpropagation through time, gradient clipping, an optimiser, a learning-rate schedule and early
/// stopping on a validation loss. The outcome, including a run that diverged, is a TrainSummary, not an exception.
///
/// Determinism: every random draw (initialisation, shuffling, dropout masks) comes from generators seeded by
/// TrainOptions::seed and owned by the call; reductions are serial. The same seed and data give bit-identical
/// weights whatever the OpenMP thread count, so members may be trained in parallel, one per thread.

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/nn/loss.hpp"
#include "libseq/nn/network.hpp"
#include "libseq/train/diagnostics.hpp"
#include "libseq/train/early_stopping.hpp"
#include "libseq/train/optimizer.hpp"
#include "libseq/train/schedule.hpp"
#include "libseq/train/sequence_source.hpp"

namespace libseq::train {

/// How gradients flow back through time.
enum class BpttMode {
  full,      ///< Through every step of the sequence.
  truncated  ///< Through windows of `bptt_window` steps; state carried between windows, gradient cut at edges.
};
/// "full" or "truncated".
std::string to_string(BpttMode mode);
/// Inverse of to_string. @throws libseq::ConfigError naming `key` and listing the accepted names.
BpttMode parse_bptt_mode(std::string_view text, std::string_view key = "bptt");

/// Everything a training run needs besides the network and the data.
struct TrainOptions {
  /// Maximum passes over the training sequences; >= 1.
  std::size_t epochs = 50;
  /// Sequences per mini-batch; >= 1. The last batch of an epoch may be smaller.
  std::size_t batch_size = 64;
  /// Visit the training sequences in a fresh random order each epoch (drawn from `seed`).
  bool shuffle = true;
  /// Seed of this member: network initialisation (when initialize_network), shuffling, dropout masks.
  std::uint64_t seed = 1;
  /// Call network.initialize(seed-derived value) before training; false continues from the given weights.
  bool initialize_network = true;
  /// Full or truncated BPTT.
  BpttMode bptt = BpttMode::full;
  /// Truncated BPTT: steps per window (>= 1). A window at least as long as the sequence is full BPTT.
  std::size_t bptt_window = 0;
  /// Truncated BPTT: steps between window starts, 1..bptt_window; 0 means bptt_window (windows do not overlap).
  std::size_t bptt_stride = 0;
  /// The loss minimised and reported (it must match the network head; the network checks).
  nn::Loss loss;
  OptimizerOptions optimizer;
  ScheduleOptions schedule;
  /// Early stopping on the validation loss (on the training loss when no validation source is given).
  EarlyStoppingOptions early_stopping;
  /// Clip the gradient to this global norm before each update (Pascanu et al. 2013); 0 turns clipping off.
  double clip_norm = 1.0;
  /// Draw dropout masks during training when the network has dropout; false trains without dropout.
  bool dropout = true;
  /// Gradient-through-time diagnostic at the start and end of the run (one batch, no dropout); costs one extra
  /// forward and backward pass each.
  bool gradient_diagnostic = true;
  /// Lags of the diagnostic; empty uses default_gradient_lags().
  std::vector<std::size_t> diagnostic_lags;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation), including those of the
  /// nested optimizer, schedule, early-stopping and loss options.
  void validate() const;
};

/// Why a run ended.
enum class TerminationReason {
  max_epochs,     ///< Ran every epoch.
  early_stopped,  ///< The monitored loss did not improve for `patience` epochs.
  diverged,       ///< A loss or gradient became non-finite (NaN or infinite); the update was not applied.
  no_data         ///< The training source has no sequences.
};
/// "max_epochs", "early_stopped", "diverged", "no_data".
std::string to_string(TerminationReason reason);
/// Inverse of to_string. @throws libseq::ConfigError naming `key` and listing the accepted names.
TerminationReason parse_termination_reason(std::string_view text, std::string_view key = "termination");

/// What happened in one training run. Curves have one entry per epoch run.
struct TrainSummary {
  TerminationReason termination = TerminationReason::max_epochs;
  std::string termination_detail;     ///< e.g. where the divergence happened
  std::size_t epochs_run = 0;
  std::size_t best_epoch = 0;         ///< 0-based epoch of the best monitored loss (meaningful when has_best)
  bool has_best = false;
  double best_loss = 0.0;             ///< best monitored loss (validation when available)
  bool monitored_validation = false;  ///< whether the monitored loss is a validation loss
  bool restored_best = false;         ///< whether the final weights are the best epoch's
  std::vector<double> train_loss;        ///< mean training loss per epoch (during the epoch, with dropout)
  std::vector<double> validation_loss;   ///< validation loss per epoch without dropout (empty without validation)
  std::vector<double> learning_rate;     ///< rate used in each epoch
  std::vector<double> gradient_norm_mean;  ///< mean global gradient norm (before clipping) over the epoch's updates
  std::vector<double> gradient_norm_max;   ///< largest global gradient norm of the epoch
  std::vector<double> clipped_updates;     ///< updates clipped in each epoch (a count, stored as double)
  std::size_t updates = 0;                 ///< optimiser steps taken in total
  std::size_t clipped_total = 0;           ///< how many of them were clipped
  double wall_seconds = 0.0;               ///< elapsed time of the run (not part of any determinism guarantee)
  GradientThroughTime initial_gradient;    ///< diagnostic with the initial weights
  GradientThroughTime final_gradient;      ///< diagnostic with the final weights

  /// One line: termination, epochs, best loss and epoch, clipping, time.
  std::string brief_report() const;
  /// Multi-line: the brief line, then per-epoch table and the gradient-through-time profiles.
  std::string full_report() const;
  friend bool operator==(const TrainSummary&, const TrainSummary&) = default;
};

/// Trains networks with one set of options. Stateless between calls; a Trainer may be shared by threads as long
/// as each call trains a different network.
template <typename Scalar>
class Trainer {
 public:
  /// @throws libseq::ConfigError when options.validate() fails.
  explicit Trainer(TrainOptions options);
  const TrainOptions& options() const { return options_; }

  /// Trains `network` on `training`, monitoring `validation` when non-null. Leaves the best weights in the
  /// network when early stopping restores them (also after a divergence, when an earlier epoch was best).
  /// @throws libseq::DataError when a source's shape disagrees with the network's options, libseq::ConfigError when
  /// the loss does not match the head. An expected outcome (early stop, divergence) is in the summary.
  TrainSummary train(nn::Network<Scalar>& network, const SequenceSource<Scalar>& training,
                     const SequenceSource<Scalar>* validation = nullptr) const;

  /// Loss of `network` on all of `source` without dropout, batched by batch_size: for mean losses the mean over
  /// every non-missing target, for squared_sum the total. NaN when the source has no non-missing target.
  double evaluate(nn::Network<Scalar>& network, const SequenceSource<Scalar>& source) const;

 private:
  TrainOptions options_;
};

}  // namespace libseq::train
