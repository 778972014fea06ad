#pragma once
/// @file network.hpp
/// Stacked recurrent networks (Elman, LSTM, GRU) with a dense head on the last state, trained by full
/// backpropagation through time. Equations, gate order, initialisation, dropout and masking are documented in
/// docs/methods-networks.md; the weight layout maps one-to-one to torch.nn.RNN/LSTM/GRU (weight_ih, weight_hh,
/// bias_ih, bias_hh per layer).
///
/// Thread-safety: a Network is not safe for concurrent use (forward and backward share preallocated workspaces);
/// distinct Network objects may be used from different threads at once. Kernels are single-threaded; a network
/// alone on a machine may run its batch slices on several threads (set_threads), with results that do not depend
/// on the thread count.

#include <cstddef>
#include <cstdint>
#include <memory>
#include <random>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/nn/loss.hpp"

namespace libseq::nn {

/// Recurrent cell type.
enum class CellType { elman, lstm, gru };
/// "elman", "lstm", "gru".
std::string to_string(CellType type);
/// Inverse of to_string. @throws libseq::ConfigError naming `key` and the accepted names.
CellType parse_cell_type(std::string_view text, std::string_view key = "cell");

/// Activation of the Elman recurrence h = act(W x + b + U h_prev + c). identity gives a linear recurrence.
enum class ElmanActivation { tanh, relu, identity };
/// "tanh", "relu", "identity".
std::string to_string(ElmanActivation activation);
/// Inverse of to_string. @throws libseq::ConfigError naming `key` and the accepted names.
ElmanActivation parse_elman_activation(std::string_view text, std::string_view key = "elman_activation");

/// Dense head on the last state of the top layer.
enum class HeadType {
  point,     ///< one value per lead
  gaussian,  ///< (mean, log_variance) per lead
  quantile   ///< one value per quantile level per lead
};
/// "point", "gaussian", "quantile".
std::string to_string(HeadType type);
/// Inverse of to_string. @throws libseq::ConfigError naming `key` and the accepted names.
HeadType parse_head_type(std::string_view text, std::string_view key = "head");

/// Whether a forward pass draws variational dropout masks.
enum class DropoutMode {
  off,    ///< no dropout (deterministic evaluation)
  sample  ///< draw one mask per sequence (Gal & Ghahramani 2016): training, or MC dropout at prediction
};

/// Network shape and regularisation.
struct NetworkOptions {
  CellType cell = CellType::lstm;
  ElmanActivation elman_activation = ElmanActivation::tanh;  ///< used only when cell == elman
  std::size_t input_size = 1;                                ///< dynamic inputs per time step (D), >= 1
  std::size_t static_size = 0;   ///< static inputs (site attributes) fed to layer 0 at every step
  std::size_t hidden_size = 64;  ///< H, same for every layer, >= 1
  std::size_t layers = 1;        ///< stacked recurrent layers, >= 1
  HeadType head = HeadType::point;
  std::size_t horizon = 1;              ///< lead times predicted from the last state (1 = sequence-to-one), >= 1
  std::vector<double> quantile_levels;  ///< strictly increasing in (0,1); required for HeadType::quantile
  /// Dropout probabilities in [0,1): on layer-0 dynamic inputs, on the recurrent state entering U h_prev, and on
  /// each layer's output (into the next layer, and into the head).
  double input_dropout = 0.0, recurrent_dropout = 0.0, output_dropout = 0.0;
  /// Gate biases at initialisation. 0: the standard ones (zero, LSTM forget-gate bias 1). T_max >= 3: chrono
  /// initialisation (Tallec & Ollivier 2018) for dependencies up to T_max steps: per hidden unit b ~ log U(1, T_max
  /// − 1) on the LSTM forget gate with the input gate at −b, or on the GRU update gate; not for Elman.
  std::size_t chrono_steps = 0;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
  /// Head outputs per lead: 1 point, 2 gaussian, Q quantile.
  std::size_t outputs_per_lead() const;
  /// Gates per cell: 1 Elman, 4 LSTM, 3 GRU.
  std::size_t gates() const;
};

/// A batch of sequences, time-major: step t of sequence b, input j is inputs[(t*batch + b)*input_size + j].
template <typename Scalar>
struct SequenceBatch {
  std::size_t steps = 0, batch = 0;
  std::vector<Scalar> inputs;   ///< steps × batch × input_size
  std::vector<Scalar> statics;  ///< batch × static_size (empty if static_size == 0)
  /// steps × batch, 1 = real step, 0 = padding; empty = all real. Padding is LEFT padding (short histories end at
  /// the last step); a padded step leaves every state unchanged and receives/propagates no gradient.
  std::vector<std::uint8_t> mask;
  std::vector<Scalar> targets;  ///< batch × horizon, NaN = missing (masked out of the loss)
};

/// A named row-major block of the flat parameter vector.
struct ParameterBlock {
  std::string name;  ///< e.g. "layer0.input_weights", "layer1.recurrent_bias", "head.weights"
  std::size_t offset, rows, cols;
};

/// Stacked recurrent network with a dense head. Parameters live in one flat contiguous vector (see
/// parameter_layout()); per layer l the blocks are, in order:
///   layer{l}.input_weights     (G·H) × D_l   (torch weight_ih_l{l}; D_0 = input_size, D_l = H for l > 0)
///   layer{l}.recurrent_weights (G·H) × H     (torch weight_hh_l{l})
///   layer{l}.input_bias        (G·H) × 1     (torch bias_ih_l{l})
///   layer{l}.recurrent_bias    (G·H) × 1     (torch bias_hh_l{l})
/// then, if static_size > 0, layer0.static_weights (G·H) × static_size, then head.weights
/// (horizon·outputs_per_lead) × H and head.bias. Gate order: LSTM i, f, g, o; GRU r, z, n (as torch).
template <typename Scalar>
class Network {
 public:
  /// @throws libseq::ConfigError when options.validate() fails.
  explicit Network(const NetworkOptions& options);
  Network(const Network& other);             ///< copies options, parameters, threads (not workspaces or gradients)
  Network& operator=(const Network& other);  ///< as the copy constructor
  Network(Network&&) noexcept;
  Network& operator=(Network&&) noexcept;
  ~Network();

  const NetworkOptions& options() const { return options_; }

  /// Glorot uniform input, static and head weights (per gate block), orthogonal recurrent blocks per gate, zero
  /// biases except LSTM forget-gate input bias 1, or chrono biases (options.chrono_steps), drawn from a generator of
  /// their own (seed + 1000) so that every weight is the same as with standard biases. Deterministic from `seed` on
  /// every platform.
  void initialize(std::uint64_t seed);

  std::size_t parameter_count() const { return parameters_.size(); }
  std::span<Scalar> parameters() { return parameters_; }
  std::span<const Scalar> parameters() const { return parameters_; }
  /// Gradient of the last loss_and_gradient call, same layout as parameters().
  std::span<Scalar> gradients() { return gradients_; }
  std::span<const Scalar> gradients() const { return gradients_; }
  const std::vector<ParameterBlock>& parameter_layout() const { return layout_; }
  /// Block by name. @throws libseq::ConfigError when there is no such block.
  const ParameterBlock& block(std::string_view name) const;

  /// Forward only; writes head outputs batch × horizon × outputs_per_lead to `outputs`. `rng` is used only when
  /// mode == sample (it must then be non-null). Also sets final_state().
  /// @throws libseq::DataError when the batch or outputs sizes disagree with the options.
  void predict(const SequenceBatch<Scalar>& batch, std::span<Scalar> outputs, DropoutMode mode, std::mt19937_64* rng);

  /// Forward + loss + full BPTT; overwrites gradients() and input_gradients(); returns the loss value.
  /// @throws libseq::ConfigError when the loss does not match the head (point: squared_*, gaussian: gaussian_nll,
  /// quantile: pinball with the same levels); libseq::DataError on size mismatches.
  Scalar loss_and_gradient(const SequenceBatch<Scalar>& batch, const Loss& loss, DropoutMode mode,
                           std::mt19937_64* rng);

  /// d loss / d inputs of the last loss_and_gradient call, steps × batch × input_size (time-major, like inputs).
  std::span<const Scalar> input_gradients() const { return input_gradients_; }

  /// Head outputs of the last predict or loss_and_gradient call, batch × horizon × outputs_per_lead.
  std::span<const Scalar> last_outputs() const { return outputs_; }

  /// Hidden states of the top recurrent layer at every step of the last forward call, steps × batch × H
  /// (time-major; before output dropout). Padded steps repeat the previous state.
  std::span<const Scalar> top_states() const;

  /// Euclidean norm, over batch and hidden units, of d loss / d h_t for each step t and layer l of the last
  /// loss_and_gradient call; steps × layers (time-major). For gradient-through-time diagnostics.
  std::span<const Scalar> state_gradient_norms() const { return state_gradient_norms_; }

  /// Bytes currently held by the forward/backward workspaces (per-step activations and gradients); grows with
  /// steps × batch × gates × hidden_size and is reused by later calls of the same shape.
  std::size_t workspace_bytes() const;

  /// Sequences per batch slice: a batch of `batch` sequences is cut into batch_slices(batch) slices of nearly equal
  /// size (the first batch % slices slices one sequence larger). The count depends on the batch size only: 1 below
  /// 128 sequences, else 2. Forward and backward run per slice; parameter gradients are summed in slice order.
  static std::size_t batch_slices(std::size_t batch);

  /// Threads used to run the batch slices of one call (default 1; at most batch_slices(batch) are of use). Results
  /// are bit-identical for any value, because the slicing and the order of the gradient sum do not depend on it.
  /// Use more than 1 only when this network is alone on the machine: it starts its own threads (std::thread) in
  /// every predict / loss_and_gradient call, which would oversubscribe inside an ensemble's parallel loop.
  /// @throws libseq::ConfigError when threads == 0.
  void set_threads(std::size_t threads);
  std::size_t threads() const { return threads_; }

  /// Size of a recurrent state for `batch` sequences: layers × (h, and c for LSTM) × batch × H.
  std::size_t state_size(std::size_t batch) const;
  /// Initial state used by every later forward call until clear_initial_state() (for truncated BPTT: pass the
  /// final_state() of the previous chunk). Layout: for each layer, h (batch-major, batch × H), then for LSTM c.
  /// No gradient flows into it. Its size fixes the batch: a forward call with another batch size throws
  /// libseq::DataError.
  void set_initial_state(std::span<const Scalar> state);
  /// Back to zero initial states.
  void clear_initial_state();
  /// State after the last step of the last forward call, layout as set_initial_state.
  std::span<const Scalar> final_state() const { return final_state_; }

 private:
  struct Workspace;
  struct Slice;
  void build_layout();
  void forward(const SequenceBatch<Scalar>& batch, DropoutMode mode, std::mt19937_64* rng);
  void forward_slice(Slice& slice, const SequenceBatch<Scalar>& batch);
  void backward_slice(Slice& slice, const SequenceBatch<Scalar>& batch);

  NetworkOptions options_;
  std::vector<ParameterBlock> layout_;
  std::vector<Scalar> parameters_, gradients_, input_gradients_, outputs_, state_gradient_norms_;
  std::vector<Scalar> initial_state_, final_state_;
  std::unique_ptr<Workspace> work_;
  std::size_t threads_ = 1;
};

extern template class Network<float>;
extern template class Network<double>;

}  // namespace libseq::nn
