#pragma once
/// @file optimizer.hpp
/// First-order optimisers and gradient clipping acting on one flat parameter vector and its gradient. They know
/// nothing about the network's cells: a `Network` exposes `parameters()` and `gradients()` as flat spans of the
/// same layout, and that is all an optimiser touches. Update rules follow PyTorch's `torch.optim` (version 1.13,
/// single-tensor code path) so that a run can be checked against it; see docs/methods-training.md.

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace libseq::train {

/// Which update rule an Optimizer applies.
enum class OptimizerType {
  sgd,   ///< Stochastic gradient descent with optional (Nesterov) momentum, torch convention v = μv + g.
  adam,  ///< Adam (Kingma & Ba 2015, Algorithm 1); weight decay is L2 added to the gradient, as torch's Adam.
  adamw  ///< Adam with decoupled weight decay (Loshchilov & Hutter 2019), as torch's AdamW.
};

/// "sgd", "adam" or "adamw".
std::string to_string(OptimizerType type);
/// Inverse of to_string. @throws libseq::ConfigError naming `key` and listing the accepted names.
OptimizerType parse_optimizer_type(std::string_view text, std::string_view key = "optimizer");

/// Settings of an optimiser. Defaults are Adam's published defaults (Kingma & Ba 2015, Algorithm 1).
struct OptimizerOptions {
  OptimizerType type = OptimizerType::adam;
  /// Step size α (Adam, AdamW) or η (SGD), in parameter units per gradient unit; > 0. Schedules rescale it.
  double learning_rate = 1e-3;
  /// Adam/AdamW exponential decay of the first-moment estimate, in [0, 1).
  double beta1 = 0.9;
  /// Adam/AdamW exponential decay of the second-moment estimate, in [0, 1).
  double beta2 = 0.999;
  /// Adam/AdamW term added to the bias-corrected √v̂ in the denominator; > 0.
  double epsilon = 1e-8;
  /// SGD momentum μ in [0, 1); 0 is plain SGD. Ignored by Adam/AdamW.
  double momentum = 0.0;
  /// SGD dampening in [0, 1): the fresh gradient enters the velocity with weight (1 − dampening) after step 1.
  double dampening = 0.0;
  /// SGD Nesterov momentum (Sutskever et al. 2013 as written in torch): step along g + μv; needs momentum > 0 and
  /// dampening 0.
  bool nesterov = false;
  /// Weight decay λ ≥ 0. For sgd and adam it is an L2 penalty: λ·θ is added to the gradient before the update
  /// (torch's `weight_decay`). For adamw it is decoupled: θ ← θ(1 − α·λ) before the Adam step.
  double weight_decay = 0.0;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// An optimiser with its per-parameter state (SGD velocity; Adam moments and step count).
///
/// `Scalar` is float or double. State is stored in `Scalar`, as torch stores it in the parameter's dtype; the
/// scalar coefficients (bias corrections, step size) are computed in double. Not thread-safe; one per member.
template <typename Scalar>
class Optimizer {
 public:
  /// @throws libseq::ConfigError when options are invalid.
  Optimizer(const OptimizerOptions& options, std::size_t parameter_count);

  /// One update of `parameters` from `gradients` (same length as the constructor's parameter_count).
  /// The gradient span is read only; weight decay is applied on the fly.
  /// @throws libseq::DataError when a span has the wrong length.
  void step(std::span<Scalar> parameters, std::span<const Scalar> gradients);

  /// Current learning rate (schedules change it between epochs).
  double learning_rate() const { return learning_rate_; }
  /// Sets the learning rate for the following steps; must be > 0 (not checked on the hot path).
  void set_learning_rate(double rate) { learning_rate_ = rate; }
  /// Number of step() calls since construction or reset().
  std::uint64_t steps_taken() const { return steps_; }
  /// Clears the state (velocity, moments, step count); the learning rate is kept.
  void reset();
  const OptimizerOptions& options() const { return options_; }

 private:
  OptimizerOptions options_;
  double learning_rate_;
  std::uint64_t steps_ = 0;
  std::vector<Scalar> first_;   // SGD velocity, or Adam first moment m
  std::vector<Scalar> second_;  // Adam second moment v (empty for SGD)
};

/// Euclidean norm of a flat vector, accumulated serially in double (deterministic; no parallel reduction).
template <typename Scalar>
double global_norm(std::span<const Scalar> values);

/// Outcome of one clip_by_global_norm call.
struct ClipResult {
  double norm_before = 0.0;  ///< Global L2 norm of the gradient before clipping.
  bool clipped = false;      ///< Whether the gradient was scaled down (scale < 1).
};

/// Gradient clipping by global norm (Pascanu, Mikolov & Bengio 2013, Algorithm 2): with
/// c = max_norm / (‖g‖ + 1e-6), g ← c·g whenever c < 1 (the form and the 1e-6 of torch.nn.utils.clip_grad_norm_).
/// A non-finite norm leaves the gradient unchanged (the trainer records the divergence instead).
/// `max_norm` must be > 0 (not checked here; TrainOptions::validate checks it).
template <typename Scalar>
ClipResult clip_by_global_norm(std::span<Scalar> gradients, double max_norm);

}  // namespace libseq::train
