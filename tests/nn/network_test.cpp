// Behaviour of Network beyond the torch and finite-difference checks: masking equivalence, truncated-BPTT state
// carry, initialisation, variational dropout masks, options validation.

#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <limits>
#include <random>
#include <string>

#include "libseq/error.hpp"
#include "libseq/nn/network.hpp"
#include "nn/network_fixtures.hpp"

#if defined(__SSE__) || defined(__x86_64__)
#include <xmmintrin.h>
#endif

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

NetworkOptions options_for(CellType cell) {
  NetworkOptions o;
  o.cell = cell;
  o.input_size = 2;
  o.static_size = 1;
  o.hidden_size = 4;
  o.layers = 2;
  o.horizon = 2;
  return o;
}

class EveryCell : public ::testing::TestWithParam<CellType> {};

// Masking rule of the interface (SequenceBatch::mask): a left-padded short history gives the same outputs and
// gradients as the short sequence alone. Reference: the rule itself (common practice, no source); tolerance 1e-12.
TEST_P(EveryCell, LeftPaddedSequenceMatchesTheShortSequenceAlone) {
  const auto o = options_for(GetParam());
  constexpr std::size_t long_steps = 7, short_steps = 4, pad = long_steps - short_steps;
  Network<double> net = libseq::test::random_network<double>(o, 5);
  const SequenceBatch<double> alone = libseq::test::random_batch<double>(o, short_steps, 1, 6);
  // Batch of two: sequence 0 is a full-length real sequence whose target is missing (so it adds nothing to the
  // loss), sequence 1 is `alone` left-padded with garbage inputs.
  SequenceBatch<double> padded = libseq::test::random_batch<double>(o, long_steps, 2, 7);
  padded.mask.assign(long_steps * 2, 1);
  for (std::size_t t = 0; t < long_steps; ++t) {
    for (std::size_t j = 0; j < o.input_size; ++j) {
      padded.inputs[(t * 2 + 1) * o.input_size + j] =
          t < pad ? 1e3 * (static_cast<double>(t) + 1.0) : alone.inputs[(t - pad) * o.input_size + j];
    }
    if (t < pad) padded.mask[t * 2 + 1] = 0;
  }
  padded.statics[1] = alone.statics[0];
  padded.targets = {std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::quiet_NaN(),
                    alone.targets[0], alone.targets[1]};
  const Loss loss{LossType::squared_sum, {}};

  const double loss_alone = net.loss_and_gradient(alone, loss, DropoutMode::off, nullptr);
  const std::vector<double> grad_alone(net.gradients().begin(), net.gradients().end());
  const std::vector<double> input_grad_alone(net.input_gradients().begin(), net.input_gradients().end());
  const std::vector<double> out_alone(net.last_outputs().begin(), net.last_outputs().end());

  const double loss_padded = net.loss_and_gradient(padded, loss, DropoutMode::off, nullptr);
  EXPECT_NEAR(loss_padded, loss_alone, 1e-12);
  for (std::size_t k = 0; k < out_alone.size(); ++k)
    EXPECT_NEAR(net.last_outputs()[out_alone.size() + k], out_alone[k], 1e-12);
  for (std::size_t i = 0; i < grad_alone.size(); ++i) EXPECT_NEAR(net.gradients()[i], grad_alone[i], 1e-12) << i;
  for (std::size_t t = 0; t < long_steps; ++t) {
    for (std::size_t j = 0; j < o.input_size; ++j) {
      const double g = net.input_gradients()[(t * 2 + 1) * o.input_size + j];
      if (t < pad) {
        EXPECT_EQ(g, 0.0) << "padded step " << t;
      } else {
        EXPECT_NEAR(g, input_grad_alone[(t - pad) * o.input_size + j], 1e-12);
      }
    }
  }
}

// Truncated BPTT support: running a sequence in two chunks, passing final_state() into set_initial_state(), gives
// the forward result of one pass over the whole sequence (tolerance 1e-12).
TEST_P(EveryCell, ChunkedForwardWithCarriedStateMatchesOnePass) {
  const auto o = options_for(GetParam());
  Network<double> net = libseq::test::random_network<double>(o, 8);
  const auto whole = libseq::test::random_batch<double>(o, 6, 3, 9);
  std::vector<double> expected(3 * o.horizon), got(3 * o.horizon);
  net.predict(whole, expected, DropoutMode::off, nullptr);
  const std::vector<double> expected_state(net.final_state().begin(), net.final_state().end());
  SequenceBatch<double> first = whole, second = whole;
  first.steps = second.steps = 3;
  const std::size_t half = 3 * 3 * o.input_size;
  first.inputs.assign(whole.inputs.begin(), whole.inputs.begin() + static_cast<std::ptrdiff_t>(half));
  second.inputs.assign(whole.inputs.begin() + static_cast<std::ptrdiff_t>(half), whole.inputs.end());
  net.predict(first, got, DropoutMode::off, nullptr);
  const std::vector<double> carried(net.final_state().begin(), net.final_state().end());
  net.set_initial_state(carried);
  net.predict(second, got, DropoutMode::off, nullptr);
  for (std::size_t k = 0; k < got.size(); ++k) EXPECT_NEAR(got[k], expected[k], 1e-12);
  for (std::size_t k = 0; k < expected_state.size(); ++k) EXPECT_NEAR(net.final_state()[k], expected_state[k], 1e-12);
  net.clear_initial_state();
  net.predict(second, got, DropoutMode::off, nullptr);
  EXPECT_GT(std::abs(got[0] - expected[0]), 1e-9);  // without the carried state the answer differs
  SequenceBatch<double> wrong = libseq::test::random_batch<double>(o, 3, 2, 1);
  net.set_initial_state(carried);
  std::vector<double> wrong_out(2 * o.horizon);
  EXPECT_THROW(net.predict(wrong, wrong_out, DropoutMode::off, nullptr), libseq::DataError);
}

// Initialisation: orthogonal recurrent blocks per gate (Saxe et al. 2014: QᵀQ = I), Glorot uniform bounds
// (Glorot & Bengio 2010, eq. 16), LSTM forget bias 1 (Jozefowicz et al. 2015), deterministic from the seed.
TEST_P(EveryCell, InitialisationFollowsTheStatedSchemes) {
  auto o = options_for(GetParam());
  o.hidden_size = 6;
  Network<double> net(o);
  net.initialize(42);
  const std::size_t h = o.hidden_size, g = o.gates();
  for (std::size_t l = 0; l < o.layers; ++l) {
    const auto& rec = net.block("layer" + std::to_string(l) + ".recurrent_weights");
    for (std::size_t gate = 0; gate < g; ++gate) {
      Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>> q(
          net.parameters().data() + rec.offset + gate * h * h, static_cast<Eigen::Index>(h),
          static_cast<Eigen::Index>(h));
      EXPECT_LT((q.transpose() * q - Eigen::MatrixXd::Identity(h, h)).cwiseAbs().maxCoeff(), 1e-12);
    }
    const auto& in = net.block("layer" + std::to_string(l) + ".input_weights");
    const double fan_in = l == 0 ? static_cast<double>(o.input_size + o.static_size) : static_cast<double>(h);
    const double bound = std::sqrt(6.0 / (fan_in + static_cast<double>(h)));
    double largest = 0.0;
    for (std::size_t i = 0; i < in.rows * in.cols; ++i)
      largest = std::max(largest, std::abs(net.parameters()[in.offset + i]));
    EXPECT_LE(largest, bound);
    EXPECT_GT(largest, 0.3 * bound);
    const auto& bias = net.block("layer" + std::to_string(l) + ".input_bias");
    for (std::size_t i = 0; i < bias.rows; ++i) {
      const bool forget = o.cell == CellType::lstm && i >= h && i < 2 * h;
      EXPECT_EQ(net.parameters()[bias.offset + i], forget ? 1.0 : 0.0);
    }
  }
  Network<double> again(o);
  again.initialize(42);
  EXPECT_TRUE(std::equal(net.parameters().begin(), net.parameters().end(), again.parameters().begin()));
  again.initialize(43);
  EXPECT_FALSE(std::equal(net.parameters().begin(), net.parameters().end(), again.parameters().begin()));
}

INSTANTIATE_TEST_SUITE_P(Cells, EveryCell, ::testing::Values(CellType::elman, CellType::lstm, CellType::gru),
                         [](const auto& info) { return libseq::nn::to_string(info.param); });

// Variational dropout (Gal & Ghahramani 2016): one mask per sequence and unit, the same at every step, with
// inverted scaling 1/(1 − p). With an identity Elman cell, W = I, U = 0 and constant inputs 1, h_t equals the input
// mask itself, so each unit must be 0 or 1/(1 − p) and equal across steps.
TEST(Dropout, InputMaskIsPerSequenceConstantOverTimeAndScaled) {
  NetworkOptions o;
  o.cell = CellType::elman;
  o.elman_activation = ElmanActivation::identity;
  o.input_size = 8;
  o.hidden_size = 8;
  o.input_dropout = 0.5;
  Network<double> net(o);
  const auto& w = net.block("layer0.input_weights");
  for (std::size_t i = 0; i < 8; ++i) net.parameters()[w.offset + i * 8 + i] = 1.0;
  SequenceBatch<double> batch;
  batch.steps = 5;
  batch.batch = 16;
  batch.inputs.assign(5 * 16 * 8, 1.0);
  std::mt19937_64 rng(3);
  std::vector<double> out(16);
  net.predict(batch, out, DropoutMode::sample, &rng);
  const auto states = net.top_states();
  std::size_t zeros = 0;
  for (std::size_t b = 0; b < 16; ++b) {
    for (std::size_t j = 0; j < 8; ++j) {
      const double first = states[b * 8 + j];
      EXPECT_TRUE(first == 0.0 || std::abs(first - 2.0) < 1e-15) << first;
      zeros += first == 0.0 ? 1 : 0;
      for (std::size_t t = 1; t < 5; ++t) EXPECT_EQ(states[(t * 16 + b) * 8 + j], first);
    }
  }
  // 128 Bernoulli(0.5) draws: a count outside [34, 94] has probability below 1e-7 (binomial tail).
  EXPECT_GT(zeros, 34U);
  EXPECT_LT(zeros, 94U);
  net.predict(batch, out, DropoutMode::off, nullptr);
  for (double v : net.top_states()) EXPECT_EQ(v, 1.0);
}

TEST(Dropout, McSamplesAreReproducibleFromTheSeedAndDifferBetweenSeeds) {
  auto o = options_for(CellType::lstm);
  o.input_dropout = o.recurrent_dropout = o.output_dropout = 0.2;
  Network<float> net = libseq::test::random_network<float>(o, 1);
  const auto batch = libseq::test::random_batch<float>(o, 6, 4, 2);
  std::vector<float> a(8), b(8), c(8);
  std::mt19937_64 r1(10), r2(10), r3(11);
  net.predict(batch, a, DropoutMode::sample, &r1);
  net.predict(batch, b, DropoutMode::sample, &r2);
  net.predict(batch, c, DropoutMode::sample, &r3);
  EXPECT_EQ(a, b);
  EXPECT_NE(a, c);
  EXPECT_THROW(net.predict(batch, a, DropoutMode::sample, nullptr), libseq::ConfigError);
}

#if defined(__SSE__) || defined(__x86_64__)
// The kernels flush subnormals during a call (see network.cpp); the caller's floating-point mode must come back.
TEST(Network, RestoresTheCallersFloatingPointControlWord) {
  const auto o = options_for(CellType::gru);
  Network<float> net = libseq::test::random_network<float>(o, 1);
  const auto batch = libseq::test::random_batch<float>(o, 4, 2, 2);
  const unsigned int before = _mm_getcsr();
  net.loss_and_gradient(batch, Loss{}, DropoutMode::off, nullptr);
  std::vector<float> out(2 * o.horizon);
  net.predict(batch, out, DropoutMode::off, nullptr);
  EXPECT_EQ(_mm_getcsr(), before);
}
#endif

TEST(NetworkOptions, ValidateListsEveryBrokenRule) {
  NetworkOptions o;
  o.input_size = 0;
  o.hidden_size = 0;
  o.recurrent_dropout = 1.0;
  o.head = HeadType::quantile;
  try {
    o.validate();
    FAIL() << "expected ConfigError";
  } catch (const libseq::ConfigError& e) {
    const std::string m = e.what();
    for (const char* key : {"input_size = 0", "hidden_size = 0", "recurrent_dropout = 1", "quantile_levels"}) {
      EXPECT_NE(m.find(key), std::string::npos) << key << " missing from: " << m;
    }
  }
  EXPECT_THROW(Network<float>{o}, libseq::ConfigError);
}

TEST(Network, LayoutMapsToTorchBlockShapesAndRejectsAMismatchedLoss) {
  auto o = options_for(CellType::gru);
  Network<float> net(o);
  EXPECT_EQ(net.block("layer0.input_weights").rows, 3 * o.hidden_size);
  EXPECT_EQ(net.block("layer0.input_weights").cols, o.input_size);
  EXPECT_EQ(net.block("layer1.input_weights").cols, o.hidden_size);
  EXPECT_EQ(net.block("layer0.static_weights").cols, o.static_size);
  EXPECT_EQ(net.block("head.weights").rows, o.horizon);
  const auto& last = net.parameter_layout().back();
  EXPECT_EQ(last.offset + last.rows * last.cols, net.parameter_count());
  EXPECT_THROW(net.block("layer2.input_weights"), libseq::ConfigError);
  const auto batch = libseq::test::random_batch<float>(o, 3, 2, 1);
  EXPECT_THROW(net.loss_and_gradient(batch, Loss{LossType::gaussian_nll, {}}, DropoutMode::off, nullptr),
               libseq::ConfigError);
  Network<float> copy(net);
  EXPECT_TRUE(std::equal(net.parameters().begin(), net.parameters().end(), copy.parameters().begin()));
  for (auto cell : {CellType::elman, CellType::lstm, CellType::gru}) {
    EXPECT_EQ(libseq::nn::parse_cell_type(libseq::nn::to_string(cell)), cell);
  }
  EXPECT_THROW(libseq::nn::parse_cell_type("rnn"), libseq::ConfigError);
}

}  // namespace
