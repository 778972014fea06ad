// Memory task: reproduce the value seen k steps before the end. Each step carries a value v_t ~ U(−1, 1) and a
// marker m_t (1 at step T−1−k, else 0); the target is v_{T−1−k}. The values of all other steps are distractors the
// stored value must survive. This is the marker-and-recall arrangement of the long-time-lag experiments of
// Hochreiter & Schmidhuber (1997, Section 5). The recurrent-engine issue claims (common practice, no source): LSTM
// and GRU learn the task at a short and a long lag, the Elman net fails at the long lag, and the gradient-through-
// time diagnostic shows why. What this file shows is less, and it says so below:
//
//   short task, T = 70, k = 5 and 60:   LSTM and GRU learn both. The Elman net learns k = 60 too, in most runs
//                                       (not asserted, see 3.), although its initial gradient at lag 60 is 1.6e-3
//                                       of lag 5 (asserted).
//   long task, T = 160, k = 5 and 150:  the Elman net learns k = 5 and fails k = 150, and its initial gradient at
//                                       lag 150 is four orders of magnitude below the LSTM's and the GRU's (all
//                                       asserted). The GRU learns k = 150 (asserted). The LSTM with the library's
//                                       forget-gate bias 1 learns k = 150 in 1 of 5 seeds, not with the test's seed
//                                       (not asserted, see 6.); with chrono initialisation it learns k = 5 and
//                                       k = 150 in all 5 seeds (asserted, see 9.).
//
// Settings (ours), both tasks: 512 training and 256 validation sequences, 16 hidden units, Adam with rate 3e-3,
// batch 32, clipping at norm 1, best validation weights kept, seed 5; 60 epochs on the short task, 100 on the long
// one. The GRU starts with its update-gate bias at +3 (z ≈ 0.95, "keep the state"), the idea of chrono
// initialisation (Tallec & Ollivier 2018, "Can recurrent neural networks warp time?", Section 3): with zero biases
// z ≈ 0.5, its diagnostic at lag 60 was 3e-9 of lag 0 at initialisation and the GRU never left the plateau. The
// LSTM keeps the library's forget-gate bias 1, except in the chrono test (note 9), the Elman net the library's
// initialisation (orthogonal recurrent weights, singular values 1).
//
// Pass rules (ours), relative to the target variance 1/3 (the MSE of predicting 0):
// - "learns": best validation MSE < 0.10 of the variance.
// - "fails": best validation MSE >= 0.50 of the variance (not even half explained). The gap between 0.10 and 0.50
//   is deliberate: an outcome between them is neither and fails both rules, so a run sitting near one threshold
//   cannot pass or fail by a rounding-level change in the kernels.
// Only outcomes that held for every seed of a sensitivity run (seeds 1–5; the test uses seed 5, which was not
// chosen from them) are asserted; a seed-dependent outcome is reported here and not asserted.
//
// Every configuration run, with its figures (seed 5 unless said; "ratio" = |dL/dx| at the long lag / at lag 5):
// 1. Short task, rule "Elman stays above 50 %": Elman reached 0.486 once (epoch 15); not met.
// 2. Short task, rule "Elman fails = not < 0.10": met at first (Elman best 0.49); after the engine changes of
//    2026-12-02 (subnormal flush, float rounding only) Elman reached 0.066 at epoch 58 and the check was disabled.
// 3. Short task, Elman k = 60, diagnostic recomputed with the weights after e epochs: ratio 1.6e-3 at
//    initialisation, 0.48 after 5 epochs (training raises the recurrent gain; Adam rescales the small gradient),
//    then a plateau at the variance level until epoch ~38, learned by epoch 55. Seeds 1–8, best at epoch 60:
//    0.064, 0.144, 1.049, 0.109, 0.066, 0.061, 0.273, 0.056. Whether the Elman net is below 0.10 at epoch 60 depends
//    on when it leaves the plateau, so k = 60 cannot show "Elman fails", nor robustly "Elman learns".
// 4. Long lag chosen from initial diagnostics only (one-epoch runs, no training outcome seen), ratio for Elman,
//    LSTM, GRU(+3): k = 60: 1.6e-3, 0.10, 0.083; k = 100: 5.3e-5, 0.020, 0.064; k = 150: 2.4e-7, 4.3e-3, 0.019.
//    At k = 150 Elman's signal is four orders below the others'; epochs raised to 100 so that "fails" is not
//    "slower than 60 epochs". Rules fixed before the first training run at k = 150.
// 5. Long task, first run: LSTM k = 5 0.0009, k = 150 0.898 (planned "learns", NOT met); GRU 0.0002 and 0.0006
//    (trained ratio 41); Elman k = 5 0.0031, k = 150 0.910. A planned check "the trained Elman net stays insensitive
//    at lag 150 (ratio < 1e-2)" was NOT met: 4.8e-2 at its best epoch (8), 0.27 after epoch 100. During training
//    the lag-150 gradient of Elman and LSTM alike rose by orders of magnitude while neither learned, so the trained
//    profile does not show the failure; only the initial one separates the cells. That check was removed.
// 6. LSTM with forget-gate bias +3 (one run, decided beforehand for parity with the GRU's +3): k = 150 0.890, not
//    learned, although its initial ratio is 13.9; k = 5 0.0025. For the LSTM the initial diagnostic does not
//    explain the failure. No further LSTM setting was tried.
// 7. Sensitivity, seeds 1–5 (in that order 1, 2, 3, 4, 5): long task k = 150: Elman 0.921, 0.923, 0.937, 0.911,
//    0.910; GRU 0.0002, 0.0008, 0.0004, 0.0003, 0.0006; LSTM 0.0094, 0.888, 0.890, 0.888, 0.898; initial ratios
//    Elman 1.5e-8 … 2.7e-7, LSTM 2.1e-4 … 4.3e-3, GRU 4.6e-3 … 1.9e-2. Elman k = 5 (long task) 0.0034, 0.0033,
//    0.0040, 0.0035, 0.0031. Short task k = 60: LSTM 0.0086, 0.0072, 0.0193, 0.0060, 0.021; GRU 0.0003, 0.0008,
//    0.0005, 0.0004, 0.0003; k = 5 all below 0.0023.
// 8. A concurrent change to libseq/src/nn (float rounding level) between runs moved the seed-5 figures to LSTM
//    k = 60 0.0200, GRU k = 60 0.0004, GRU k = 150 0.0005 (trained ratio 45); Elman's were unchanged to 4 digits.
//    Every asserted outcome held.
// 9. LSTM with chrono initialisation (Tallec & Ollivier 2018, Section 3; formula from memory, the paper was not at
//    hand): forget-gate biases b_f ~ log(U(1, T_max − 1)), one draw per hidden unit, input-gate biases b_i = −b_f,
//    the other biases as the library sets them (zero). Decided before any chrono run, with its reasons:
//    - T_max = the task's sequence length T (160 on the long task), for k = 5 and k = 150 alike. No dependency in a
//      T-step sequence is longer than T − 1 steps, so T bounds the dependencies expected; it does not use the lag
//      the targets mark (which a user would not know), and it gives the k = 5 control the same initialisation as
//      the k = 150 run. The alternative T_max = k (150) was not run.
//    - The biases go on the input bias blocks (gate order i, f, g, o: rows 0..H−1 the input gate, H..2H−1 the
//      forget gate); the recurrent biases of both gates stay 0, so b_f, b_i are the whole gate biases. The library's
//      forget-gate bias 1 is replaced.
//    - The draw: std::mt19937_64 seeded with 1000 + the run's seed (not the seed itself, which the network's own
//      initialisation uses, so the biases are not the first numbers of the weights' stream), u = 53-bit uniform in
//      [0, 1) (as the library's initialisation), b_f = log(1 + u·(T_max − 2)), in [0, log 159 ≈ 5.07).
//    - Runs: long task, k = 5 and k = 150, seeds 1–5 (the seed of the network, the shuffle and the draw; sequences
//      as for the GRU), 100 epochs; then the test keeps seed 5. Assert "learns" at k = 150 only if all five seeds
//      learn it (the rule above); otherwise record the figures and leave it unasserted.
//    Results (seeds in the order 1, 2, 3, 4, 5; best validation MSE / variance). Built with the uncommitted
//    libseq/src/nn change in progress on 2026-12-02 and run twice (the second time to read the validation curves),
//    with identical figures; the whole file at seed 5, rebuilt with the committed libseq/src/nn of commit 4a2525a,
//    printed the same figures for every cell (and, for the other cells, those of note 8):
//      k = 150: 0.0003, 0.0001, 0.0002, 0.0004, 0.0004 — learned in 5 of 5 (library bias 1: 1 of 5, note 7);
//               first epoch (0-based) below 0.10: 10, 10, 11, 13, 9; initial ratio 6.9e-2, 0.15, 0.25, 1.6e-2,
//               0.19 (library bias 1: 2.1e-4 … 4.3e-3); trained ratio 96, 91, 72, 62, 118.
//      k = 5:   0.0007, 0.0011, 0.0009, 0.0010, 0.0004; first epoch below 0.10: 16, 14, 17, 13, 12.
//    So the rule was met and the test asserts "learns" at k = 5 and k = 150 and, as for the GRU, a trained ratio
//    above 1 at k = 150, with seed 5. Unlike the +3 forget bias of note 6 (initial ratio 13.9, not learned), chrono
//    also sets the input gate to b_i = −b_f, so a unit that keeps its cell for long also writes into it little
//    (σ(−5) ≈ 0.007); distractors then overwrite the stored value slowly. This is our reading, not something the
//    test checks. The test file runs in about 20 s (8 s before this test), single-threaded on a busy 2-core machine.

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <random>

#include "libseq/error.hpp"
#include "libseq/train/trainer.hpp"

namespace libseq::train {
namespace {

constexpr double target_variance = 1.0 / 3.0;  // variance of U(−1, 1)
constexpr double learned_below = 0.10;         // relative MSE of a cell that learns a lag
constexpr double failed_at_least = 0.50;       // relative MSE of a cell that fails a lag
constexpr std::size_t short_lag = 5;

// Sequence length, the long lag and the training budget of one task. The diagnostic measures lags 0, short_lag
// and long_lag in every run of the task, whichever lag the run's targets mark.
struct Task {
  std::size_t steps;
  std::size_t long_lag;
  std::size_t epochs;
};
constexpr Task short_task{70, 60, 60};
constexpr Task long_task{160, 150, 100};

// Index of the short and the long lag in the diagnostic's profiles.
constexpr std::size_t at_short = 1;
constexpr std::size_t at_long = 2;

InMemorySequences<float> memory_set(std::size_t count, std::size_t steps, std::size_t lag, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<float> uniform(-1, 1);
  std::vector<float> inputs(count * steps * 2, 0.0f), targets(count);
  // 0-based step steps−1−lag lies `lag` steps before the last one (steps−1).
  const std::size_t t = steps - 1 - lag;
  for (std::size_t i = 0; i < count; ++i) {
    for (std::size_t s = 0; s < steps; ++s) inputs[(i * steps + s) * 2] = uniform(rng);
    inputs[(i * steps + t) * 2 + 1] = 1.0f;
    targets[i] = inputs[(i * steps + t) * 2];
  }
  return InMemorySequences<float>(steps, 2, 1, inputs, targets);
}

// |d loss / d x| at the task's long lag over the one at the short lag.
double long_over_short(const GradientThroughTime& g) {
  return g.input_gradient_norm[at_long] / g.input_gradient_norm[at_short];
}

struct Outcome {
  double relative_mse = 0.0;
  TrainSummary summary;
};

// LSTM gate biases: the library's standard ones (forget-gate input bias 1, others 0) or its chrono initialisation
// (NetworkOptions::chrono_steps, note 9), which LibraryChronoBiasesAreTheFormulaAndLeaveTheWeightsAlone checks
// against set_chrono_biases below.
enum class LstmBiases { library, chrono };

// Independent writing of chrono initialisation (Tallec & Ollivier 2018, Section 3; from memory): per hidden unit j,
// b_f,j = log(U(1, t_max − 1)) and b_i,j = −b_f,j, on the input biases (gate order i, f, g, o). The recurrent biases of
// these gates must be 0 so that the input biases are the whole gate biases; the library initialises them so (checked).
void set_chrono_biases(nn::Network<float>& network, std::size_t hidden, std::size_t t_max, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  const auto& input_bias = network.block("layer0.input_bias");
  const auto& recurrent_bias = network.block("layer0.recurrent_bias");
  for (std::size_t j = 0; j < hidden; ++j) {
    const double u = static_cast<double>(rng() >> 11) * 0x1.0p-53;  // [0, 1), 53 bits
    const double forget = std::log(1.0 + u * static_cast<double>(t_max - 2));
    network.parameters()[input_bias.offset + j] = static_cast<float>(-forget);
    network.parameters()[input_bias.offset + hidden + j] = static_cast<float>(forget);
    EXPECT_EQ(network.parameters()[recurrent_bias.offset + j], 0.0f);
    EXPECT_EQ(network.parameters()[recurrent_bias.offset + hidden + j], 0.0f);
  }
}

// Trains `cell` on the task with targets `lag` steps back; `epochs` 0 means the task's budget.
Outcome run(nn::CellType cell, const Task& task, std::size_t lag, std::size_t epochs = 0,
            LstmBiases lstm_biases = LstmBiases::library) {
  const auto training = memory_set(512, task.steps, lag, 10 + lag);
  const auto validation = memory_set(256, task.steps, lag, 20 + lag);
  nn::NetworkOptions net;
  net.cell = cell;
  net.input_size = 2;
  net.hidden_size = 16;
  TrainOptions options;
  options.epochs = epochs > 0 ? epochs : task.epochs;
  options.batch_size = 32;
  options.seed = 5;
  options.optimizer.learning_rate = 3e-3;
  options.clip_norm = 1.0;
  options.early_stopping.patience = 1000;  // run every epoch, keep the best weights
  options.diagnostic_lags = {0, short_lag, task.long_lag};
  const bool chrono = cell == nn::CellType::lstm && lstm_biases == LstmBiases::chrono;
  if (chrono) net.chrono_steps = task.steps;  // the library's chrono initialisation, T_max = T
  nn::Network<float> network(net);
  if (chrono) {
    network.initialize(options.seed);  // as the GRU below: the network's own seed, not the trainer's
    options.initialize_network = false;
  }
  if (cell == nn::CellType::gru) {
    network.initialize(options.seed);
    options.initialize_network = false;
    // Gate order r, z, n (as torch): rows H..2H of the input bias are the update gate's.
    const auto& bias = network.block("layer0.input_bias");
    for (std::size_t j = 0; j < net.hidden_size; ++j) network.parameters()[bias.offset + net.hidden_size + j] = 3.0f;
  }
  Outcome outcome;
  outcome.summary = Trainer<float>(options).train(network, training, &validation);
  const std::vector<std::size_t> lags{0, short_lag, task.long_lag};
  EXPECT_EQ(outcome.summary.initial_gradient.lags, lags);
  EXPECT_EQ(outcome.summary.final_gradient.lags, lags);
  outcome.relative_mse = outcome.summary.best_loss / target_variance;
  std::printf(
      "%s%s T=%zu k=%zu: best validation MSE / variance = %.4f; |dL/dx| lag %zu / lag %zu initial %.3e, "
      "final %.3e (%s)\n",
      nn::to_string(cell).c_str(), chrono ? " (chrono)" : "", task.steps, lag, outcome.relative_mse, task.long_lag,
      short_lag, long_over_short(outcome.summary.initial_gradient), long_over_short(outcome.summary.final_gradient),
      outcome.summary.brief_report().c_str());
  return outcome;
}

}  // namespace

// Short task: learned below 0.10 of the variance at k = 5 and k = 60 (figures 0.021 or below, note 7).
TEST(MemoryTask, LstmAndGruRecallFiveAndSixtyStepsBack) {
  for (nn::CellType cell : {nn::CellType::lstm, nn::CellType::gru}) {
    for (std::size_t lag : {short_lag, short_task.long_lag}) {
      const Outcome outcome = run(cell, short_task, lag);
      EXPECT_LT(outcome.relative_mse, learned_below) << nn::to_string(cell) << " k=" << lag << "\n"
                                                     << outcome.summary.full_report();
    }
  }
}

// Short task, initial weights: the Elman net's gradient 60 steps back is below 1e-2 of the one 5 steps back
// (1.6e-3 with seed 5, 3.6e-4 … 5.5e-3 over seeds 1–8). This does not stop it learning k = 60 (note 3): a ratio of
// 1e-3 is within what training recovers from on this task.
TEST(MemoryTask, ElmanGradientVanishesAtSixtySteps) {
  const GradientThroughTime g = run(nn::CellType::elman, short_task, short_task.long_lag, 1).summary.initial_gradient;
  std::printf("elman k=60, initial weights: |dL/dx| lag 60 / lag 5 = %.3e\n%s", long_over_short(g), g.report().c_str());
  EXPECT_LT(long_over_short(g), 1e-2) << g.report();
}

// Long task: the GRU learns k = 150 below 0.10 of the variance. A net that recalls the value marked 150 steps back
// depends on it more than on the distractor 5 steps back, so its trained ratio must exceed 1 (17 … 100, note 7).
TEST(MemoryTask, GruRecallsOneHundredFiftyStepsBack) {
  const Outcome outcome = run(nn::CellType::gru, long_task, long_task.long_lag);
  EXPECT_LT(outcome.relative_mse, learned_below) << outcome.summary.full_report();
  EXPECT_GT(long_over_short(outcome.summary.final_gradient), 1.0) << outcome.summary.full_report();
}

// Long task: the Elman net learns k = 5 (the control: same net, sequence length, data and settings, so the failure
// at k = 150 is the lag's doing) and fails k = 150 (>= 0.50 of the variance; 0.91 … 0.94 over seeds 1–5).
TEST(MemoryTask, ElmanRecallsFiveStepsBackButNotOneHundredFifty) {
  const Outcome short_outcome = run(nn::CellType::elman, long_task, short_lag);
  EXPECT_LT(short_outcome.relative_mse, learned_below) << short_outcome.summary.full_report();
  const Outcome long_outcome = run(nn::CellType::elman, long_task, long_task.long_lag);
  EXPECT_GE(long_outcome.relative_mse, failed_at_least) << long_outcome.summary.full_report();
}

// Long task, initial weights (the signal available to start learning): the Elman net's gradient 150 steps back is
// below 1e-3 of the one 5 steps back (the level at which docs/methods-training.md says the optimiser gets almost no
// signal; common practice, no source) and at least two orders of magnitude below the LSTM's and the GRU's (seeds
// 1–5: Elman <= 2.7e-7, LSTM >= 2.1e-4, GRU >= 4.6e-3).
TEST(MemoryTask, GradientAtOneHundredFiftyStepsVanishesForElmanNotForLstmOrGru) {
  const GradientThroughTime elman = run(nn::CellType::elman, long_task, long_task.long_lag, 1).summary.initial_gradient;
  const GradientThroughTime lstm = run(nn::CellType::lstm, long_task, long_task.long_lag, 1).summary.initial_gradient;
  const GradientThroughTime gru = run(nn::CellType::gru, long_task, long_task.long_lag, 1).summary.initial_gradient;
  std::printf("initial weights, |dL/dx| lag 150 / lag 5: elman %.3e, lstm %.3e, gru %.3e\nelman %s",
              long_over_short(elman), long_over_short(lstm), long_over_short(gru), elman.report().c_str());
  EXPECT_LT(long_over_short(elman), 1e-3) << elman.report();
  EXPECT_LT(long_over_short(elman), 1e-2 * long_over_short(lstm)) << lstm.report();
  EXPECT_LT(long_over_short(elman), 1e-2 * long_over_short(gru)) << gru.report();
}

// Long task, LSTM with chrono initialisation (note 9): learns k = 5 and k = 150 below 0.10 of the variance (seeds
// 1–5: k = 5 0.0004 … 0.0011, k = 150 0.0001 … 0.0004, first below 0.10 at epoch 9 … 13 of 100), and at k = 150 its
// trained ratio exceeds 1, for the reason given at the GRU's test (62 … 118 over seeds 1–5).
TEST(MemoryTask, ChronoInitialisedLstmRecallsFiveAndOneHundredFiftyStepsBack) {
  const Outcome short_outcome = run(nn::CellType::lstm, long_task, short_lag, 0, LstmBiases::chrono);
  EXPECT_LT(short_outcome.relative_mse, learned_below) << short_outcome.summary.full_report();
  const Outcome long_outcome = run(nn::CellType::lstm, long_task, long_task.long_lag, 0, LstmBiases::chrono);
  EXPECT_LT(long_outcome.relative_mse, learned_below) << long_outcome.summary.full_report();
  EXPECT_GT(long_over_short(long_outcome.summary.final_gradient), 1.0) << long_outcome.summary.full_report();
}

// The library's chrono initialisation (NetworkOptions::chrono_steps) against this file's own writing of the formula
// (set_chrono_biases: b_f = log(1 + u (T_max − 2)) = log U(1, T_max − 1), b_i = −b_f, from a generator seeded with
// seed + 1000): every parameter equal, so the runs above test the library option. And the standard LSTM biases
// (forget 1) are what chrono_steps = 0 gives.
TEST(MemoryTask, LibraryChronoBiasesAreTheFormulaAndLeaveTheWeightsAlone) {
  nn::NetworkOptions net;
  net.cell = nn::CellType::lstm;
  net.input_size = 2;
  net.hidden_size = 16;
  nn::Network<float> standard(net);
  standard.initialize(5);
  nn::Network<float> by_hand(net);
  by_hand.initialize(5);
  set_chrono_biases(by_hand, net.hidden_size, 160, 1005);
  net.chrono_steps = 160;
  nn::Network<float> library(net);
  library.initialize(5);
  ASSERT_EQ(library.parameters().size(), by_hand.parameters().size());
  for (std::size_t i = 0; i < library.parameters().size(); ++i) {
    EXPECT_EQ(library.parameters()[i], by_hand.parameters()[i]) << "parameter " << i;
  }
  const auto& bias = standard.block("layer0.input_bias");
  for (std::size_t j = 0; j < net.hidden_size; ++j) {
    EXPECT_EQ(standard.parameters()[bias.offset + net.hidden_size + j], 1.0f);  // forget gate
    const float b = library.parameters()[bias.offset + net.hidden_size + j];
    EXPECT_GE(b, 0.0f);
    EXPECT_LT(b, static_cast<float>(std::log(159.0)) + 1e-6f);
  }
  // GRU (gate order r, z, n): only the update gate z gets log U(1, T_max − 1); r and n stay 0.
  net.cell = nn::CellType::gru;
  nn::Network<float> gru(net);
  gru.initialize(5);
  const auto& gru_bias = gru.block("layer0.input_bias");
  for (std::size_t j = 0; j < net.hidden_size; ++j) {
    EXPECT_EQ(gru.parameters()[gru_bias.offset + j], 0.0f);
    const float z = gru.parameters()[gru_bias.offset + net.hidden_size + j];
    EXPECT_GE(z, 0.0f);
    EXPECT_LT(z, static_cast<float>(std::log(159.0)) + 1e-6f);
    EXPECT_EQ(gru.parameters()[gru_bias.offset + 2 * net.hidden_size + j], 0.0f);
  }
  net.cell = nn::CellType::elman;
  EXPECT_THROW(nn::Network<float>{net}, ConfigError);  // no gate to initialise
}

}  // namespace libseq::train
