#pragma once
// Small random networks and batches shared by the nn tests.

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <vector>

#include "libseq/nn/network.hpp"

namespace libseq::test {

/// A batch with standard normal inputs, statics and targets drawn from `seed`.
template <typename Scalar>
nn::SequenceBatch<Scalar> random_batch(const nn::NetworkOptions& options, std::size_t steps, std::size_t batch,
                                       std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  nn::SequenceBatch<Scalar> b;
  b.steps = steps;
  b.batch = batch;
  for (std::size_t i = 0; i < steps * batch * options.input_size; ++i)
    b.inputs.push_back(static_cast<Scalar>(normal(rng)));
  for (std::size_t i = 0; i < batch * options.static_size; ++i) b.statics.push_back(static_cast<Scalar>(normal(rng)));
  for (std::size_t i = 0; i < batch * options.horizon; ++i) b.targets.push_back(static_cast<Scalar>(normal(rng)));
  return b;
}

/// Network initialised from `seed`, with every bias then redrawn in [−0.3, 0.3] so that bias gradients are exercised
/// away from the initial zero.
template <typename Scalar>
nn::Network<Scalar> random_network(const nn::NetworkOptions& options, std::uint64_t seed) {
  nn::Network<Scalar> net(options);
  net.initialize(seed);
  std::mt19937_64 rng(seed + 1);
  std::uniform_real_distribution<double> uniform(-0.3, 0.3);
  for (const auto& block : net.parameter_layout()) {
    if (block.cols != 1) continue;
    for (std::size_t i = 0; i < block.rows; ++i)
      net.parameters()[block.offset + i] += static_cast<Scalar>(uniform(rng));
  }
  return net;
}

}  // namespace libseq::test
