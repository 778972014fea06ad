#pragma once
/// @file ensemble.hpp
/// Ensembles of recurrent networks: M members, each trained with its own seed on its own bootstrap resample of the
/// training windows, and prediction of every member (optionally with K Monte-Carlo dropout passes) as
/// MemberForecasts, ready for mix() and conformal calibration. docs/methods-uncertainty.md ("Ensembles and MC
/// dropout") says how members, resamples and passes form the predictive mixture.
///
/// Determinism: member m draws its resample and its training seed from member_seed(resampling.seed, m), and MC pass
/// k of member m draws its dropout masks from a generator seeded by (prediction seed, m, k). Members run one per
/// OpenMP thread with single-threaded math inside, and every result is written to the member's own slot, so
/// weights and forecasts are bit-identical whatever the thread count.

#include <cstddef>
#include <cstdint>
#include <span>
#include <utility>
#include <vector>

#include "libseq/nn/network.hpp"
#include "libseq/train/sequence_source.hpp"
#include "libseq/train/trainer.hpp"
#include "libseq/uncertainty/mixture.hpp"
#include "libseq/uncertainty/resample.hpp"

namespace libseq::uncertainty {

/// Everything that defines an ensemble besides the data. Plain values; copy freely.
struct EnsembleOptions {
  /// Number of members M, >= 1. Each member costs one full training run; the members run in parallel.
  std::size_t members = 4;
  /// How each member's training windows are drawn (scheme, block length, lookback) and the base seed of the
  /// ensemble: member m uses member_seed(resampling.seed, m) for its resample and as its training seed.
  ResampleOptions resampling;
  /// K Monte-Carlo dropout passes per member at prediction (Gal & Ghahramani 2016); 0 turns dropout off at
  /// prediction (one deterministic pass). At most 10000. Passes only differ when the network has dropout > 0.
  /// Prediction cost grows linearly with K.
  std::size_t mc_passes = 0;
  /// Shape of every member (the same for all).
  nn::NetworkOptions network;
  /// Training of every member; training.seed is replaced by member_seed(resampling.seed, m) for member m.
  train::TrainOptions training;

  /// Checks members, mc_passes, the nested network, training and resampling options, and that the training loss
  /// fits the network head (point: squared_sum/squared_mean; gaussian: gaussian_nll; quantile: pinball with the
  /// same levels). @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// What is kept of one member's training run.
struct EnsembleMember {
  /// The trainer's summary (termination reason, loss curves, gradient diagnostics).
  train::TrainSummary summary;
  /// The member's seed, member_seed(resampling.seed, m): the training seed and the seed of its resample.
  std::uint64_t seed = 0;
  /// Training windows in the member's resample (with repeats); equals the training source size for the block
  /// schemes and `none`, and varies for `sites`.
  std::size_t windows_drawn = 0;

  /// Whether the member enters prediction: false when its training diverged or had no data.
  bool usable() const;
  friend bool operator==(const EnsembleMember&, const EnsembleMember&) = default;
};

/// A trained ensemble: M networks and their training records. Immutable after construction; predict() is const
/// and may be called from several threads at once (it works on copies of the networks).
class Ensemble {
 public:
  /// Trains M members, in parallel over members with OpenMP (one member per thread; the math inside each member
  /// single-threaded; results bit-identical whatever the thread count). Member m trains on its own resample of
  /// `training` (resample_windows(window_site, site_count, options.resampling, m)), seen through a view of the
  /// source that repeats the drawn windows in draw order, and monitors `validation` when given (the validation
  /// source is not resampled). A member whose training diverged is kept in members() and left out of prediction;
  /// this is recorded, not thrown. Both sources must stay alive during the call only.
  /// `window_site[i]` is the site index (< site_count) of training sequence i; windows of a site in time order.
  /// @throws libseq::ConfigError from options.validate(); libseq::DataError when window_site.size() differs from
  /// training.size(), a site index is out of range, or a source's shape (input_size, static_size, horizon, steps)
  /// disagrees with options.network.
  static Ensemble train(const EnsembleOptions& options, const train::SequenceSource<float>& training,
                        std::span<const std::size_t> window_site, std::size_t site_count,
                        const train::SequenceSource<float>* validation = nullptr);

  /// Predictive members for every sequence of `source`, in the network's (scaled) output space. Case index =
  /// sequence × horizon + lead; member index = u × P + k for the u-th usable member (in member order) and pass k,
  /// P = max(1, mc_passes), so member_count = usable members × P. Kind by head: gaussian (means, variances =
  /// exp(log_variance)), quantiles (levels = network quantile levels), points. MC passes use DropoutMode::sample
  /// with a generator seeded from (seed, member index m, pass k), one mask per sequence, sequences packed in
  /// batches of training.batch_size in source order; with mc_passes == 0 dropout is off and `seed` is unused.
  /// No usable member gives member_count 0 (mix() then reports NaN for every case). Parallel over members,
  /// deterministic for any thread count.
  /// @throws libseq::DataError when the source's shape disagrees with the network options.
  MemberForecasts predict(const train::SequenceSource<float>& source, std::uint64_t seed) const;

  /// The M trained networks (diverged ones included), in member order.
  const std::vector<nn::Network<float>>& networks() const { return networks_; }
  /// Training records, one per network, in member order.
  const std::vector<EnsembleMember>& members() const { return members_; }
  /// Indices of the members that enter prediction (EnsembleMember::usable), ascending.
  std::vector<std::size_t> usable_members() const;
  /// The options the ensemble was built with.
  const EnsembleOptions& options() const { return options_; }

  /// Rebuilds an ensemble from stored members (model bundle): networks with their parameters, and summaries.
  /// @throws libseq::ConfigError from options.validate(); libseq::DataError when the counts of networks, members
  /// and options.members differ, or a network's shape (cell, sizes, layers, head, horizon, parameter count)
  /// differs from options.network.
  static Ensemble from_networks(EnsembleOptions options, std::vector<nn::Network<float>> networks,
                                std::vector<EnsembleMember> members);

 private:
  Ensemble(EnsembleOptions options, std::vector<nn::Network<float>> networks, std::vector<EnsembleMember> members)
      : options_(std::move(options)), networks_(std::move(networks)), members_(std::move(members)) {}

  EnsembleOptions options_;
  std::vector<nn::Network<float>> networks_;
  std::vector<EnsembleMember> members_;
};

}  // namespace libseq::uncertainty
