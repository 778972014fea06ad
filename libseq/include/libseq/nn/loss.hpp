#pragma once
/// @file loss.hpp
/// Training losses on head outputs, with missing (NaN) targets masked out, and their gradient with respect to the
/// outputs. Usable standalone on spans or through Network::loss_and_gradient.
///
/// Layouts (shared with Network): outputs are batch × horizon × outputs_per_lead (row-major, lead fastest after
/// the per-lead outputs), targets are batch × horizon. outputs_per_lead is 1 for squared losses, 2 for the
/// Gaussian NLL (mean, log_variance) and Q (one per quantile level) for the pinball loss.

#include <cstddef>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace libseq::nn {

/// Which loss to minimise.
enum class LossType {
  squared_sum,   ///< Σ (y − ŷ)² over non-missing targets.
  squared_mean,  ///< Σ (y − ŷ)² / N, N = number of non-missing targets.
  gaussian_nll,  ///< mean over non-missing targets of 0.5·(s + (y − μ)²·e^(−s)) + 0.5·log 2π, s = log σ².
  pinball        ///< mean over non-missing targets and quantile levels of the pinball (check) loss.
};

/// "squared_sum", "squared_mean", "gaussian_nll", "pinball".
std::string to_string(LossType type);

/// Inverse of to_string. @throws libseq::ConfigError naming `key` and the accepted names.
LossType parse_loss_type(std::string_view text, std::string_view key = "loss");

/// A loss and its parameters.
struct Loss {
  LossType type = LossType::squared_mean;
  /// Quantile levels, strictly increasing in (0, 1); required (non-empty) for LossType::pinball, ignored otherwise.
  std::vector<double> quantile_levels;

  /// Number of head outputs per lead time this loss expects: 1 squared, 2 Gaussian, Q pinball.
  std::size_t outputs_per_lead() const;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// Loss value over `targets` (batch × horizon, NaN = missing) given `outputs` (targets.size() × outputs_per_lead).
/// Returns 0 when every target is missing. Accumulates in double.
/// @throws libseq::ConfigError when the loss is invalid; libseq::DataError when the sizes disagree.
template <typename Scalar>
Scalar loss_value(const Loss& loss, std::span<const Scalar> outputs, std::span<const Scalar> targets);

/// Loss value as loss_value, and d loss / d outputs written to `output_gradient` (same size as outputs; zero for
/// missing targets). @throws as loss_value, and libseq::DataError when output_gradient has the wrong size.
template <typename Scalar>
Scalar loss_and_output_gradient(const Loss& loss, std::span<const Scalar> outputs, std::span<const Scalar> targets,
                                std::span<Scalar> output_gradient);

}  // namespace libseq::nn
