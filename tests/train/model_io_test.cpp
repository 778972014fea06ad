// A trained network and its TrainSummary through a model bundle file: exact round trip of options, parameters and
// summary, and bit-identical predictions of the loaded network. Reference: identity of IEEE 754 bit patterns
// (a stored-and-reloaded model must compute exactly what the original computes); common practice, no source.

#include "libseq/train/model_io.hpp"

#include <gtest/gtest.h>

#include <cstdlib>
#include <numeric>
#include <random>

#include "libseq/error.hpp"

namespace libseq::train {
namespace {

std::filesystem::path scratch(const std::string& name) {
  // Below the build tree when CTest provides RUNNEL_BINARY_DIR (tests/CMakeLists.txt currently passes only the first
  // environment entry to discovered tests), else below the system temporary directory.
  const char* binary = std::getenv("RUNNEL_BINARY_DIR");
  const std::filesystem::path root = (binary != nullptr && *binary != '\0')
                                         ? std::filesystem::path(binary) / "test-scratch"
                                         : std::filesystem::temp_directory_path() / "runnel-test-scratch";
  const auto dir = root / name;
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir;
}

InMemorySequences<float> data(std::size_t count, std::size_t steps, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<float> normal;
  std::vector<float> inputs(count * steps * 3), statics(count * 2), targets(count * 2);
  for (auto& v : inputs) v = normal(rng);
  for (auto& v : statics) v = normal(rng);
  for (std::size_t i = 0; i < count; ++i) {
    targets[2 * i] = inputs[(i * steps + steps - 1) * 3] + statics[2 * i];
    targets[2 * i + 1] = i % 5 == 0 ? std::nanf("") : inputs[(i * steps + steps - 3) * 3 + 1];
  }
  InMemorySequences<float> set(steps, 3, 2, inputs, targets);
  set.set_statics(2, statics);
  return set;
}

nn::NetworkOptions gaussian_gru() {
  nn::NetworkOptions options;
  options.cell = nn::CellType::gru;
  options.input_size = 3;
  options.static_size = 2;
  options.hidden_size = 6;
  options.layers = 2;
  options.head = nn::HeadType::gaussian;
  options.horizon = 2;
  options.input_dropout = 0.1;
  options.recurrent_dropout = 0.25;
  options.output_dropout = 0.05;
  return options;
}

}  // namespace

TEST(ModelIo, TrainedNetworkAndSummaryRoundTripExactlyAndPredictIdentically) {
  const auto training = data(40, 9, 1);
  const auto validation = data(16, 9, 2);
  TrainOptions options;
  options.epochs = 3;
  options.batch_size = 8;
  options.loss.type = nn::LossType::gaussian_nll;
  nn::Network<float> network(gaussian_gru());
  const TrainSummary summary = Trainer<float>(options).train(network, training, &validation);
  ASSERT_EQ(summary.epochs_run, 3u);

  const auto path = scratch("model_io") / "member0.h5";
  save_model(path, network, &summary);
  const LoadedModel<float> loaded = load_model<float>(path);

  const nn::NetworkOptions& a = network.options();
  const nn::NetworkOptions& b = loaded.network.options();
  EXPECT_EQ(b.cell, a.cell);
  EXPECT_EQ(b.head, a.head);
  EXPECT_EQ(b.input_size, a.input_size);
  EXPECT_EQ(b.static_size, a.static_size);
  EXPECT_EQ(b.hidden_size, a.hidden_size);
  EXPECT_EQ(b.layers, a.layers);
  EXPECT_EQ(b.horizon, a.horizon);
  EXPECT_EQ(b.input_dropout, a.input_dropout);
  EXPECT_EQ(b.recurrent_dropout, a.recurrent_dropout);
  EXPECT_EQ(b.output_dropout, a.output_dropout);
  ASSERT_EQ(loaded.network.parameter_count(), network.parameter_count());
  EXPECT_TRUE(std::equal(network.parameters().begin(), network.parameters().end(),
                         loaded.network.parameters().begin()));
  ASSERT_TRUE(loaded.summary.has_value());
  EXPECT_EQ(*loaded.summary, summary) << loaded.summary->full_report() << "\nvs\n" << summary.full_report();

  // Predictions, deterministic and with MC dropout from equal generators, are bit-identical.
  nn::SequenceBatch<float> batch;
  std::vector<std::size_t> indices(validation.size());
  std::iota(indices.begin(), indices.end(), std::size_t{0});
  validation.fill(indices, batch);
  nn::Network<float> copy = loaded.network;
  std::vector<float> original_out(validation.size() * 2 * 2), loaded_out(original_out.size());
  network.predict(batch, original_out, nn::DropoutMode::off, nullptr);
  copy.predict(batch, loaded_out, nn::DropoutMode::off, nullptr);
  EXPECT_EQ(original_out, loaded_out);
  std::mt19937_64 rng_a(99), rng_b(99);
  network.predict(batch, original_out, nn::DropoutMode::sample, &rng_a);
  copy.predict(batch, loaded_out, nn::DropoutMode::sample, &rng_b);
  EXPECT_EQ(original_out, loaded_out);
}

TEST(ModelIo, BundleWithoutSummaryLoadsWithoutOne) {
  nn::NetworkOptions options;
  options.cell = nn::CellType::elman;
  options.elman_activation = nn::ElmanActivation::relu;
  options.head = nn::HeadType::quantile;
  options.quantile_levels = {0.1, 0.5, 0.9};
  options.hidden_size = 4;
  nn::Network<double> network(options);
  network.initialize(3);
  const auto loaded = from_bundle<double>(to_bundle(network));
  EXPECT_FALSE(loaded.summary.has_value());
  EXPECT_EQ(loaded.network.options().quantile_levels, options.quantile_levels);
  EXPECT_EQ(loaded.network.options().elman_activation, nn::ElmanActivation::relu);
  EXPECT_TRUE(std::equal(network.parameters().begin(), network.parameters().end(),
                         loaded.network.parameters().begin()));
}

TEST(ModelIo, DamagedBundlesAreRefusedNamingTheEntry) {
  nn::NetworkOptions options;
  options.hidden_size = 3;
  nn::Network<float> network(options);
  network.initialize(1);
  const io::ModelBundle good = to_bundle(network);
  auto expect_format_error = [](const io::ModelBundle& bundle, const std::string& needle) {
    try {
      from_bundle<float>(bundle, "m.h5");
      ADD_FAILURE() << "no exception for " << needle;
    } catch (const FormatError& e) {
      EXPECT_NE(std::string(e.what()).find(needle), std::string::npos) << e.what();
    }
  };
  io::ModelBundle truncated = good;
  truncated.arrays["network.parameters"] = io::NamedArray::of_floats({2}, {1.0f, 2.0f});
  expect_format_error(truncated, "network.parameters");
  io::ModelBundle other_kind = good;
  other_kind.text["model.kind"] = "baseline";
  expect_format_error(other_kind, "model.kind");
  io::ModelBundle bad_cell = good;
  bad_cell.text["network.options"].replace(bad_cell.text["network.options"].find("lstm"), 4, "xlstm");
  expect_format_error(bad_cell, "xlstm");
  EXPECT_THROW(from_bundle<double>(good, "m.h5"), FormatError);  // float parameters into a double network
}

}  // namespace libseq::train
