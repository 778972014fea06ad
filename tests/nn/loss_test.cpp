// Losses against torch (stored by validation/torch_reference/make_reference.py) and against the pinball
// definition (Koenker & Bassett 1978), with missing targets masked out.

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <vector>

#include "libseq/error.hpp"
#include "libseq/nn/loss.hpp"
#include "nn/reference_file.hpp"
#include "support/paths.hpp"

namespace {

using libseq::nn::Loss;
using libseq::nn::LossType;

libseq::test::ReferenceFile losses_reference() {
  return libseq::test::read_reference_file(libseq::test::source_dir() / "validation" / "torch_reference" / "data" /
                                           "losses_float64.txt");
}

TEST(Loss, GaussianNllMatchesTorchGaussianNllLossWithMissingTargets) {
  // Source: torch.nn.GaussianNLLLoss(full=True, reduction="mean") on the present targets; relative 1e-12.
  const auto ref = losses_reference();
  const auto& y = ref.at("targets");
  std::vector<double> outputs;
  for (std::size_t i = 0; i < y.size(); ++i) {
    outputs.push_back(ref.at("mean")[i]);
    outputs.push_back(ref.at("log_variance")[i]);
  }
  std::vector<double> gradient(outputs.size());
  const double value =
      libseq::nn::loss_and_output_gradient<double>(Loss{LossType::gaussian_nll, {}}, outputs, y, gradient);
  EXPECT_NEAR(value, ref.at("gaussian_nll")[0], 1e-12 * std::abs(ref.at("gaussian_nll")[0]));
  for (std::size_t i = 0; i < y.size(); ++i) {
    EXPECT_NEAR(gradient[2 * i], ref.at("grad.mean")[i], 1e-12) << i;
    EXPECT_NEAR(gradient[2 * i + 1], ref.at("grad.log_variance")[i], 1e-12) << i;
  }
  EXPECT_DOUBLE_EQ(libseq::nn::loss_value<double>(Loss{LossType::gaussian_nll, {}}, outputs, y), value);
}

TEST(Loss, SquaredSumAndMeanMatchTorchMseLossWithMissingTargets) {
  // Source: torch.nn.functional.mse_loss(reduction="sum" / "mean") on the present targets; relative 1e-12.
  const auto ref = losses_reference();
  const auto& y = ref.at("targets");
  const auto& point = ref.at("point");
  for (auto [type, name] :
       {std::pair{LossType::squared_sum, "squared_sum"}, std::pair{LossType::squared_mean, "squared_mean"}}) {
    std::vector<double> gradient(point.size());
    const double value = libseq::nn::loss_and_output_gradient<double>(Loss{type, {}}, point, y, gradient);
    EXPECT_NEAR(value, ref.at(name)[0], 1e-12 * ref.at(name)[0]) << name;
    for (std::size_t i = 0; i < y.size(); ++i) {
      EXPECT_NEAR(gradient[i], ref.at(std::string("grad.") + name)[i], 1e-12) << name << " " << i;
    }
  }
}

TEST(Loss, PinballFollowsTheCheckFunctionDefinition) {
  // Source: Koenker & Bassett 1978, the check function ρ_τ(u) = u·(τ − 1{u<0}), u = y − q. Hand computation:
  // y = 1, q = (0.5, 2.0) at τ = (0.1, 0.9): ρ_0.1(0.5) = 0.05, ρ_0.9(−1) = 0.1; second target missing.
  // Mean over 1 target × 2 levels = 0.075. Gradients: −τ/2 = −0.05 for u > 0; (1 − τ)/2 = 0.05 for u < 0.
  const Loss loss{LossType::pinball, {0.1, 0.9}};
  const std::vector<double> outputs{0.5, 2.0, 7.0, 9.0};
  const std::vector<double> targets{1.0, std::numeric_limits<double>::quiet_NaN()};
  std::vector<double> gradient(4);
  EXPECT_NEAR(libseq::nn::loss_and_output_gradient<double>(loss, outputs, targets, gradient), 0.075, 1e-15);
  EXPECT_NEAR(gradient[0], -0.05, 1e-15);
  EXPECT_NEAR(gradient[1], 0.05, 1e-15);
  EXPECT_EQ(gradient[2], 0.0);
  EXPECT_EQ(gradient[3], 0.0);
}

TEST(Loss, AllTargetsMissingGivesZeroLossAndGradient) {
  const std::vector<float> outputs{1.0F, 2.0F};
  const std::vector<float> targets(2, std::numeric_limits<float>::quiet_NaN());
  std::vector<float> gradient(2, 5.0F);
  EXPECT_EQ(libseq::nn::loss_and_output_gradient<float>(Loss{}, outputs, targets, gradient), 0.0F);
  EXPECT_EQ(gradient[0], 0.0F);
  EXPECT_EQ(gradient[1], 0.0F);
}

TEST(Loss, RejectsBadQuantileLevelsListingEveryRule) {
  const Loss loss{LossType::pinball, {0.5, 0.4, 1.2}};
  try {
    loss.validate();
    FAIL() << "expected ConfigError";
  } catch (const libseq::ConfigError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("quantile_levels[1] = 0.4"), std::string::npos) << message;
    EXPECT_NE(message.find("quantile_levels[2] = 1.2"), std::string::npos) << message;
  }
  EXPECT_THROW(Loss({LossType::pinball, {}}).validate(), libseq::ConfigError);
}

TEST(Loss, RejectsOutputsOfTheWrongSize) {
  const std::vector<double> outputs{1.0, 2.0, 3.0};
  const std::vector<double> targets{1.0, 2.0};
  EXPECT_THROW(libseq::nn::loss_value<double>(Loss{LossType::gaussian_nll, {}}, outputs, targets), libseq::DataError);
}

TEST(Loss, ParsesAndPrintsEveryType) {
  for (auto type : {LossType::squared_sum, LossType::squared_mean, LossType::gaussian_nll, LossType::pinball}) {
    EXPECT_EQ(libseq::nn::parse_loss_type(libseq::nn::to_string(type)), type);
  }
  EXPECT_THROW(libseq::nn::parse_loss_type("mse"), libseq::ConfigError);
}

}  // namespace
