// Finite-difference checks of the analytical BPTT gradients, in double. Central differences
// (f(θ + ε) − f(θ − ε)) / 2ε with ε = 1e-6 on every parameter and every input; pass rule
// |analytic − numeric| <= 1e-7 + 1e-6·|numeric| (truncation error O(ε²) ≈ 1e-12, rounding ≈ 1e-16/ε = 1e-10).
// Reference: the definition of the derivative (common practice, no source).

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>

#include "libseq/nn/network.hpp"
#include "nn/network_fixtures.hpp"

namespace {

using libseq::nn::CellType;
using libseq::nn::DropoutMode;
using libseq::nn::ElmanActivation;
using libseq::nn::HeadType;
using libseq::nn::Loss;
using libseq::nn::LossType;
using libseq::nn::Network;
using libseq::nn::NetworkOptions;
using libseq::nn::SequenceBatch;

struct Case {
  NetworkOptions options;
  Loss loss;
  bool masked = false;          // left-pad the second sequence by two steps
  bool missing_target = false;  // one NaN target
  DropoutMode dropout = DropoutMode::off;
  bool initial_state = false;  // start from a non-zero state (truncated BPTT)
};

void check_gradients(const Case& c) {
  constexpr std::size_t steps = 5, batch = 3;
  constexpr double step = 1e-6;
  Network<double> net = libseq::test::random_network<double>(c.options, 11);
  SequenceBatch<double> data = libseq::test::random_batch<double>(c.options, steps, batch, 12);
  if (c.masked) {
    data.mask.assign(steps * batch, 1);
    data.mask[0 * batch + 1] = 0;
    data.mask[1 * batch + 1] = 0;
  }
  if (c.missing_target) data.targets[1] = std::numeric_limits<double>::quiet_NaN();
  if (c.initial_state) {
    std::vector<double> state(net.state_size(batch));
    for (std::size_t i = 0; i < state.size(); ++i) state[i] = 0.3 * std::sin(1.0 + static_cast<double>(i));
    net.set_initial_state(state);
  }
  // The same seed at every evaluation gives the same dropout masks, so the loss is a smooth function of θ.
  const auto evaluate = [&]() {
    std::mt19937_64 rng(99);
    return net.loss_and_gradient(data, c.loss, c.dropout, &rng);
  };
  evaluate();
  const std::vector<double> analytic(net.gradients().begin(), net.gradients().end());
  const std::vector<double> analytic_inputs(net.input_gradients().begin(), net.input_gradients().end());

  double worst = 0.0;
  for (std::size_t i = 0; i < net.parameter_count(); ++i) {
    const double saved = net.parameters()[i];
    net.parameters()[i] = saved + step;
    const double up = evaluate();
    net.parameters()[i] = saved - step;
    const double down = evaluate();
    net.parameters()[i] = saved;
    const double numeric = (up - down) / (2 * step);
    worst = std::max(worst, std::abs(analytic[i] - numeric));
    EXPECT_NEAR(analytic[i], numeric, 1e-7 + 1e-6 * std::abs(numeric)) << "parameter " << i;
  }
  for (std::size_t i = 0; i < data.inputs.size(); ++i) {
    const double saved = data.inputs[i];
    data.inputs[i] = saved + step;
    const double up = evaluate();
    data.inputs[i] = saved - step;
    const double down = evaluate();
    data.inputs[i] = saved;
    const double numeric = (up - down) / (2 * step);
    worst = std::max(worst, std::abs(analytic_inputs[i] - numeric));
    EXPECT_NEAR(analytic_inputs[i], numeric, 1e-7 + 1e-6 * std::abs(numeric)) << "input " << i;
  }
  if (c.masked) {
    // Padded steps of sequence 1 receive no gradient.
    for (std::size_t t = 0; t < 2; ++t)
      for (std::size_t j = 0; j < c.options.input_size; ++j) {
        EXPECT_EQ(analytic_inputs[(t * batch + 1) * c.options.input_size + j], 0.0);
      }
  }
  std::printf("[finite differences] %zu parameters, %zu inputs, worst |analytic - numeric| = %.3g\n",
              net.parameter_count(), data.inputs.size(), worst);
}

NetworkOptions small(CellType cell, std::size_t layers = 2) {
  NetworkOptions o;
  o.cell = cell;
  o.input_size = 2;
  o.hidden_size = 3;
  o.layers = layers;
  return o;
}

const Loss squared_mean{LossType::squared_mean, {}};

TEST(GradientCheck, ElmanTanhTwoLayersPointHead) { check_gradients({small(CellType::elman), squared_mean}); }

TEST(GradientCheck, ElmanReluTwoLayersPointHead) {
  auto o = small(CellType::elman);
  o.elman_activation = ElmanActivation::relu;
  check_gradients({o, squared_mean});
}

TEST(GradientCheck, ElmanIdentityOneLayerSquaredSum) {
  auto o = small(CellType::elman, 1);
  o.elman_activation = ElmanActivation::identity;
  check_gradients({o, Loss{LossType::squared_sum, {}}});
}

TEST(GradientCheck, LstmTwoLayersPointHead) { check_gradients({small(CellType::lstm), squared_mean}); }

TEST(GradientCheck, GruTwoLayersPointHead) { check_gradients({small(CellType::gru), squared_mean}); }

TEST(GradientCheck, LstmGaussianHeadWithHorizonAndMissingTarget) {
  auto o = small(CellType::lstm, 1);
  o.head = HeadType::gaussian;
  o.horizon = 3;
  check_gradients({o, Loss{LossType::gaussian_nll, {}}, false, true});
}

TEST(GradientCheck, GruQuantileHeadPinball) {
  auto o = small(CellType::gru, 1);
  o.head = HeadType::quantile;
  o.horizon = 2;
  o.quantile_levels = {0.1, 0.5, 0.9};
  check_gradients({o, Loss{LossType::pinball, {0.1, 0.5, 0.9}}});
}

TEST(GradientCheck, StaticInputsForEveryCell) {
  for (auto cell : {CellType::elman, CellType::lstm, CellType::gru}) {
    auto o = small(cell);
    o.static_size = 2;
    check_gradients({o, squared_mean});
  }
}

TEST(GradientCheck, MaskedLeftPaddingForEveryCell) {
  for (auto cell : {CellType::elman, CellType::lstm, CellType::gru}) {
    auto o = small(cell);
    o.static_size = 1;
    check_gradients({o, squared_mean, true});
  }
}

TEST(GradientCheck, FixedDropoutMasksForEveryCell) {
  for (auto cell : {CellType::elman, CellType::lstm, CellType::gru}) {
    auto o = small(cell);
    o.input_dropout = 0.3;
    o.recurrent_dropout = 0.3;
    o.output_dropout = 0.3;
    check_gradients({o, squared_mean, true, false, DropoutMode::sample});
  }
}

TEST(GradientCheck, NonZeroInitialStateForEveryCell) {
  for (auto cell : {CellType::elman, CellType::lstm, CellType::gru}) {
    check_gradients({small(cell), squared_mean, false, false, DropoutMode::off, true});
  }
}

}  // namespace
