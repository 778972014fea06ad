// Trainer, truncated BPTT and the gradient-through-time diagnostic.
// References: closed-form derivatives of a one-unit linear recurrence (mathematical identities, common practice,
// no source); early stopping as in Prechelt (1998); ReduceLROnPlateau semantics of torch.optim.lr_scheduler.

#include "libseq/train/trainer.hpp"

#include <gtest/gtest.h>
#include <omp.h>

#include <cmath>
#include <random>

#include "libseq/error.hpp"
#include "libseq/train/diagnostics.hpp"

namespace libseq::train {
namespace {

// One-unit linear Elman network h_t = u·x_t + w·h_{t−1} (biases 0), head y = v·h_T + c.
nn::NetworkOptions linear_options() {
  nn::NetworkOptions options;
  options.cell = nn::CellType::elman;
  options.elman_activation = nn::ElmanActivation::identity;
  options.input_size = 1;
  options.hidden_size = 1;
  options.layers = 1;
  return options;
}

void set_linear(nn::Network<double>& network, double u, double w, double v, double c) {
  auto p = network.parameters();
  std::fill(p.begin(), p.end(), 0.0);
  p[network.block("layer0.input_weights").offset] = u;
  p[network.block("layer0.recurrent_weights").offset] = w;
  p[network.block("head.weights").offset] = v;
  p[network.block("head.bias").offset] = c;
}

nn::Loss squared_sum() {
  nn::Loss loss;
  loss.type = nn::LossType::squared_sum;
  return loss;
}

TrainOptions plain_sgd(double rate) {
  TrainOptions options;
  options.epochs = 1;
  options.batch_size = 1;
  options.shuffle = false;
  options.initialize_network = false;
  options.loss = squared_sum();
  options.optimizer.type = OptimizerType::sgd;
  options.optimizer.learning_rate = rate;
  options.clip_norm = 0;
  options.early_stopping.restore_best = false;
  options.gradient_diagnostic = false;
  return options;
}

}  // namespace

// ∂h_T/∂x_{T−k} = w^k and ∂h_T/∂h_0 = w^T for h_t = w·h_{t−1} + x_t (mathematical identity, no source). With
// y = h_T and squared_sum loss against target y − 0.5, d loss / d y = 1, so the diagnostic at lag k is w^k exactly.
TEST(GradientThroughTime, LinearRecurrenceGivesPowersOfTheRecurrentWeight) {
  const std::size_t steps = 50;
  for (double w : {2.0, 0.5}) {
    nn::Network<double> network(linear_options());
    set_linear(network, 1.0, w, 1.0, 0.0);
    nn::SequenceBatch<double> batch;
    batch.steps = steps;
    batch.batch = 1;
    batch.inputs.assign(steps, 0.0);  // zero inputs: h_T = w^T·h_0 exactly, for the h_0 check below
    batch.targets = {-0.5};
    const std::vector<std::size_t> lags{0, 1, 10, 49, 50};
    const GradientThroughTime profile = measure_gradient_through_time(network, batch, squared_sum(), lags);
    ASSERT_EQ(profile.lags, (std::vector<std::size_t>{0, 1, 10, 49}));  // lag 50 >= T is dropped
    for (std::size_t i = 0; i < profile.lags.size(); ++i) {
      const double expected = std::pow(w, static_cast<double>(profile.lags[i]));
      EXPECT_NEAR(profile.input_gradient_norm[i], expected, 1e-12 * expected) << "w " << w << " lag " << profile.lags[i];
      EXPECT_NEAR(profile.relative_to_last_step[i], expected, 1e-12 * expected);
    }
    // ∂h_T/∂h_0 = w^T: 2^50 ≈ 1.1259e15 and 2^−50 ≈ 8.88e−16, through the initial state.
    std::vector<double> out(1);
    const std::vector<double> h0{1.0};
    network.set_initial_state(h0);
    network.predict(batch, out, nn::DropoutMode::off, nullptr);
    const double expected = std::pow(w, 50.0);
    EXPECT_NEAR(out[0], expected, 1e-12 * expected);
    EXPECT_NEAR(out[0], w > 1 ? 1.1259e15 : 8.88e-16, w > 1 ? 1e11 : 1e-18);
  }
}

TEST(GradientThroughTime, PaddedStepsAreLeftOutOfTheMean) {
  // 2 steps × 2 sequences × 1 input; sequence 1 is padding at step 0.
  const std::vector<double> gradients{3.0, 100.0, -1.0, 2.0};
  const std::vector<std::uint8_t> mask{1, 0, 1, 1};
  const std::vector<std::size_t> lags{0, 1};
  const auto profile = gradient_through_time<double>(gradients, 2, 2, 1, mask, lags);
  EXPECT_DOUBLE_EQ(profile.input_gradient_norm[0], 1.5);  // (|−1| + |2|) / 2
  EXPECT_DOUBLE_EQ(profile.input_gradient_norm[1], 3.0);  // only sequence 0 is real at step 0
  EXPECT_THROW(gradient_through_time<double>(gradients, 3, 2, 1, {}, lags), DataError);
}

// One SGD step (rate η, no clipping) from known weights, compared with the closed-form gradient of the linear
// recurrence: within the last window [s, T), d L/d h_t = δ·v·w^(T−t), dL/du = Σ dL/dh_t·x_t,
// dL/dw = Σ dL/dh_t·h_{t−1}, with h_s carried from the earlier windows and no gradient beyond it; δ = 2(y − y*).
TEST(TruncatedBptt, GradientStopsAtTheWindowEdgeAsTheClosedFormSays) {
  const double u = 0.7, w = 0.9, v = 1.3, c = 0.1, target = 0.25, rate = 0.01;
  const std::vector<double> x{0.5, -1.0, 0.25, 2.0, -0.75, 1.5, 0.1, -0.3, 0.8, -1.2, 0.6, 0.4};
  const std::size_t steps = x.size();
  InMemorySequences<double> data(steps, 1, 1, x, {target});
  // (window, stride) → start of the last window: (5, 5) windows 0,5,10 → s = 10; (5, 3) starts 0,3,6,9 → s = 9;
  // (12, 0) one window → s = 0, which is full BPTT.
  for (auto [window, stride, last_start] : {std::tuple<std::size_t, std::size_t, std::size_t>{5, 5, 10},
                                            {5, 3, 9}, {12, 0, 0}}) {
    std::vector<double> h(steps + 1, 0.0);  // h[t] = state after t steps
    for (std::size_t t = 1; t <= steps; ++t) h[t] = u * x[t - 1] + w * h[t - 1];
    const double y = v * h[steps] + c;
    const double delta = 2 * (y - target);
    double grad_u = 0, grad_w = 0, grad_bias = 0, dh = delta * v;
    for (std::size_t t = steps; t > last_start; --t) {
      grad_u += dh * x[t - 1];
      grad_w += dh * h[t - 1];
      grad_bias += dh;
      dh *= w;
    }
    TrainOptions options = plain_sgd(rate);
    options.bptt = BpttMode::truncated;
    options.bptt_window = window;
    options.bptt_stride = stride;
    nn::Network<double> network(linear_options());
    set_linear(network, u, w, v, c);
    const TrainSummary summary = Trainer<double>(options).train(network, data);
    ASSERT_EQ(summary.updates, 1u);
    const auto p = network.parameters();
    auto at = [&](const char* name) { return p[network.block(name).offset]; };
    const std::string what = "window " + std::to_string(window) + " stride " + std::to_string(stride);
    EXPECT_NEAR(at("layer0.input_weights"), u - rate * grad_u, 1e-13) << what;
    EXPECT_NEAR(at("layer0.recurrent_weights"), w - rate * grad_w, 1e-13) << what;
    EXPECT_NEAR(at("layer0.input_bias"), -rate * grad_bias, 1e-13) << what;
    EXPECT_NEAR(at("head.weights"), v - rate * delta * h[steps], 1e-13) << what;
    EXPECT_NEAR(at("head.bias"), c - rate * delta, 1e-13) << what;
  }
}

namespace {

// Random sequences of `count` × `steps` × 2 inputs with target = sum of the last two steps' first input.
InMemorySequences<float> random_sequences(std::size_t count, std::size_t steps, std::uint64_t seed, float sign = 1) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<float> uniform(-1, 1);
  std::vector<float> inputs(count * steps * 2), targets(count);
  for (auto& v : inputs) v = uniform(rng);
  for (std::size_t i = 0; i < count; ++i) {
    targets[i] = sign * (inputs[(i * steps + steps - 1) * 2] + inputs[(i * steps + steps - 2) * 2]);
  }
  return InMemorySequences<float>(steps, 2, 1, inputs, targets);
}

nn::NetworkOptions small_lstm(double dropout) {
  nn::NetworkOptions options;
  options.cell = nn::CellType::lstm;
  options.input_size = 2;
  options.hidden_size = 8;
  options.input_dropout = dropout;
  options.recurrent_dropout = dropout;
  return options;
}

TrainOptions small_run(std::size_t epochs) {
  TrainOptions options;
  options.epochs = epochs;
  options.batch_size = 16;
  options.seed = 7;
  options.optimizer.learning_rate = 0.01;
  options.early_stopping.enabled = false;
  options.early_stopping.restore_best = false;
  return options;
}

std::vector<float> train_member(std::uint64_t seed, const InMemorySequences<float>& data, TrainSummary* summary) {
  TrainOptions options = small_run(3);
  options.seed = seed;
  options.bptt = BpttMode::truncated;  // exercises state carrying too
  options.bptt_window = 6;
  options.bptt_stride = 4;
  nn::Network<float> network(small_lstm(0.2));
  TrainSummary s = Trainer<float>(options).train(network, data);
  if (summary != nullptr) *summary = s;
  return {network.parameters().begin(), network.parameters().end()};
}

}  // namespace

TEST(Trainer, TruncatedWithAWindowCoveringTheSequenceEqualsFullBpttBitForBit) {
  const auto data = random_sequences(40, 10, 3);
  TrainOptions full = small_run(3);
  TrainOptions truncated = full;
  truncated.bptt = BpttMode::truncated;
  truncated.bptt_window = 10;
  nn::Network<float> a(small_lstm(0.1)), b(small_lstm(0.1));
  const TrainSummary sa = Trainer<float>(full).train(a, data);
  const TrainSummary sb = Trainer<float>(truncated).train(b, data);
  ASSERT_EQ(sa.updates, 9u);  // 3 epochs × ceil(40 / 16) batches
  EXPECT_EQ(sa.train_loss, sb.train_loss);
  EXPECT_TRUE(std::equal(a.parameters().begin(), a.parameters().end(), b.parameters().begin()));
}

TEST(Trainer, SameSeedGivesBitIdenticalWeightsWithOneOrTwoThreads) {
  const auto data = random_sequences(48, 12, 5);
  omp_set_num_threads(1);
  const auto one = train_member(11, data, nullptr);
  omp_set_num_threads(2);
  const auto two = train_member(11, data, nullptr);
  EXPECT_EQ(one, two);
  // Two members trained concurrently, one per thread, equal the members trained alone.
  const auto other = train_member(12, data, nullptr);
  EXPECT_NE(one, other);
  std::vector<std::vector<float>> parallel(2);
#pragma omp parallel for num_threads(2)
  for (int m = 0; m < 2; ++m) parallel[static_cast<std::size_t>(m)] = train_member(11 + static_cast<std::uint64_t>(m), data, nullptr);
  EXPECT_EQ(parallel[0], one);
  EXPECT_EQ(parallel[1], other);
}

// Training targets +(x_{T−1} + x_{T−2}), validation targets the opposite sign: learning the training task makes the
// validation loss worse, so the best validation epoch is early and early stopping must put its weights back.
TEST(Trainer, EarlyStoppingRestoresTheBestWeights) {
  const auto training = random_sequences(64, 6, 1);
  const auto validation = random_sequences(32, 6, 2, -1);
  TrainOptions options = small_run(40);
  options.early_stopping.enabled = true;
  options.early_stopping.patience = 3;
  options.early_stopping.restore_best = true;
  nn::Network<float> network(small_lstm(0.0));
  const Trainer<float> trainer(options);
  const TrainSummary summary = trainer.train(network, training, &validation);
  EXPECT_EQ(summary.termination, TerminationReason::early_stopped) << summary.full_report();
  ASSERT_TRUE(summary.restored_best);
  EXPECT_EQ(summary.epochs_run, summary.best_epoch + 1 + 3);
  // The restored network reproduces the best epoch's validation loss exactly, not the last epoch's.
  EXPECT_EQ(trainer.evaluate(network, validation), summary.validation_loss[summary.best_epoch]);
  EXPECT_EQ(summary.best_loss, summary.validation_loss[summary.best_epoch]);
  EXPECT_LT(summary.best_loss, summary.validation_loss.back());
  // Without restoring, the same run ends on the last epoch's weights.
  options.early_stopping.restore_best = false;
  nn::Network<float> last(small_lstm(0.0));
  const TrainSummary unrestored = Trainer<float>(options).train(last, training, &validation);
  EXPECT_EQ(Trainer<float>(options).evaluate(last, validation), unrestored.validation_loss.back());
}

TEST(Trainer, ReduceOnPlateauLowersTheRate) {
  const auto training = random_sequences(32, 6, 1);
  const auto validation = random_sequences(32, 6, 2, -1);  // validation loss does not improve for long
  TrainOptions options = small_run(12);
  options.schedule.type = ScheduleType::plateau;
  options.schedule.plateau_patience = 1;
  options.schedule.plateau_factor = 0.5;
  nn::Network<float> network(small_lstm(0.0));
  const TrainSummary summary = Trainer<float>(options).train(network, training, &validation);
  ASSERT_EQ(summary.learning_rate.size(), 12u);
  EXPECT_EQ(summary.learning_rate.front(), 0.01);
  EXPECT_LT(summary.learning_rate.back(), 0.01 * 0.5 * 0.5) << summary.full_report();
  for (std::size_t e = 1; e < summary.learning_rate.size(); ++e) {
    const double ratio = summary.learning_rate[e] / summary.learning_rate[e - 1];
    EXPECT_TRUE(ratio == 1.0 || std::abs(ratio - 0.5) < 1e-15) << "epoch " << e << " ratio " << ratio;
  }
}

TEST(Trainer, DivergenceIsRecordedNotThrown) {
  InMemorySequences<double> data(8, 1, 1, {1, 2, 3, 4, 5, 6, 7, 8}, {1.0});
  TrainOptions options = plain_sgd(1e30);
  options.epochs = 20;
  options.early_stopping.restore_best = true;
  nn::Network<double> network(linear_options());
  set_linear(network, 1.0, 1.0, 1.0, 0.0);
  TrainSummary summary;
  ASSERT_NO_THROW(summary = Trainer<double>(options).train(network, data));
  EXPECT_EQ(summary.termination, TerminationReason::diverged);
  EXPECT_NE(summary.termination_detail.find("non-finite"), std::string::npos) << summary.termination_detail;
  EXPECT_LT(summary.epochs_run, 20u);
  EXPECT_TRUE(std::isnan(summary.train_loss.back()));
  EXPECT_TRUE(summary.restored_best);  // the first epoch was finite, so its weights come back
  EXPECT_NE(summary.brief_report().find("diverged"), std::string::npos);
}

TEST(Trainer, ClippingIsCountedAndTheDiagnosticIsReported) {
  const auto data = random_sequences(32, 8, 4);
  TrainOptions options = small_run(2);
  options.clip_norm = 1e-4;  // every update is clipped
  nn::Network<float> network(small_lstm(0.0));
  const TrainSummary summary = Trainer<float>(options).train(network, data);
  EXPECT_EQ(summary.updates, 4u);
  EXPECT_EQ(summary.clipped_total, 4u);
  EXPECT_EQ(summary.clipped_updates, (std::vector<double>{2, 2}));
  ASSERT_TRUE(summary.final_gradient.measured());
  EXPECT_EQ(summary.final_gradient.lags, (std::vector<std::size_t>{0, 1, 2, 5}));
  const std::string report = summary.full_report();
  EXPECT_NE(report.find("4 of 4 updates clipped"), std::string::npos) << report;
  EXPECT_NE(report.find("lag     5"), std::string::npos) << report;
}

TEST(TrainOptions, ValidateListsEveryBrokenRuleIncludingNestedOptions) {
  TrainOptions options;
  options.epochs = 0;
  options.bptt = BpttMode::truncated;
  options.bptt_window = 0;
  options.bptt_stride = 3;
  options.clip_norm = -1;
  options.optimizer.learning_rate = 0;
  options.early_stopping.patience = 0;
  try {
    options.validate();
    FAIL() << "no exception";
  } catch (const ConfigError& e) {
    const std::string m = e.what();
    for (const char* key : {"train.epochs = 0", "train.bptt_window = 0", "train.bptt_stride = 3",
                            "train.clip_norm = -1", "optimizer.learning_rate = 0", "early_stopping.patience = 0"}) {
      EXPECT_NE(m.find(key), std::string::npos) << key << " missing from: " << m;
    }
  }
  EXPECT_EQ(parse_bptt_mode("truncated"), BpttMode::truncated);
  EXPECT_EQ(parse_termination_reason(to_string(TerminationReason::diverged)), TerminationReason::diverged);
  EXPECT_THROW(parse_bptt_mode("partial"), ConfigError);
}

TEST(Trainer, RefusesDataOfTheWrongShape) {
  const auto data = random_sequences(8, 4, 1);  // 2 inputs per step
  nn::NetworkOptions options = small_lstm(0.0);
  options.input_size = 3;
  nn::Network<float> network(options);
  EXPECT_THROW(Trainer<float>(small_run(1)).train(network, data), DataError);
}

}  // namespace libseq::train
