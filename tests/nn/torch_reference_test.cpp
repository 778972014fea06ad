// Forward states, loss and every gradient of Network against torch.nn.RNN / LSTM / GRU (Debian python3-torch
// 1.13), stored by validation/torch_reference/make_reference.py. Pass rule (validation/torch_reference/README.md):
// normwise error e = max_i |a_i − b_i| / max(max_i |b_i|, 1e-3) over each array (element-wise relative error is
// not meaningful in float32 for states near 0, where the pre-activation sum cancels); float32: e <= 1e-5 for states and
// loss, e <= 1e-4 for gradients; float64: e <= 1e-10 for everything.

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "libseq/nn/network.hpp"
#include "nn/reference_file.hpp"
#include "support/paths.hpp"

namespace {

using libseq::nn::CellType;
using libseq::nn::Loss;
using libseq::nn::LossType;
using libseq::nn::Network;
using libseq::nn::NetworkOptions;

template <typename A>
double relative_error(const A& actual, const std::vector<double>& expected) {
  EXPECT_EQ(actual.size(), expected.size());
  double worst = 0.0, scale = 1e-3;
  for (double v : expected) scale = std::max(scale, std::abs(v));
  for (std::size_t i = 0; i < std::min<std::size_t>(actual.size(), expected.size()); ++i) {
    worst = std::max(worst, std::abs(static_cast<double>(actual[i]) - expected[i]));
  }
  return worst / scale;
}

template <typename Scalar>
void check_case(const std::string& name) {
  const bool single = std::is_same_v<Scalar, float>;
  const auto path = libseq::test::source_dir() / "validation" / "torch_reference" / "data" /
                    (name + (single ? "_float32.txt" : "_float64.txt"));
  const auto ref = libseq::test::read_reference_file(path);
  NetworkOptions options;
  options.cell = libseq::nn::parse_cell_type(ref.meta.at("cell"));
  options.elman_activation = libseq::nn::parse_elman_activation(ref.meta.at("activation"));
  options.input_size = ref.meta_size("input_size");
  options.hidden_size = ref.meta_size("hidden_size");
  options.layers = ref.meta_size("layers");
  options.horizon = ref.meta_size("horizon");
  Network<Scalar> net(options);
  for (const auto& block : net.parameter_layout()) {
    const auto& values = ref.at(block.name);
    ASSERT_EQ(values.size(), block.rows * block.cols) << block.name;
    std::transform(values.begin(), values.end(), net.parameters().begin() + static_cast<std::ptrdiff_t>(block.offset),
                   [](double v) { return static_cast<Scalar>(v); });
  }
  libseq::nn::SequenceBatch<Scalar> batch;
  batch.steps = ref.meta_size("steps");
  batch.batch = ref.meta_size("batch");
  for (double v : ref.at("inputs")) batch.inputs.push_back(static_cast<Scalar>(v));
  for (double v : ref.at("targets")) batch.targets.push_back(static_cast<Scalar>(v));

  const Scalar loss =
      net.loss_and_gradient(batch, Loss{LossType::squared_mean, {}}, libseq::nn::DropoutMode::off, nullptr);

  const double forward_tol = single ? 1e-5 : 1e-10;
  const double gradient_tol = single ? 1e-4 : 1e-10;
  const auto top = net.top_states();
  EXPECT_LE(relative_error(top, ref.at("top_states")), forward_tol) << name << " top_states";
  // final_h in torch is layers × batch × H; runnel's final_state is per layer h (and c) batch × H.
  const std::size_t bh = batch.batch * options.hidden_size;
  const std::size_t per_layer = options.cell == CellType::lstm ? 2 : 1;
  std::vector<Scalar> final_h, final_c;
  for (std::size_t l = 0; l < options.layers; ++l) {
    auto state = net.final_state().subspan(l * per_layer * bh);
    final_h.insert(final_h.end(), state.begin(), state.begin() + static_cast<std::ptrdiff_t>(bh));
    if (per_layer == 2)
      final_c.insert(final_c.end(), state.begin() + static_cast<std::ptrdiff_t>(bh),
                     state.begin() + static_cast<std::ptrdiff_t>(2 * bh));
  }
  EXPECT_LE(relative_error(final_h, ref.at("final_h")), forward_tol) << name << " final_h";
  if (per_layer == 2) {
    EXPECT_LE(relative_error(final_c, ref.at("final_c")), forward_tol) << name << " final_c";
  }
  EXPECT_LE(relative_error(std::vector<Scalar>{loss}, ref.at("loss")), forward_tol) << name << " loss";
  double worst_gradient = 0.0;
  for (const auto& block : net.parameter_layout()) {
    auto g = net.gradients().subspan(block.offset, block.rows * block.cols);
    const double e = relative_error(g, ref.at("grad." + block.name));
    worst_gradient = std::max(worst_gradient, e);
    EXPECT_LE(e, gradient_tol) << name << " grad." << block.name;
  }
  const double input_error = relative_error(net.input_gradients(), ref.at("grad.inputs"));
  EXPECT_LE(input_error, gradient_tol) << name << " grad.inputs";
  std::printf("[torch %s %s] states %.3g, loss %.3g, worst parameter gradient %.3g, input gradient %.3g\n",
              name.c_str(), single ? "float32" : "float64", relative_error(top, ref.at("top_states")),
              relative_error(std::vector<Scalar>{loss}, ref.at("loss")), worst_gradient, input_error);
}

// One plain TEST per case (not TEST_P): CTest names then carry no quoted parameter values.
#define LIBSEQ_TORCH_CASE(Name, file)                                                               \
  TEST(TorchReference, Name##Float32MatchesTorchWithinStatedTolerance) { check_case<float>(file); } \
  TEST(TorchReference, Name##Float64MatchesTorchWithinStatedTolerance) { check_case<double>(file); }

LIBSEQ_TORCH_CASE(ElmanTanhOneLayer, "elman_tanh_1layer")
LIBSEQ_TORCH_CASE(ElmanReluTwoLayers, "elman_relu_2layer")
LIBSEQ_TORCH_CASE(LstmOneLayer, "lstm_1layer")
LIBSEQ_TORCH_CASE(LstmTwoLayers, "lstm_2layer")
LIBSEQ_TORCH_CASE(GruOneLayer, "gru_1layer")
LIBSEQ_TORCH_CASE(GruTwoLayers, "gru_2layer")

}  // namespace
