#include "libseq/train/optimizer.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "libseq/error.hpp"

namespace libseq::train {

std::string to_string(OptimizerType type) {
  switch (type) {
    case OptimizerType::sgd: return "sgd";
    case OptimizerType::adam: return "adam";
    case OptimizerType::adamw: return "adamw";
  }
  return "unknown";
}

OptimizerType parse_optimizer_type(std::string_view text, std::string_view key) {
  if (text == "sgd") return OptimizerType::sgd;
  if (text == "adam") return OptimizerType::adam;
  if (text == "adamw") return OptimizerType::adamw;
  throw ConfigError(std::string(key) + " = '" + std::string(text) + "': expected one of sgd, adam, adamw");
}

void OptimizerOptions::validate() const {
  std::ostringstream problems;
  auto rule = [&](bool ok, const char* key, double value, const char* expectation) {
    if (!ok) problems << "\n  optimizer." << key << " = " << value << ": expected " << expectation;
  };
  rule(std::isfinite(learning_rate) && learning_rate > 0, "learning_rate", learning_rate, "a finite value > 0");
  rule(beta1 >= 0 && beta1 < 1, "beta1", beta1, "a value in [0, 1)");
  rule(beta2 >= 0 && beta2 < 1, "beta2", beta2, "a value in [0, 1)");
  rule(std::isfinite(epsilon) && epsilon > 0, "epsilon", epsilon, "a finite value > 0");
  rule(momentum >= 0 && momentum < 1, "momentum", momentum, "a value in [0, 1)");
  rule(dampening >= 0 && dampening < 1, "dampening", dampening, "a value in [0, 1)");
  rule(std::isfinite(weight_decay) && weight_decay >= 0, "weight_decay", weight_decay, "a finite value >= 0");
  if (nesterov && (type != OptimizerType::sgd || momentum <= 0 || dampening != 0)) {
    problems << "\n  optimizer.nesterov = true: expected type sgd with momentum > 0 and dampening 0 (type "
             << to_string(type) << ", momentum " << momentum << ", dampening " << dampening << ")";
  }
  const std::string text = problems.str();
  if (!text.empty()) throw ConfigError("invalid optimizer options:" + text);
}

template <typename Scalar>
Optimizer<Scalar>::Optimizer(const OptimizerOptions& options, std::size_t parameter_count)
    : options_(options), learning_rate_(options.learning_rate) {
  options_.validate();
  first_.assign(parameter_count, Scalar(0));
  if (options_.type != OptimizerType::sgd) second_.assign(parameter_count, Scalar(0));
}

template <typename Scalar>
void Optimizer<Scalar>::reset() {
  steps_ = 0;
  std::fill(first_.begin(), first_.end(), Scalar(0));
  std::fill(second_.begin(), second_.end(), Scalar(0));
}

template <typename Scalar>
void Optimizer<Scalar>::step(std::span<Scalar> parameters, std::span<const Scalar> gradients) {
  const std::size_t n = first_.size();
  if (parameters.size() != n || gradients.size() != n) {
    throw DataError("Optimizer::step: expected " + std::to_string(n) + " parameters and gradients, got " +
                    std::to_string(parameters.size()) + " and " + std::to_string(gradients.size()));
  }
  ++steps_;
  const Scalar decay = static_cast<Scalar>(options_.weight_decay);

  if (options_.type == OptimizerType::sgd) {
    // torch.optim.SGD: d = g + λθ; v ← d on the first step, else v ← μv + (1 − dampening)d; θ ← θ − η·v
    // (or θ − η(d + μv) with Nesterov). Note μ multiplies the velocity and η is applied after, which differs from
    // the v ← μv − ηg form of Sutskever et al. (2013) when η changes between steps.
    const Scalar lr = static_cast<Scalar>(learning_rate_);
    const Scalar mu = static_cast<Scalar>(options_.momentum);
    const Scalar keep = static_cast<Scalar>(1.0 - options_.dampening);
    for (std::size_t i = 0; i < n; ++i) {
      Scalar d = gradients[i];
      if (options_.weight_decay != 0) d = d + decay * parameters[i];
      if (options_.momentum != 0) {
        first_[i] = steps_ == 1 ? d : mu * first_[i] + keep * d;
        d = options_.nesterov ? d + mu * first_[i] : first_[i];
      }
      parameters[i] = parameters[i] - lr * d;
    }
    return;
  }

  // Adam (Kingma & Ba 2015, Algorithm 1) in torch's arrangement: m ← β1 m + (1 − β1)g, v ← β2 v + (1 − β2)g²,
  // θ ← θ − (α / (1 − β1^t)) · m / (√v / √(1 − β2^t) + ε). ε is added after the bias correction of √v, as torch
  // does (the paper's Algorithm 1 adds it to √v̂ too; its "efficient version" in Section 2 differs slightly).
  const double t = static_cast<double>(steps_);
  const double bias_correction1 = 1.0 - std::pow(options_.beta1, t);
  const double bias_correction2_sqrt = std::sqrt(1.0 - std::pow(options_.beta2, t));
  const Scalar step_size = static_cast<Scalar>(learning_rate_ / bias_correction1);
  const Scalar b1 = static_cast<Scalar>(options_.beta1), one_minus_b1 = static_cast<Scalar>(1.0 - options_.beta1);
  const Scalar b2 = static_cast<Scalar>(options_.beta2), one_minus_b2 = static_cast<Scalar>(1.0 - options_.beta2);
  const Scalar bc2 = static_cast<Scalar>(bias_correction2_sqrt);
  const Scalar eps = static_cast<Scalar>(options_.epsilon);
  const bool decoupled = options_.type == OptimizerType::adamw;
  // AdamW (Loshchilov & Hutter 2019, Algorithm 2, line 12, with the schedule multiplier folded into α):
  // θ ← θ(1 − αλ) before the moment update, as torch.optim.AdamW.
  const Scalar shrink = static_cast<Scalar>(1.0 - learning_rate_ * options_.weight_decay);
  for (std::size_t i = 0; i < n; ++i) {
    Scalar g = gradients[i];
    if (decoupled) {
      if (options_.weight_decay != 0) parameters[i] = parameters[i] * shrink;
    } else if (options_.weight_decay != 0) {
      g = g + decay * parameters[i];
    }
    first_[i] = first_[i] * b1 + one_minus_b1 * g;
    second_[i] = second_[i] * b2 + one_minus_b2 * (g * g);
    const Scalar denom = std::sqrt(second_[i]) / bc2 + eps;
    parameters[i] = parameters[i] + (-step_size) * (first_[i] / denom);
  }
}

template <typename Scalar>
double global_norm(std::span<const Scalar> values) {
  double sum = 0.0;
  for (Scalar v : values) sum += static_cast<double>(v) * static_cast<double>(v);
  return std::sqrt(sum);
}

template <typename Scalar>
ClipResult clip_by_global_norm(std::span<Scalar> gradients, double max_norm) {
  ClipResult result;
  result.norm_before = global_norm(std::span<const Scalar>(gradients.data(), gradients.size()));
  if (!std::isfinite(result.norm_before)) return result;
  const double coefficient = max_norm / (result.norm_before + 1e-6);
  if (coefficient < 1.0) {
    const Scalar c = static_cast<Scalar>(coefficient);
    for (Scalar& g : gradients) g *= c;
    result.clipped = true;
  }
  return result;
}

template class Optimizer<float>;
template class Optimizer<double>;
template double global_norm<float>(std::span<const float>);
template double global_norm<double>(std::span<const double>);
template ClipResult clip_by_global_norm<float>(std::span<float>, double);
template ClipResult clip_by_global_norm<double>(std::span<double>, double);

}  // namespace libseq::train
