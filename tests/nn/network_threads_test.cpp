// Batch slices and threads of one network (Network::batch_slices, set_threads): a batch cut into slices gives the
// same results as its halves run alone, and training is bit-identical with 1 and 2 threads (the engine issue's
// determinism rule).

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <random>
#include <vector>

#include "libseq/error.hpp"
#include "network_fixtures.hpp"

namespace {

using libseq::nn::CellType;
using libseq::nn::DropoutMode;
using libseq::nn::Loss;
using libseq::nn::LossType;
using libseq::nn::Network;
using libseq::nn::NetworkOptions;
using libseq::nn::SequenceBatch;

NetworkOptions two_layers_with_statics(CellType cell) {
  NetworkOptions o;
  o.cell = cell;
  o.input_size = 3;
  o.static_size = 2;
  o.hidden_size = 5;
  o.layers = 2;
  o.horizon = 2;
  return o;
}

// Sequences [first, first + count) of a time-major batch, as a batch of their own.
SequenceBatch<double> part(const SequenceBatch<double>& all, const NetworkOptions& o, std::size_t first,
                           std::size_t count) {
  SequenceBatch<double> p;
  p.steps = all.steps;
  p.batch = count;
  for (std::size_t t = 0; t < all.steps; ++t) {
    const auto begin = all.inputs.begin() + static_cast<std::ptrdiff_t>((t * all.batch + first) * o.input_size);
    p.inputs.insert(p.inputs.end(), begin, begin + static_cast<std::ptrdiff_t>(count * o.input_size));
    const auto mask = all.mask.begin() + static_cast<std::ptrdiff_t>(t * all.batch + first);
    p.mask.insert(p.mask.end(), mask, mask + static_cast<std::ptrdiff_t>(count));
  }
  p.statics.assign(all.statics.begin() + static_cast<std::ptrdiff_t>(first * o.static_size),
                   all.statics.begin() + static_cast<std::ptrdiff_t>((first + count) * o.static_size));
  p.targets.assign(all.targets.begin() + static_cast<std::ptrdiff_t>(first * o.horizon),
                   all.targets.begin() + static_cast<std::ptrdiff_t>((first + count) * o.horizon));
  return p;
}

class EveryCell : public ::testing::TestWithParam<CellType> {};

// A squared-sum loss is a sum over sequences, so its gradient over a batch is the sum of the gradients over any
// split of the batch (mathematical identity, common practice, no source). 131 sequences make 2 slices (66 + 65)
// with left padding, statics and 2 layers; the halves (66 and 65 sequences) run as 1 slice each. Double precision:
// only the summation order differs, hence 1e-12.
TEST_P(EveryCell, SlicedBatchMatchesItsSlicesRunAlone) {
  const auto o = two_layers_with_statics(GetParam());
  const std::size_t steps = 7, batch = 131, first_size = 66;
  ASSERT_EQ(Network<double>::batch_slices(batch), 2U);
  ASSERT_EQ(Network<double>::batch_slices(first_size), 1U);
  auto all = libseq::test::random_batch<double>(o, steps, batch, 11);
  all.mask.assign(steps * batch, 1);
  for (std::size_t b = 0; b < batch; b += 3) {
    for (std::size_t t = 0; t < b % steps; ++t) all.mask[t * batch + b] = 0;  // left padding of b % 7 steps
  }
  const Loss loss{LossType::squared_sum, {}};
  auto net = libseq::test::random_network<double>(o, 5);
  net.set_threads(2);
  const double value = net.loss_and_gradient(all, loss, DropoutMode::off, nullptr);
  const std::vector<double> grad(net.gradients().begin(), net.gradients().end());
  const std::vector<double> input_grad(net.input_gradients().begin(), net.input_gradients().end());
  const std::vector<double> outputs(net.last_outputs().begin(), net.last_outputs().end());
  const std::vector<double> final_state(net.final_state().begin(), net.final_state().end());
  const std::vector<double> top(net.top_states().begin(), net.top_states().end());
  const std::vector<double> norms(net.state_gradient_norms().begin(), net.state_gradient_norms().end());

  auto alone = libseq::test::random_network<double>(o, 5);
  std::vector<double> grad_sum(grad.size(), 0.0), norm_sq(norms.size(), 0.0);
  double value_sum = 0.0;
  const std::size_t h = o.hidden_size, states = GetParam() == CellType::lstm ? 2 : 1;
  for (const auto& [first, count] : {std::pair<std::size_t, std::size_t>{0, first_size},
                                     std::pair<std::size_t, std::size_t>{first_size, batch - first_size}}) {
    const auto p = part(all, o, first, count);
    value_sum += alone.loss_and_gradient(p, loss, DropoutMode::off, nullptr);
    for (std::size_t i = 0; i < grad.size(); ++i) grad_sum[i] += alone.gradients()[i];
    for (std::size_t i = 0; i < norms.size(); ++i) norm_sq[i] += std::pow(alone.state_gradient_norms()[i], 2);
    for (std::size_t t = 0; t < steps; ++t) {
      for (std::size_t k = 0; k < count * o.input_size; ++k) {
        EXPECT_NEAR(input_grad[(t * batch + first) * o.input_size + k],
                    alone.input_gradients()[t * count * o.input_size + k], 1e-12);
      }
      for (std::size_t k = 0; k < count * h; ++k) {
        EXPECT_EQ(top[(t * batch + first) * h + k], alone.top_states()[t * count * h + k]);
      }
    }
    for (std::size_t k = 0; k < count * o.horizon; ++k) {
      EXPECT_EQ(outputs[first * o.horizon + k], alone.last_outputs()[k]);
    }
    for (std::size_t layer_state = 0; layer_state < o.layers * states; ++layer_state) {
      for (std::size_t k = 0; k < count * h; ++k) {
        EXPECT_EQ(final_state[(layer_state * batch + first) * h + k],
                  alone.final_state()[layer_state * count * h + k]);
      }
    }
  }
  EXPECT_NEAR(value, value_sum, 1e-12 * std::abs(value_sum));
  for (std::size_t i = 0; i < grad.size(); ++i) {
    EXPECT_NEAR(grad[i], grad_sum[i], 1e-12 * (1.0 + std::abs(grad_sum[i]))) << "parameter " << i;
  }
  for (std::size_t i = 0; i < norms.size(); ++i) {
    EXPECT_NEAR(norms[i], std::sqrt(norm_sq[i]), 1e-12 * (1.0 + norms[i])) << "step × layer " << i;
  }
}

// Same seed → bit-identical trained weights with 1 and 2 threads (engine issue, "Determinism"). Float, 160
// sequences (2 slices), every dropout on (masks drawn from the seed), 6 plain gradient steps.
TEST_P(EveryCell, TrainedWeightsAreBitIdenticalWithOneAndTwoThreads) {
  auto o = two_layers_with_statics(GetParam());
  o.input_dropout = 0.1;
  o.recurrent_dropout = 0.2;
  o.output_dropout = 0.1;
  const std::size_t steps = 12, batch = 160;
  ASSERT_EQ(Network<float>::batch_slices(batch), 2U);
  const auto data = libseq::test::random_batch<float>(o, steps, batch, 3);
  const Loss loss{LossType::squared_mean, {}};
  const auto train = [&](std::size_t threads) {
    Network<float> net(o);
    net.initialize(42);
    net.set_threads(threads);
    std::mt19937_64 rng(9);
    for (int step = 0; step < 6; ++step) {
      net.loss_and_gradient(data, loss, DropoutMode::sample, &rng);
      for (std::size_t i = 0; i < net.parameter_count(); ++i) net.parameters()[i] -= 0.05F * net.gradients()[i];
    }
    return std::vector<float>(net.parameters().begin(), net.parameters().end());
  };
  const auto one = train(1), two = train(2);
  ASSERT_EQ(one.size(), two.size());
  EXPECT_EQ(std::memcmp(one.data(), two.data(), one.size() * sizeof(float)), 0);
  // The weights moved (the comparison is not between two untouched initialisations).
  Network<float> fresh(o);
  fresh.initialize(42);
  EXPECT_FALSE(std::equal(one.begin(), one.end(), fresh.parameters().begin()));
}

INSTANTIATE_TEST_SUITE_P(Cells, EveryCell, ::testing::Values(CellType::elman, CellType::lstm, CellType::gru),
                         [](const auto& info) { return libseq::nn::to_string(info.param); });

TEST(NetworkThreads, SliceCountDependsOnTheBatchSizeOnly) {
  EXPECT_EQ(Network<float>::batch_slices(1), 1U);
  EXPECT_EQ(Network<float>::batch_slices(127), 1U);
  EXPECT_EQ(Network<float>::batch_slices(128), 2U);
  EXPECT_EQ(Network<float>::batch_slices(4096), 2U);
}

TEST(NetworkThreads, RejectsZeroThreads) {
  Network<float> net(NetworkOptions{});
  EXPECT_THROW(net.set_threads(0), libseq::ConfigError);
  EXPECT_EQ(net.threads(), 1U);
}

}  // namespace
