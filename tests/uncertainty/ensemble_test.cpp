// Ensemble training and prediction: determinism across thread counts, per-member seeds and resamples, MC dropout,
// member kinds per head, diverged members, and input checks. These are properties required by the design
// (DESIGN.md, "Determinism" and "Parallelism"; Gal & Ghahramani 2016 for MC dropout as repeated stochastic passes)
// and have no numeric outside reference; every expected value below is derived inside the test from independent
// calls (resample_windows, member_seed, Network::predict), never hard-coded.
#include "libseq/uncertainty/ensemble.hpp"

#include <gtest/gtest.h>
#include <omp.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <memory>
#include <mutex>
#include <random>
#include <set>
#include <string>
#include <thread>
#include <vector>

#include "libseq/error.hpp"

namespace libseq::uncertainty {
namespace {

constexpr std::size_t kSteps = 8;
constexpr std::size_t kHorizon = 2;

// Standard normal draws from raw 64-bit outputs by Box-Muller, so the toy data do not depend on the standard
// library's distribution implementation.
class Normal {
 public:
  explicit Normal(std::uint64_t seed) : engine_(seed) {}
  double operator()() {
    const double u1 = (static_cast<double>(engine_() >> 11) + 0.5) * 0x1.0p-53;
    const double u2 = static_cast<double>(engine_() >> 11) * 0x1.0p-53;
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * 3.14159265358979323846 * u2);
  }

 private:
  std::mt19937_64 engine_;
};

// Sequences of an AR(1) input; targets are the next two values of a smoothed copy plus noise, so there is
// something to learn and the loss falls within a few epochs.
train::InMemorySequences<float> toy_source(std::size_t count, std::uint64_t seed) {
  Normal normal(seed);
  std::vector<float> inputs(count * kSteps), targets(count * kHorizon);
  double x = 0.0;
  for (std::size_t s = 0; s < count; ++s) {
    double smooth = 0.0;
    for (std::size_t t = 0; t < kSteps; ++t) {
      x = 0.7 * x + normal();
      smooth = 0.6 * smooth + 0.4 * x;
      inputs[s * kSteps + t] = static_cast<float>(x);
    }
    for (std::size_t h = 0; h < kHorizon; ++h) {
      targets[s * kHorizon + h] = static_cast<float>(std::pow(0.8, h + 1) * smooth + 0.3 * normal());
    }
  }
  return train::InMemorySequences<float>(kSteps, 1, kHorizon, std::move(inputs), std::move(targets), "toy");
}

EnsembleOptions small_options(nn::HeadType head) {
  EnsembleOptions options;
  options.members = 3;
  options.resampling.scheme = ResampleScheme::moving_block;
  options.resampling.lookback_steps = kSteps;
  options.resampling.seed = 2024;
  options.network.cell = nn::CellType::gru;
  options.network.input_size = 1;
  options.network.hidden_size = 5;
  options.network.horizon = kHorizon;
  options.network.head = head;
  options.training.epochs = 3;
  options.training.batch_size = 16;
  options.training.optimizer.learning_rate = 1e-2;
  switch (head) {
    case nn::HeadType::point:
      options.training.loss.type = nn::LossType::squared_mean;
      break;
    case nn::HeadType::gaussian:
      options.training.loss.type = nn::LossType::gaussian_nll;
      break;
    case nn::HeadType::quantile:
      options.network.quantile_levels = {0.1, 0.5, 0.9};
      options.training.loss.type = nn::LossType::pinball;
      options.training.loss.quantile_levels = options.network.quantile_levels;
      break;
  }
  return options;
}

std::vector<std::size_t> single_site(std::size_t count) { return std::vector<std::size_t>(count, 0); }

// A source that counts how often each sequence is packed into a batch (atomically: members train concurrently).
class CountingSource final : public train::SequenceSource<float> {
 public:
  explicit CountingSource(const train::InMemorySequences<float>& base)
      : base_(base), counts_(std::make_unique<std::atomic<unsigned>[]>(base.size())) {
    for (std::size_t i = 0; i < base.size(); ++i) counts_[i] = 0;
  }
  std::size_t size() const override { return base_.size(); }
  std::size_t steps() const override { return base_.steps(); }
  std::size_t input_size() const override { return base_.input_size(); }
  std::size_t static_size() const override { return base_.static_size(); }
  std::size_t horizon() const override { return base_.horizon(); }
  void fill(std::span<const std::size_t> indices, nn::SequenceBatch<float>& batch) const override {
    for (std::size_t i : indices) ++counts_[i];
    base_.fill(indices, batch);
  }
  unsigned count(std::size_t i) const { return counts_[i]; }

 private:
  const train::InMemorySequences<float>& base_;
  std::unique_ptr<std::atomic<unsigned>[]> counts_;
};

// A source that records which OpenMP threads pack batches. The first fill on each thread sleeps 50 ms, so that
// with 2 threads the second thread surely takes a member before the first has trained them all; without that, a
// fast first thread could train every member alone and the thread-count comparison would show nothing.
class ThreadRecordingSource final : public train::SequenceSource<float> {
 public:
  explicit ThreadRecordingSource(const train::InMemorySequences<float>& base) : base_(base) {}
  std::size_t size() const override { return base_.size(); }
  std::size_t steps() const override { return base_.steps(); }
  std::size_t input_size() const override { return base_.input_size(); }
  std::size_t static_size() const override { return base_.static_size(); }
  std::size_t horizon() const override { return base_.horizon(); }
  void fill(std::span<const std::size_t> indices, nn::SequenceBatch<float>& batch) const override {
    bool first_on_thread = false;
    {
      const std::lock_guard<std::mutex> lock(mutex_);
      first_on_thread = threads_.insert(omp_get_thread_num()).second;
    }
    if (first_on_thread) std::this_thread::sleep_for(std::chrono::milliseconds(50));
    base_.fill(indices, batch);
  }
  std::size_t threads_seen() const {
    const std::lock_guard<std::mutex> lock(mutex_);
    return threads_.size();
  }

 private:
  const train::InMemorySequences<float>& base_;
  mutable std::mutex mutex_;
  mutable std::set<int> threads_;
};

std::vector<float> parameters_of(const nn::Network<float>& network) {
  return {network.parameters().begin(), network.parameters().end()};
}

TEST(EnsembleOptions, DefaultsAreValid) { EXPECT_NO_THROW(EnsembleOptions{}.validate()); }

TEST(EnsembleOptions, ValidateListsEveryBrokenRule) {
  EnsembleOptions options = small_options(nn::HeadType::gaussian);
  options.members = 0;
  options.mc_passes = 20000;
  options.network.hidden_size = 0;
  options.training.loss.type = nn::LossType::squared_mean;  // does not fit the gaussian head
  options.resampling.lookback_steps = 0;
  try {
    options.validate();
    FAIL() << "expected ConfigError";
  } catch (const ConfigError& e) {
    const std::string text = e.what();
    for (const char* key :
         {"ensemble.members", "ensemble.mc_passes", "network.hidden_size", "train.loss", "resample.lookback_steps"}) {
      EXPECT_NE(text.find(key), std::string::npos) << key << " missing from: " << text;
    }
  }
  EnsembleOptions quantile = small_options(nn::HeadType::quantile);
  quantile.training.loss.quantile_levels = {0.25, 0.75};
  EXPECT_THROW(quantile.validate(), ConfigError);
}

TEST(Ensemble, WeightsAndForecastsDoNotDependOnTheThreadCount) {
  const auto training = toy_source(120, 1);
  const auto validation = toy_source(40, 2);
  const auto window_site = single_site(training.size());
  EnsembleOptions options = small_options(nn::HeadType::gaussian);
  options.network.recurrent_dropout = 0.2;
  options.network.output_dropout = 0.1;
  options.mc_passes = 3;

  const int saved = omp_get_max_threads();
  omp_set_num_threads(1);
  const ThreadRecordingSource serial_source(training);
  const Ensemble one = Ensemble::train(options, serial_source, window_site, 1, &validation);
  const MemberForecasts one_forecasts = one.predict(validation, 77);
  omp_set_num_threads(2);
  const ThreadRecordingSource parallel_source(training);
  const Ensemble two = Ensemble::train(options, parallel_source, window_site, 1, &validation);
  const ThreadRecordingSource parallel_target(validation);
  const MemberForecasts two_forecasts = two.predict(parallel_target, 77);
  omp_set_num_threads(saved);
  EXPECT_EQ(serial_source.threads_seen(), 1u);
  ASSERT_EQ(parallel_source.threads_seen(), 2u) << "training did not run on two threads";
  ASSERT_EQ(parallel_target.threads_seen(), 2u) << "prediction did not run on two threads";

  ASSERT_EQ(one.networks().size(), 3u);
  ASSERT_EQ(two.networks().size(), 3u);
  for (std::size_t m = 0; m < 3; ++m) {
    EXPECT_EQ(parameters_of(one.networks()[m]), parameters_of(two.networks()[m])) << "member " << m;
    EXPECT_EQ(one.members()[m].summary.train_loss, two.members()[m].summary.train_loss) << "member " << m;
    EXPECT_EQ(one.members()[m].summary.validation_loss, two.members()[m].summary.validation_loss);
    EXPECT_EQ(one.members()[m].windows_drawn, two.members()[m].windows_drawn);
    EXPECT_TRUE(one.members()[m].summary.monitored_validation);
  }
  ASSERT_EQ(one_forecasts.member_count, 3u * 3u);
  EXPECT_EQ(one_forecasts.means, two_forecasts.means);
  EXPECT_EQ(one_forecasts.variances, two_forecasts.variances);
}

TEST(Ensemble, MembersHaveTheirOwnSeedsResamplesAndWeights) {
  const auto training = toy_source(100, 3);
  const auto window_site = single_site(training.size());
  for (auto scheme : {ResampleScheme::none, ResampleScheme::moving_block, ResampleScheme::stationary}) {
    EnsembleOptions options = small_options(nn::HeadType::point);
    options.resampling.scheme = scheme;
    const Ensemble ensemble = Ensemble::train(options, training, window_site, 1);
    for (std::size_t m = 0; m < options.members; ++m) {
      const EnsembleMember& member = ensemble.members()[m];
      EXPECT_EQ(member.seed, member_seed(options.resampling.seed, m));
      EXPECT_EQ(member.windows_drawn, resample_windows(window_site, 1, options.resampling, m).indices.size());
      EXPECT_TRUE(member.usable());
      EXPECT_EQ(member.summary.epochs_run, options.training.epochs);
      for (std::size_t other = 0; other < m; ++other) {
        EXPECT_NE(member.seed, ensemble.members()[other].seed);
        EXPECT_NE(parameters_of(ensemble.networks()[m]), parameters_of(ensemble.networks()[other]))
            << to_string(scheme) << ": members " << other << " and " << m << " have the same weights";
      }
    }
  }
}

// Every training batch is packed by the source, so the number of times a window is packed must be epochs times
// the number of times the members' resamples drew it (the gradient diagnostic and validation, which would pack
// extra batches, are off).
TEST(Ensemble, EachMemberTrainsOnItsOwnResample) {
  const auto base = toy_source(90, 4);
  for (auto scheme : {ResampleScheme::moving_block, ResampleScheme::sites}) {
    std::vector<std::size_t> window_site(base.size());
    for (std::size_t i = 0; i < window_site.size(); ++i) window_site[i] = i / 30;  // 3 sites of 30 windows
    EnsembleOptions options = small_options(nn::HeadType::point);
    options.members = 2;
    options.resampling.scheme = scheme;
    options.resampling.block_length = 4;
    options.training.epochs = 2;
    options.training.gradient_diagnostic = false;
    options.training.early_stopping.enabled = false;
    const CountingSource counting(base);
    const Ensemble ensemble = Ensemble::train(options, counting, window_site, 3);

    std::vector<unsigned> expected(base.size(), 0);
    std::size_t drawn_total = 0;
    std::size_t members_not_identity = 0;
    for (std::size_t m = 0; m < options.members; ++m) {
      const Resample resample = resample_windows(window_site, 3, options.resampling, m);
      for (std::size_t i = 0; i < base.size(); ++i) expected[i] += resample.multiplicity[i];
      EXPECT_EQ(ensemble.members()[m].windows_drawn, resample.indices.size());
      drawn_total += resample.indices.size();
      bool identity = true;
      for (auto times : resample.multiplicity) identity = identity && times == 1;
      if (!identity) ++members_not_identity;
    }
    for (std::size_t i = 0; i < base.size(); ++i) {
      EXPECT_EQ(counting.count(i), options.training.epochs * expected[i]) << to_string(scheme) << ", window " << i;
    }
    // Resamples that drew every window exactly once could not tell a resampled view from the plain source.
    EXPECT_EQ(members_not_identity, options.members) << to_string(scheme);
    EXPECT_GT(drawn_total, 0u);
  }
}

TEST(Ensemble, McPassesDifferWithDropoutAndRepeatWithTheSameSeed) {
  const auto training = toy_source(80, 5);
  const auto target = toy_source(30, 6);
  EnsembleOptions options = small_options(nn::HeadType::gaussian);
  options.members = 2;
  options.mc_passes = 4;
  options.network.recurrent_dropout = 0.3;
  options.network.output_dropout = 0.3;
  const Ensemble ensemble = Ensemble::train(options, training, single_site(training.size()), 1);
  const MemberForecasts a = ensemble.predict(target, 9);
  const MemberForecasts b = ensemble.predict(target, 9);
  const MemberForecasts c = ensemble.predict(target, 10);
  ASSERT_NO_THROW(a.validate());
  ASSERT_EQ(a.case_count, target.size() * kHorizon);
  ASSERT_EQ(a.member_count, 2u * 4u);
  EXPECT_EQ(a.means, b.means);
  EXPECT_EQ(a.variances, b.variances);
  EXPECT_NE(a.means, c.means) << "another prediction seed must draw other masks";
  // Every pair of passes of the same member differs somewhere.
  for (std::size_t member = 0; member < 2; ++member) {
    for (std::size_t p = 0; p < 4; ++p) {
      for (std::size_t q = 0; q < p; ++q) {
        std::size_t differing = 0;
        for (std::size_t i = 0; i < a.case_count; ++i) {
          if (a.means[i * a.member_count + member * 4 + p] != a.means[i * a.member_count + member * 4 + q]) {
            ++differing;
          }
        }
        EXPECT_GT(differing, a.case_count / 2) << "member " << member << ", passes " << q << " and " << p;
      }
    }
  }
}

TEST(Ensemble, McPassesAreIdenticalWithoutDropoutAndEqualTheDeterministicForecast) {
  const auto training = toy_source(80, 7);
  const auto target = toy_source(25, 8);
  EnsembleOptions options = small_options(nn::HeadType::gaussian);
  options.members = 2;
  options.mc_passes = 3;
  const Ensemble ensemble = Ensemble::train(options, training, single_site(training.size()), 1);
  const MemberForecasts forecasts = ensemble.predict(target, 1);
  ASSERT_EQ(forecasts.member_count, 6u);

  // Reference: each network's own deterministic forward pass, in the same batches of training.batch_size (25
  // sequences: 16 + 9, so the case indexing across batches is checked too).
  for (std::size_t m = 0; m < 2; ++m) {
    nn::Network<float> network = ensemble.networks()[m];
    std::vector<float> outputs;
    for (std::size_t first = 0; first < target.size(); first += options.training.batch_size) {
      std::vector<std::size_t> rows;
      for (std::size_t i = first; i < std::min(target.size(), first + options.training.batch_size); ++i) {
        rows.push_back(i);
      }
      nn::SequenceBatch<float> batch;
      target.fill(rows, batch);
      std::vector<float> part(rows.size() * kHorizon * 2);
      network.predict(batch, part, nn::DropoutMode::off, nullptr);
      outputs.insert(outputs.end(), part.begin(), part.end());
    }
    for (std::size_t i = 0; i < forecasts.case_count; ++i) {
      for (std::size_t pass = 0; pass < 3; ++pass) {
        const std::size_t cell = i * forecasts.member_count + m * 3 + pass;
        EXPECT_EQ(forecasts.means[cell], static_cast<double>(outputs[i * 2])) << "case " << i;
        EXPECT_EQ(forecasts.variances[cell], std::exp(static_cast<double>(outputs[i * 2 + 1]))) << "case " << i;
      }
    }
  }
}

TEST(Ensemble, HeadsGiveTheirMemberKinds) {
  const auto training = toy_source(60, 9);
  const auto target = toy_source(10, 10);
  for (auto head : {nn::HeadType::point, nn::HeadType::quantile}) {
    EnsembleOptions options = small_options(head);
    options.members = 2;
    options.mc_passes = 2;
    options.network.output_dropout = 0.2;
    const Ensemble ensemble = Ensemble::train(options, training, single_site(training.size()), 1);
    const MemberForecasts forecasts = ensemble.predict(target, 3);
    ASSERT_NO_THROW(forecasts.validate()) << nn::to_string(head);
    EXPECT_EQ(forecasts.case_count, target.size() * kHorizon);
    EXPECT_EQ(forecasts.member_count, 4u);
    if (head == nn::HeadType::point) {
      EXPECT_EQ(forecasts.kind, MemberKind::points);
      EXPECT_EQ(forecasts.values.size(), forecasts.case_count * 4u);
    } else {
      EXPECT_EQ(forecasts.kind, MemberKind::quantiles);
      EXPECT_EQ(forecasts.levels, options.network.quantile_levels);
      EXPECT_EQ(forecasts.values.size(), forecasts.case_count * 4u * 3u);
    }
    const MixtureTable table = mix(forecasts, MixtureOptions{});
    ASSERT_EQ(table.case_count, forecasts.case_count);
    for (std::size_t i = 0; i < table.case_count; ++i) {
      EXPECT_TRUE(std::isfinite(table.mean[i]));
      EXPECT_EQ(table.members_used[i], 4u);
    }
  }
}

TEST(Ensemble, DivergedMemberIsKeptInTheRecordAndLeftOutOfPrediction) {
  const auto training = toy_source(60, 11);
  const auto target = toy_source(12, 12);
  EnsembleOptions options = small_options(nn::HeadType::gaussian);
  options.mc_passes = 2;
  options.network.output_dropout = 0.2;
  const Ensemble trained = Ensemble::train(options, training, single_site(training.size()), 1);
  const MemberForecasts full = trained.predict(target, 5);

  std::vector<EnsembleMember> members = trained.members();
  members[1].summary.termination = train::TerminationReason::diverged;
  const Ensemble rebuilt = Ensemble::from_networks(options, trained.networks(), members);
  EXPECT_EQ(rebuilt.members().size(), 3u);
  EXPECT_EQ(rebuilt.usable_members(), (std::vector<std::size_t>{0, 2}));
  const MemberForecasts reduced = rebuilt.predict(target, 5);
  ASSERT_EQ(reduced.member_count, 2u * 2u);
  // Members 0 and 2 keep their own pass streams (seeded by member index), so their columns are unchanged.
  for (std::size_t i = 0; i < full.case_count; ++i) {
    for (std::size_t pass = 0; pass < 2; ++pass) {
      EXPECT_EQ(reduced.means[i * 4 + pass], full.means[i * 6 + pass]);
      EXPECT_EQ(reduced.means[i * 4 + 2 + pass], full.means[i * 6 + 4 + pass]);
    }
  }
}

// A learning rate of 1e37 drives the weights to float overflow in the first updates (Adam steps are about the
// learning rate in size), so training must diverge; the ensemble records it instead of throwing.
TEST(Ensemble, TrainingThatDivergesIsRecordedNotThrown) {
  const auto training = toy_source(40, 13);
  const auto target = toy_source(5, 14);
  EnsembleOptions options = small_options(nn::HeadType::point);
  options.members = 2;
  options.training.optimizer.learning_rate = 1e37;
  options.training.clip_norm = 0.0;
  Ensemble ensemble = Ensemble::train(options, training, single_site(training.size()), 1);
  for (const EnsembleMember& member : ensemble.members()) {
    EXPECT_EQ(member.summary.termination, train::TerminationReason::diverged) << member.summary.brief_report();
    EXPECT_FALSE(member.usable());
  }
  const MemberForecasts forecasts = ensemble.predict(target, 1);
  EXPECT_EQ(forecasts.member_count, 0u);
  EXPECT_EQ(forecasts.case_count, target.size() * kHorizon);
  const MixtureTable table = mix(forecasts, MixtureOptions{});
  EXPECT_TRUE(std::isnan(table.mean[0]));
}

TEST(Ensemble, RejectsInputsThatDoNotFit) {
  const auto training = toy_source(30, 15);
  EnsembleOptions options = small_options(nn::HeadType::point);
  EXPECT_THROW(Ensemble::train(options, training, single_site(training.size() - 1), 1), DataError);
  std::vector<std::size_t> bad_site = single_site(training.size());
  bad_site[3] = 2;
  EXPECT_THROW(Ensemble::train(options, training, bad_site, 2), DataError);
  EnsembleOptions wide = options;
  wide.network.input_size = 2;
  EXPECT_THROW(Ensemble::train(wide, training, single_site(training.size()), 1), DataError);

  options.training.epochs = 1;
  const Ensemble ensemble = Ensemble::train(options, training, single_site(training.size()), 1);
  const train::InMemorySequences<float> other(kSteps, 1, kHorizon + 1, std::vector<float>(kSteps, 0.0f),
                                              std::vector<float>(kHorizon + 1, 0.0f));
  EXPECT_THROW((void)ensemble.predict(other, 1), DataError);

  std::vector<nn::Network<float>> networks = ensemble.networks();
  std::vector<EnsembleMember> members = ensemble.members();
  networks.pop_back();
  EXPECT_THROW(Ensemble::from_networks(options, networks, members), DataError);
  networks.push_back(nn::Network<float>(wide.network));
  EXPECT_THROW(Ensemble::from_networks(options, networks, members), DataError);
}

}  // namespace
}  // namespace libseq::uncertainty
