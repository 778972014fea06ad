#pragma once
/// @file diagnostics.hpp
/// Gradient through time: how strongly the loss depends on the input seen k steps before the last one. A profile
/// that falls by orders of magnitude with k means the network cannot learn dependencies that long (vanishing
/// gradients, Bengio, Simard & Frasconi 1994; Hochreiter & Schmidhuber 1997, Section 3); one that grows means
/// exploding gradients (Pascanu et al. 2013). See docs/methods-training.md for how to read it.

#include <cstddef>
#include <span>
#include <string>
#include <vector>

#include "libseq/nn/network.hpp"

namespace libseq::train {

/// Norms of d loss / d input by lag, for one batch.
struct GradientThroughTime {
  std::size_t steps = 0;  ///< T of the batch measured (0 = not measured)
  std::size_t batch = 0;  ///< sequences in the batch
  /// Lags k measured: the input at 0-based step T−1−k (lag 0 = the last step). Lags >= T are dropped.
  std::vector<std::size_t> lags;
  /// For each lag, the mean over sequences of ‖d loss / d x_{T−1−k}‖₂ (norm over the input features); sequences
  /// whose step is padding are left out of the mean (NaN when all are padding). Units: loss per input unit.
  std::vector<double> input_gradient_norm;
  /// input_gradient_norm divided by its value at lag 0 (NaN when lag 0 is absent or zero): free of the loss scale,
  /// so profiles of different runs compare directly.
  std::vector<double> relative_to_last_step;

  bool measured() const { return steps > 0; }
  /// One line per lag: "lag k: norm (ratio to lag 0)".
  std::string report() const;
  friend bool operator==(const GradientThroughTime&, const GradientThroughTime&) = default;
};

/// Profile from an input-gradient array laid out as nn::Network::input_gradients() (steps × batch × input_size,
/// time-major). `mask` is steps × batch or empty (all real).
/// @throws libseq::DataError when the sizes disagree.
template <typename Scalar>
GradientThroughTime gradient_through_time(std::span<const Scalar> input_gradients, std::size_t steps,
                                          std::size_t batch, std::size_t input_size,
                                          std::span<const std::uint8_t> mask, std::span<const std::size_t> lags);

/// Runs network.loss_and_gradient on `batch` without dropout and returns the profile of its input gradients.
/// Overwrites the network's gradients() and input_gradients(); parameters are unchanged.
/// @throws what Network::loss_and_gradient throws.
template <typename Scalar>
GradientThroughTime measure_gradient_through_time(nn::Network<Scalar>& network, const nn::SequenceBatch<Scalar>& batch,
                                                  const nn::Loss& loss, std::span<const std::size_t> lags);

/// Lags used by default: 0, 1, 2, 5, 10, 20, 50, 100, 200, 500, 1000 (those below the sequence length are kept).
std::vector<std::size_t> default_gradient_lags();

}  // namespace libseq::train
