#include "libseq/nn/loss.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>

#include "libseq/error.hpp"

namespace libseq::nn {

std::string to_string(LossType type) {
  switch (type) {
    case LossType::squared_sum:
      return "squared_sum";
    case LossType::squared_mean:
      return "squared_mean";
    case LossType::gaussian_nll:
      return "gaussian_nll";
    case LossType::pinball:
      return "pinball";
  }
  return "unknown";
}

LossType parse_loss_type(std::string_view text, std::string_view key) {
  for (auto type : {LossType::squared_sum, LossType::squared_mean, LossType::gaussian_nll, LossType::pinball}) {
    if (text == to_string(type)) return type;
  }
  throw ConfigError(std::string(key) + " = \"" + std::string(text) +
                    "\": expected one of squared_sum, squared_mean, gaussian_nll, pinball");
}

std::size_t Loss::outputs_per_lead() const {
  switch (type) {
    case LossType::gaussian_nll:
      return 2;
    case LossType::pinball:
      return quantile_levels.size();
    default:
      return 1;
  }
}

void Loss::validate() const {
  std::ostringstream problems;
  if (type == LossType::pinball) {
    if (quantile_levels.empty())
      problems << "\n  loss.quantile_levels is empty: the pinball loss needs at least one level";
    for (std::size_t i = 0; i < quantile_levels.size(); ++i) {
      const double q = quantile_levels[i];
      if (!(q > 0.0 && q < 1.0)) {
        problems << "\n  loss.quantile_levels[" << i << "] = " << q << ": expected a level strictly inside (0, 1)";
      }
      if (i > 0 && !(q > quantile_levels[i - 1])) {
        problems << "\n  loss.quantile_levels[" << i << "] = " << q << ": expected strictly increasing levels";
      }
    }
  }
  const std::string text = problems.str();
  if (!text.empty()) throw ConfigError("invalid loss options:" + text);
}

namespace {

// One routine for value and gradient so the two can never disagree; `gradient` may be empty (value only).
template <typename Scalar>
Scalar evaluate(const Loss& loss, std::span<const Scalar> outputs, std::span<const Scalar> targets,
                std::span<Scalar> gradient) {
  loss.validate();
  const std::size_t k = loss.outputs_per_lead();
  if (outputs.size() != targets.size() * k) {
    throw DataError("loss " + to_string(loss.type) + ": outputs has " + std::to_string(outputs.size()) +
                    " values, expected targets (" + std::to_string(targets.size()) + ") × " + std::to_string(k));
  }
  if (!gradient.empty() && gradient.size() != outputs.size()) {
    throw DataError("loss " + to_string(loss.type) + ": output_gradient has " + std::to_string(gradient.size()) +
                    " values, expected " + std::to_string(outputs.size()));
  }
  const bool want_gradient = !gradient.empty();
  std::size_t present = 0;
  for (Scalar y : targets) present += std::isnan(y) ? 0 : 1;
  if (want_gradient) std::fill(gradient.begin(), gradient.end(), Scalar(0));
  if (present == 0) return Scalar(0);

  double total = 0.0;
  // Normaliser of the mean losses: the number of non-missing targets (times Q for the pinball loss, which is
  // averaged over the levels too).
  double scale = 1.0;
  switch (loss.type) {
    case LossType::squared_sum:
      scale = 1.0;
      break;
    case LossType::squared_mean:
    case LossType::gaussian_nll:
      scale = 1.0 / static_cast<double>(present);
      break;
    case LossType::pinball:
      scale = 1.0 / (static_cast<double>(present) * static_cast<double>(k));
      break;
  }
  for (std::size_t i = 0; i < targets.size(); ++i) {
    const double y = targets[i];
    if (std::isnan(y)) continue;
    const Scalar* out = outputs.data() + i * k;
    switch (loss.type) {
      case LossType::squared_sum:
      case LossType::squared_mean: {
        const double r = static_cast<double>(out[0]) - y;
        total += r * r;
        if (want_gradient) gradient[i] = static_cast<Scalar>(2.0 * r * scale);
        break;
      }
      case LossType::gaussian_nll: {
        // Negative log density of N(μ, σ²) with s = log σ² (Nix & Weigend 1994):
        // 0.5·(s + (y − μ)²·e^(−s)) + 0.5·log 2π. The log-variance parameterisation keeps σ² positive without a
        // constraint; no clamping is applied, so a trainer should start from moderate s.
        const double mu = out[0], s = out[1];
        const double r = y - mu;
        const double inv_var = std::exp(-s);
        total += 0.5 * (s + r * r * inv_var) + 0.5 * std::log(2.0 * std::numbers::pi);
        if (want_gradient) {
          gradient[2 * i] = static_cast<Scalar>(-r * inv_var * scale);
          gradient[2 * i + 1] = static_cast<Scalar>(0.5 * (1.0 - r * r * inv_var) * scale);
        }
        break;
      }
      case LossType::pinball: {
        // Pinball (check) loss of quantile regression (Koenker & Bassett 1978): ρ_τ(u) = u·(τ − 1{u < 0}),
        // u = y − q_τ. Its subgradient in q_τ is −τ for u > 0 and 1 − τ for u < 0 (we take 1 − τ at u = 0).
        for (std::size_t j = 0; j < k; ++j) {
          const double tau = loss.quantile_levels[j];
          const double u = y - static_cast<double>(out[j]);
          total += u >= 0.0 ? tau * u : (tau - 1.0) * u;
          if (want_gradient) gradient[i * k + j] = static_cast<Scalar>((u > 0.0 ? -tau : 1.0 - tau) * scale);
        }
        break;
      }
    }
  }
  return static_cast<Scalar>(total * scale);
}

}  // namespace

template <typename Scalar>
Scalar loss_value(const Loss& loss, std::span<const Scalar> outputs, std::span<const Scalar> targets) {
  return evaluate<Scalar>(loss, outputs, targets, {});
}

template <typename Scalar>
Scalar loss_and_output_gradient(const Loss& loss, std::span<const Scalar> outputs, std::span<const Scalar> targets,
                                std::span<Scalar> output_gradient) {
  if (output_gradient.size() != outputs.size()) {
    throw DataError("loss " + to_string(loss.type) + ": output_gradient has " + std::to_string(output_gradient.size()) +
                    " values, expected " + std::to_string(outputs.size()));
  }
  if (outputs.empty()) {
    loss.validate();
    return Scalar(0);
  }
  return evaluate<Scalar>(loss, outputs, targets, output_gradient);
}

template float loss_value<float>(const Loss&, std::span<const float>, std::span<const float>);
template double loss_value<double>(const Loss&, std::span<const double>, std::span<const double>);
template float loss_and_output_gradient<float>(const Loss&, std::span<const float>, std::span<const float>,
                                               std::span<float>);
template double loss_and_output_gradient<double>(const Loss&, std::span<const double>, std::span<const double>,
                                                 std::span<double>);

}  // namespace libseq::nn
