// One Adam step on real network gradients, against torch.optim.Adam (Debian python3-torch 1.13). The network,
// its parameters, inputs and targets are those of the nn check validation/torch_reference (files data/*.txt);
// validation/torch_optim/make_reference.py applied torch's Adam (lr 1e-2) to torch's gradients and stored the
// result per parameter block. Here runnel computes the gradient with its own Network and steps with its own Adam.
// Tolerance (validation/torch_optim/README.md): |runnel − torch| <= tol·max(|torch|, 1e-3), tol 1e-12 in float64
// and 1e-6 in float32.

#include <gtest/gtest.h>

#include <fstream>
#include <map>
#include <sstream>

#include "libseq/nn/network.hpp"
#include "libseq/train/optimizer.hpp"
#include "reference_file.hpp"
#include "support/paths.hpp"

namespace libseq::train {
namespace {

// The nn reference format: "meta key value ...", then "array name dims..." lines each followed by a value line.
struct NetworkCase {
  std::map<std::string, std::string> meta;
  std::map<std::string, std::vector<double>> arrays;
};

NetworkCase read_network_case(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path.string());
  NetworkCase result;
  std::string line;
  while (std::getline(in, line)) {
    std::istringstream fields(line);
    std::string kind;
    fields >> kind;
    if (kind == "meta") {
      std::string key, value;
      while (fields >> key >> value) result.meta[key] = value;
    } else if (kind == "array") {
      std::string name;
      fields >> name;
      std::getline(in, line);
      std::istringstream values(line);
      std::vector<double> data;
      for (double v; values >> v;) data.push_back(v);
      result.arrays[name] = std::move(data);
    }
  }
  return result;
}

template <typename Scalar>
void check_case(const std::string& name, double tolerance) {
  const auto c = read_network_case(test::source_dir() / "validation" / "torch_reference" / "data" / (name + ".txt"));
  const auto ours = test::read_reference_file(test::source_dir() / "validation" / "torch_optim" / "reference.txt");
  nn::NetworkOptions options;
  options.cell = nn::parse_cell_type(c.meta.at("cell"));
  options.elman_activation = nn::parse_elman_activation(c.meta.at("activation"));
  options.input_size = std::stoul(c.meta.at("input_size"));
  options.hidden_size = std::stoul(c.meta.at("hidden_size"));
  options.layers = std::stoul(c.meta.at("layers"));
  options.horizon = std::stoul(c.meta.at("horizon"));
  nn::Network<Scalar> network(options);
  for (const auto& block : network.parameter_layout()) {
    const auto& values = c.arrays.at(block.name);
    // The nn file must be the one our reference was made from.
    ASSERT_EQ(values, test::record(ours, "network_adam." + name + "." + block.name + ".start"))
        << block.name << ": validation/torch_reference changed; rerun validation/torch_optim/make_reference.py";
    std::copy(values.begin(), values.end(), network.parameters().begin() + static_cast<std::ptrdiff_t>(block.offset));
  }
  nn::SequenceBatch<Scalar> batch;
  batch.steps = std::stoul(c.meta.at("steps"));
  batch.batch = std::stoul(c.meta.at("batch"));
  batch.inputs.assign(c.arrays.at("inputs").begin(), c.arrays.at("inputs").end());
  batch.targets.assign(c.arrays.at("targets").begin(), c.arrays.at("targets").end());
  network.loss_and_gradient(batch, nn::Loss{nn::LossType::squared_mean, {}}, nn::DropoutMode::off, nullptr);
  OptimizerOptions adam;
  adam.learning_rate = 1e-2;
  Optimizer<Scalar> optimizer(adam, network.parameter_count());
  optimizer.step(network.parameters(), network.gradients());
  double worst = 0.0;
  for (const auto& block : network.parameter_layout()) {
    const auto& expected = test::record(ours, "network_adam." + name + "." + block.name + ".after1");
    ASSERT_EQ(expected.size(), block.rows * block.cols);
    for (std::size_t i = 0; i < expected.size(); ++i) {
      const double actual = static_cast<double>(network.parameters()[block.offset + i]);
      const double error = std::abs(actual - expected[i]) / std::max(std::abs(expected[i]), 1e-3);
      worst = std::max(worst, error);
      EXPECT_LE(error, tolerance) << name << " " << block.name << "[" << i << "]: " << actual << " vs torch "
                                  << expected[i];
    }
  }
  std::printf("%s: worst relative deviation from torch after one Adam step %.3e\n", name.c_str(), worst);
}

}  // namespace

TEST(NetworkAdam, OneStepOnLstmGradientsMatchesTorchInDouble) { check_case<double>("lstm_2layer_float64", 1e-12); }

TEST(NetworkAdam, OneStepOnGruGradientsMatchesTorchInFloat) { check_case<float>("gru_1layer_float32", 1e-6); }

}  // namespace libseq::train
