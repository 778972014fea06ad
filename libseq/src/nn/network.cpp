#include "libseq/nn/network.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <exception>
#include <numbers>
#include <sstream>
#include <thread>

#include "libseq/error.hpp"

#if defined(__SSE__) || defined(__x86_64__)
#include <xmmintrin.h>
#define LIBSEQ_NN_HAVE_MXCSR 1
#endif

// Equations, gate order and the GRU variant are written out in docs/methods-networks.md; comments below cite them.

namespace libseq::nn {

// --- Enumerations ---------------------------------------------------------------------------------------------------

std::string to_string(CellType type) {
  switch (type) {
    case CellType::elman:
      return "elman";
    case CellType::lstm:
      return "lstm";
    case CellType::gru:
      return "gru";
  }
  return "unknown";
}

CellType parse_cell_type(std::string_view text, std::string_view key) {
  for (auto type : {CellType::elman, CellType::lstm, CellType::gru}) {
    if (text == to_string(type)) return type;
  }
  throw ConfigError(std::string(key) + " = \"" + std::string(text) + "\": expected one of elman, lstm, gru");
}

std::string to_string(ElmanActivation activation) {
  switch (activation) {
    case ElmanActivation::tanh:
      return "tanh";
    case ElmanActivation::relu:
      return "relu";
    case ElmanActivation::identity:
      return "identity";
  }
  return "unknown";
}

ElmanActivation parse_elman_activation(std::string_view text, std::string_view key) {
  for (auto a : {ElmanActivation::tanh, ElmanActivation::relu, ElmanActivation::identity}) {
    if (text == to_string(a)) return a;
  }
  throw ConfigError(std::string(key) + " = \"" + std::string(text) + "\": expected one of tanh, relu, identity");
}

std::string to_string(HeadType type) {
  switch (type) {
    case HeadType::point:
      return "point";
    case HeadType::gaussian:
      return "gaussian";
    case HeadType::quantile:
      return "quantile";
  }
  return "unknown";
}

HeadType parse_head_type(std::string_view text, std::string_view key) {
  for (auto type : {HeadType::point, HeadType::gaussian, HeadType::quantile}) {
    if (text == to_string(type)) return type;
  }
  throw ConfigError(std::string(key) + " = \"" + std::string(text) + "\": expected one of point, gaussian, quantile");
}

// --- Options --------------------------------------------------------------------------------------------------------

void NetworkOptions::validate() const {
  std::ostringstream problems;
  if (input_size < 1) problems << "\n  network.input_size = " << input_size << ": expected >= 1";
  if (hidden_size < 1) problems << "\n  network.hidden_size = " << hidden_size << ": expected >= 1";
  if (layers < 1) problems << "\n  network.layers = " << layers << ": expected >= 1";
  if (horizon < 1) problems << "\n  network.horizon = " << horizon << ": expected >= 1";
  const auto check_probability = [&](const char* key, double p) {
    if (!(p >= 0.0 && p < 1.0)) problems << "\n  network." << key << " = " << p << ": expected a value in [0, 1)";
  };
  check_probability("input_dropout", input_dropout);
  check_probability("recurrent_dropout", recurrent_dropout);
  check_probability("output_dropout", output_dropout);
  if (head == HeadType::quantile && quantile_levels.empty()) {
    problems << "\n  network.quantile_levels is empty: expected at least one level for head = quantile";
  }
  for (std::size_t i = 0; i < quantile_levels.size(); ++i) {
    const double q = quantile_levels[i];
    if (!(q > 0.0 && q < 1.0)) {
      problems << "\n  network.quantile_levels[" << i << "] = " << q << ": expected a level strictly inside (0, 1)";
    }
    if (i > 0 && !(q > quantile_levels[i - 1])) {
      problems << "\n  network.quantile_levels[" << i << "] = " << q << ": expected strictly increasing levels";
    }
  }
  if (chrono_steps > 0 && chrono_steps < 3) {
    problems << "\n  network.chrono_steps = " << chrono_steps << ": expected 0 (standard biases) or at least 3";
  }
  if (chrono_steps > 0 && cell == CellType::elman) {
    problems << "\n  network.chrono_steps = " << chrono_steps << ": chrono initialisation needs gates (lstm or gru)";
  }
  const std::string text = problems.str();
  if (!text.empty()) throw ConfigError("invalid network options:" + text);
}

std::size_t NetworkOptions::outputs_per_lead() const {
  switch (head) {
    case HeadType::gaussian:
      return 2;
    case HeadType::quantile:
      return quantile_levels.size();
    default:
      return 1;
  }
}

std::size_t NetworkOptions::gates() const {
  switch (cell) {
    case CellType::lstm:
      return 4;
    case CellType::gru:
      return 3;
    default:
      return 1;
  }
}

// --- Workspace ------------------------------------------------------------------------------------------------------

namespace {

// Portable draws: std::uniform_real_distribution / normal_distribution differ between standard libraries, and
// initialisation must be deterministic from the seed everywhere.
double uniform01(std::mt19937_64& rng) { return static_cast<double>(rng() >> 11) * 0x1.0p-53; }

double standard_normal(std::mt19937_64& rng) {
  // Box–Muller transform (Box & Muller 1958); 1 − u keeps the log argument in (0, 1].
  const double u1 = 1.0 - uniform01(rng);
  const double u2 = uniform01(rng);
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
}

// Gradients flowing back through hundreds of steps decay into the subnormal range (below ~1e-38 in float), where
// x86 arithmetic is one to two orders of magnitude slower: a GRU training step over 365 steps took ~20× longer than
// an LSTM step of the same size. Flush-to-zero and denormals-are-zero are set for the duration of a forward/backward
// call and the caller's floating-point control word is restored afterwards (MXCSR is per thread). Values below
// 1e-38 then count as 0, which changes no result at the tolerance of any check.
class FlushSubnormals {
 public:
#ifdef LIBSEQ_NN_HAVE_MXCSR
  FlushSubnormals() : saved_(_mm_getcsr()) { _mm_setcsr(saved_ | 0x8040U); }  // FTZ (bit 15) | DAZ (bit 6)
  ~FlushSubnormals() { _mm_setcsr(saved_); }
#else
  FlushSubnormals() = default;
#endif
  FlushSubnormals(const FlushSubnormals&) = delete;
  FlushSubnormals& operator=(const FlushSubnormals&) = delete;

 private:
#ifdef LIBSEQ_NN_HAVE_MXCSR
  unsigned int saved_;
#endif
};

template <typename Mat>
void ensure_size(Mat& m, std::size_t rows, std::size_t cols) {
  if (static_cast<std::size_t>(m.rows()) != rows || static_cast<std::size_t>(m.cols()) != cols) {
    m.resize(static_cast<Eigen::Index>(rows), static_cast<Eigen::Index>(cols));
  }
}

// Runs fn(slice) for every slice, on up to `threads` threads (slice k on thread k mod threads). Each slice writes
// only its own workspace, so the result does not depend on the thread count. Worker threads set their own MXCSR
// (it is per thread); the first exception is rethrown in the caller.
template <typename SliceT, typename Fn>
void for_each_slice(std::vector<SliceT>& slices, std::size_t threads, const Fn& fn) {
  const std::size_t workers = std::min(threads, slices.size());
  if (workers <= 1) {
    for (auto& slice : slices) fn(slice);
    return;
  }
  std::vector<std::exception_ptr> errors(workers);
  const auto work = [&](std::size_t k) {
    try {
      const FlushSubnormals flush;
      for (std::size_t i = k; i < slices.size(); i += workers) fn(slices[i]);
    } catch (...) {
      errors[k] = std::current_exception();
    }
  };
  std::vector<std::thread> pool;
  pool.reserve(workers - 1);
  for (std::size_t k = 1; k < workers; ++k) pool.emplace_back(work, k);
  work(0);
  for (auto& thread : pool) thread.join();
  for (const auto& error : errors) {
    if (error) std::rethrow_exception(error);
  }
}

}  // namespace

// One slice of the batch: sequences [first, first + size). Everything a forward/backward pass of the slice writes.
template <typename Scalar>
struct Network<Scalar>::Slice {
  using Mat = Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  struct Layer {
    Mat pre;          // T·n × G·H: input projection + biases, then the gate activations of each step; the
                      // backward sweep overwrites step t with d loss / d (pre-activations) once t is done
    Mat hidden;       // (T+1)·n × H: rows [0,n) the initial state, rows [(t+1)n, (t+2)n) h_t
    Mat cell;         // LSTM: (T+1)·n × H, like hidden
    Mat recurrent_n;  // GRU: T·n × H, U_n h̃_{t−1} + b_hn; the backward overwrites it with d loss / d (U_n h̃ + b_hn)
    Mat hidden_dropped;  // T·n × H: h̃_{t−1} = h_{t−1} ⊙ recurrent mask (only with recurrent dropout)
    Mat input;           // T·n × D_l: dropped layer input (only when a dropout mask applies to it)
    const Scalar* input_data = nullptr;  // the layer input actually used, T·n × D_l row-major
  };
  std::size_t first = 0, size = 0;
  std::vector<Layer> layers;
  Mat inputs;                      // T·n × D: the slice's inputs, gathered (only when the batch has several slices)
  std::vector<std::uint8_t> mask;  // T·n: the slice's step mask, gathered (several slices and a masked batch)
  const Scalar* input_data = nullptr;
  const std::uint8_t* mask_data = nullptr;
  Mat bias;                       // 1 × G·H: b_ih + b_hh (GRU: b_hn left out, it sits inside the reset gate)
  Mat static_projection;          // n × G·H
  Mat scratch;                    // n × G·H: GRU recurrent product (forward), recurrent-side gradient (backward)
  Mat d_output, d_input;          // T·n × H, T·n × D_l: gradient wrt a layer's outputs / inputs
  Mat dh, carry_h, carry_c, rec;  // n × H
  Mat head_input;                 // n × H
  Mat static_gate_sums;           // n × G·H
  std::vector<Scalar> gradients;  // parameter gradient of this slice (several slices only)
  std::vector<Scalar> norms_sq;   // steps × layers: squared norm of d loss / d h_t over the slice
};

template <typename Scalar>
struct Network<Scalar>::Workspace {
  using Mat = typename Slice::Mat;

  struct Offsets {
    std::size_t input_weights, recurrent_weights, input_bias, recurrent_bias;
  };
  std::vector<Offsets> offsets;
  std::size_t static_weights = 0, head_weights = 0, head_bias = 0;

  // Dropout masks of the whole batch (one row per sequence), drawn in one fixed order before slicing so that the
  // draws do not depend on the slicing.
  Mat input_mask;                    // B × D (empty = no input dropout this pass)
  std::vector<Mat> recurrent_masks;  // per layer B × H (empty = none)
  std::vector<Mat> output_masks;     // per layer B × H (empty = none)
  Mat d_head;                        // B × outputs
  std::vector<Slice> slices;
  std::vector<Scalar> top_states;  // steps × B × H, assembled on demand when there are several slices
  bool top_states_ready = false;
  std::size_t steps = 0, batch = 0;
};

// --- Construction and layout ----------------------------------------------------------------------------------------

template <typename Scalar>
Network<Scalar>::Network(const NetworkOptions& options) : options_(options), work_(std::make_unique<Workspace>()) {
  options_.validate();
  build_layout();
}

template <typename Scalar>
Network<Scalar>::Network(const Network& other) : Network(other.options_) {
  parameters_ = other.parameters_;
  threads_ = other.threads_;
}

template <typename Scalar>
Network<Scalar>& Network<Scalar>::operator=(const Network& other) {
  if (this != &other) {
    Network copy(other);
    *this = std::move(copy);
  }
  return *this;
}

template <typename Scalar>
Network<Scalar>::Network(Network&&) noexcept = default;
template <typename Scalar>
Network<Scalar>& Network<Scalar>::operator=(Network&&) noexcept = default;
template <typename Scalar>
Network<Scalar>::~Network() = default;

template <typename Scalar>
void Network<Scalar>::build_layout() {
  const std::size_t g = options_.gates(), h = options_.hidden_size;
  std::size_t offset = 0;
  layout_.clear();
  work_->offsets.clear();
  const auto add = [&](std::string name, std::size_t rows, std::size_t cols) {
    layout_.push_back({std::move(name), offset, rows, cols});
    offset += rows * cols;
    return layout_.back().offset;
  };
  for (std::size_t l = 0; l < options_.layers; ++l) {
    const std::string prefix = "layer" + std::to_string(l) + ".";
    const std::size_t in = l == 0 ? options_.input_size : h;
    typename Workspace::Offsets o{};
    o.input_weights = add(prefix + "input_weights", g * h, in);
    o.recurrent_weights = add(prefix + "recurrent_weights", g * h, h);
    o.input_bias = add(prefix + "input_bias", g * h, 1);
    o.recurrent_bias = add(prefix + "recurrent_bias", g * h, 1);
    work_->offsets.push_back(o);
  }
  if (options_.static_size > 0) work_->static_weights = add("layer0.static_weights", g * h, options_.static_size);
  const std::size_t outputs = options_.horizon * options_.outputs_per_lead();
  work_->head_weights = add("head.weights", outputs, h);
  work_->head_bias = add("head.bias", outputs, 1);
  parameters_.assign(offset, Scalar(0));
  gradients_.assign(offset, Scalar(0));
}

template <typename Scalar>
const ParameterBlock& Network<Scalar>::block(std::string_view name) const {
  for (const auto& b : layout_) {
    if (b.name == name) return b;
  }
  throw ConfigError("network parameter block \"" + std::string(name) + "\" does not exist");
}

// --- Initialisation -------------------------------------------------------------------------------------------------

template <typename Scalar>
void Network<Scalar>::initialize(std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  const std::size_t g = options_.gates(), h = options_.hidden_size;
  std::fill(parameters_.begin(), parameters_.end(), Scalar(0));
  // Glorot & Bengio 2010, eq. 16 (equation number from memory): U(−a, a), a = sqrt(6 / (fan_in + fan_out)).
  // Applied per gate block (each gate is its own linear map), so fan_out = H.
  const auto glorot = [&](std::size_t offset, std::size_t rows, std::size_t cols, std::size_t fan_in) {
    const double a = std::sqrt(6.0 / static_cast<double>(fan_in + rows));
    for (std::size_t i = 0; i < rows * cols; ++i) {
      parameters_[offset + i] = static_cast<Scalar>((2.0 * uniform01(rng) - 1.0) * a);
    }
  };
  // Orthogonal H × H blocks (Saxe et al. 2014): Q of the QR decomposition of a standard Gaussian matrix,
  // with columns multiplied by sign(diag R) so that Q is Haar-distributed (Mezzadri 2007).
  const auto orthogonal = [&](std::size_t offset) {
    Eigen::MatrixXd gauss(h, h);
    for (Eigen::Index i = 0; i < gauss.rows(); ++i)
      for (Eigen::Index j = 0; j < gauss.cols(); ++j) gauss(i, j) = standard_normal(rng);
    Eigen::HouseholderQR<Eigen::MatrixXd> qr(gauss);
    Eigen::MatrixXd q = qr.householderQ();
    const Eigen::MatrixXd r = qr.matrixQR().template triangularView<Eigen::Upper>();
    for (Eigen::Index j = 0; j < q.cols(); ++j) {
      if (r(j, j) < 0) q.col(j) *= -1.0;
    }
    for (std::size_t i = 0; i < h; ++i)
      for (std::size_t j = 0; j < h; ++j) parameters_[offset + i * h + j] = static_cast<Scalar>(q(i, j));
  };
  const std::size_t fan_in0 = options_.input_size + options_.static_size;
  for (std::size_t l = 0; l < options_.layers; ++l) {
    const auto& o = work_->offsets[l];
    const std::size_t in = l == 0 ? options_.input_size : h;
    for (std::size_t gate = 0; gate < g; ++gate) {
      glorot(o.input_weights + gate * h * in, h, in, l == 0 ? fan_in0 : h);
    }
    for (std::size_t gate = 0; gate < g; ++gate) orthogonal(o.recurrent_weights + gate * h * h);
    // Forget-gate bias 1 (Jozefowicz et al. 2015), on the input bias; gate order i, f, g, o.
    if (options_.cell == CellType::lstm && options_.chrono_steps == 0) {
      for (std::size_t j = 0; j < h; ++j) parameters_[o.input_bias + h + j] = Scalar(1);
    }
    // Chrono initialisation (Tallec & Ollivier 2018, Section 3; written from memory): b ~ log U(1, T_max − 1) per
    // unit, so that the gate keeps a unit's state for about e^b steps. LSTM: forget gate b, input gate −b (rows 0..H
    // and H..2H of the input bias, gate order i, f, g, o). GRU: update gate z (rows H..2H, gate order r, z, n),
    // where h = (1 − z) n + z h_prev keeps the state as z → 1.
    if (options_.chrono_steps > 0) {
      std::mt19937_64 chrono(seed + 1000 + l);
      const double span = static_cast<double>(options_.chrono_steps - 2);
      for (std::size_t j = 0; j < h; ++j) {
        const double u = static_cast<double>(chrono() >> 11) * 0x1.0p-53;  // [0, 1), 53 bits
        const double b = std::log(1.0 + u * span);
        if (options_.cell == CellType::lstm) {
          parameters_[o.input_bias + j] = static_cast<Scalar>(-b);
          parameters_[o.input_bias + h + j] = static_cast<Scalar>(b);
        } else {
          parameters_[o.input_bias + h + j] = static_cast<Scalar>(b);
        }
      }
    }
  }
  if (options_.static_size > 0) {
    for (std::size_t gate = 0; gate < g; ++gate) {
      glorot(work_->static_weights + gate * h * options_.static_size, h, options_.static_size, fan_in0);
    }
  }
  const std::size_t outputs = options_.horizon * options_.outputs_per_lead();
  glorot(work_->head_weights, outputs, h, h);
}

// --- State ----------------------------------------------------------------------------------------------------------

template <typename Scalar>
std::size_t Network<Scalar>::state_size(std::size_t batch) const {
  return options_.layers * (options_.cell == CellType::lstm ? 2 : 1) * batch * options_.hidden_size;
}

template <typename Scalar>
void Network<Scalar>::set_initial_state(std::span<const Scalar> state) {
  const std::size_t per_batch = state_size(1);
  if (state.empty() || state.size() % per_batch != 0) {
    throw DataError("network initial state has " + std::to_string(state.size()) +
                    " values, expected a positive multiple of " + std::to_string(per_batch) +
                    " (layers × states × hidden_size)");
  }
  initial_state_.assign(state.begin(), state.end());
}

template <typename Scalar>
void Network<Scalar>::clear_initial_state() {
  initial_state_.clear();
}

template <typename Scalar>
std::size_t Network<Scalar>::workspace_bytes() const {
  const auto& w = *work_;
  std::size_t count = 0;
  const auto add = [&](const typename Workspace::Mat& m) { count += static_cast<std::size_t>(m.size()); };
  for (const auto& slice : w.slices) {
    for (const auto& layer : slice.layers) {
      for (const auto* m :
           {&layer.pre, &layer.hidden, &layer.cell, &layer.recurrent_n, &layer.hidden_dropped, &layer.input}) {
        add(*m);
      }
    }
    for (const auto* m :
         {&slice.inputs, &slice.bias, &slice.static_projection, &slice.scratch, &slice.d_output, &slice.d_input,
          &slice.dh, &slice.carry_h, &slice.carry_c, &slice.rec, &slice.head_input, &slice.static_gate_sums}) {
      add(*m);
    }
    count += slice.gradients.size() + slice.norms_sq.size();
  }
  for (const auto& m : w.recurrent_masks) add(m);
  for (const auto& m : w.output_masks) add(m);
  add(w.input_mask);
  add(w.d_head);
  count += w.top_states.size();
  return count * sizeof(Scalar);
}

template <typename Scalar>
std::span<const Scalar> Network<Scalar>::top_states() const {
  auto& w = *work_;
  const std::size_t h = options_.hidden_size;
  if (w.slices.empty()) return {};
  if (w.slices.size() == 1) {
    const auto& layer = w.slices.front().layers.back();
    return {layer.hidden.data() + w.batch * h, w.steps * w.batch * h};
  }
  if (!w.top_states_ready) {
    w.top_states.resize(w.steps * w.batch * h);
    for (const auto& slice : w.slices) {
      const auto& hidden = slice.layers.back().hidden;
      for (std::size_t t = 0; t < w.steps; ++t) {
        std::copy_n(hidden.data() + (t + 1) * slice.size * h, slice.size * h,
                    w.top_states.data() + (t * w.batch + slice.first) * h);
      }
    }
    w.top_states_ready = true;
  }
  return w.top_states;
}

template <typename Scalar>
std::size_t Network<Scalar>::batch_slices(std::size_t batch) {
  // Slices of at least 64 sequences keep the per-step products large enough to run near the GEMM rate.
  return batch >= 128 ? 2 : 1;
}

template <typename Scalar>
void Network<Scalar>::set_threads(std::size_t threads) {
  if (threads == 0) throw ConfigError("network threads = 0: expected >= 1");
  threads_ = threads;
}

// --- Forward --------------------------------------------------------------------------------------------------------

template <typename Scalar>
void Network<Scalar>::forward(const SequenceBatch<Scalar>& batch, DropoutMode mode, std::mt19937_64* rng) {
  auto& w = *work_;
  const std::size_t steps = batch.steps, nb = batch.batch, d = options_.input_size, s = options_.static_size;
  const std::size_t h = options_.hidden_size, layers = options_.layers;

  // Sizes.
  if (steps == 0 || nb == 0) throw DataError("sequence batch is empty: steps and batch must both be >= 1");
  if (batch.inputs.size() != steps * nb * d) {
    throw DataError("sequence batch inputs has " + std::to_string(batch.inputs.size()) + " values, expected steps (" +
                    std::to_string(steps) + ") × batch (" + std::to_string(nb) + ") × input_size (" +
                    std::to_string(d) + ")");
  }
  if (batch.statics.size() != nb * s) {
    throw DataError("sequence batch statics has " + std::to_string(batch.statics.size()) + " values, expected batch (" +
                    std::to_string(nb) + ") × static_size (" + std::to_string(s) + ")");
  }
  if (!batch.mask.empty() && batch.mask.size() != steps * nb) {
    throw DataError("sequence batch mask has " + std::to_string(batch.mask.size()) +
                    " values, expected steps × batch (" + std::to_string(steps * nb) + ") or none");
  }
  if (!initial_state_.empty() && initial_state_.size() != state_size(nb)) {
    throw DataError("network initial state holds " + std::to_string(initial_state_.size() / state_size(1)) +
                    " sequences, but the batch has " + std::to_string(nb));
  }
  if (mode == DropoutMode::sample && rng == nullptr) {
    throw ConfigError("dropout mode sample needs a random generator (rng is null)");
  }

  // Variational dropout masks (Gal & Ghahramani 2016): one Bernoulli mask per sequence and unit, reused at
  // every step; inverted scaling by 1/(1−p) so that no rescaling is needed without dropout. Drawn for the whole
  // batch in a fixed order (input, then per layer recurrent and output), before slicing.
  const bool sample = mode == DropoutMode::sample;
  const auto draw = [&](typename Workspace::Mat& mask, std::size_t cols, double p) {
    if (!sample || p <= 0.0) {
      mask.resize(0, 0);
      return;
    }
    ensure_size(mask, nb, cols);
    const auto keep_scale = static_cast<Scalar>(1.0 / (1.0 - p));
    for (Eigen::Index i = 0; i < mask.size(); ++i) mask.data()[i] = uniform01(*rng) < p ? Scalar(0) : keep_scale;
  };
  w.recurrent_masks.resize(layers);
  w.output_masks.resize(layers);
  draw(w.input_mask, d, options_.input_dropout);
  for (std::size_t l = 0; l < layers; ++l) {
    draw(w.recurrent_masks[l], h, options_.recurrent_dropout);
    draw(w.output_masks[l], h, options_.output_dropout);
  }

  // Slices (their count depends on the batch size only); workspaces are resized only when the shape changes.
  const std::size_t count = batch_slices(nb);
  w.slices.resize(count);
  for (std::size_t k = 0, first = 0; k < count; ++k) {
    auto& slice = w.slices[k];
    slice.first = first;
    slice.size = nb / count + (k < nb % count ? 1 : 0);
    first += slice.size;
  }
  w.steps = steps;
  w.batch = nb;
  w.top_states_ready = false;
  final_state_.resize(state_size(nb));
  outputs_.resize(nb * options_.horizon * options_.outputs_per_lead());
  for_each_slice(w.slices, threads_, [&](Slice& slice) { forward_slice(slice, batch); });
}

template <typename Scalar>
void Network<Scalar>::forward_slice(Slice& sl, const SequenceBatch<Scalar>& batch) {
  using Mat = typename Slice::Mat;
  using CMap = Eigen::Map<const Mat>;
  using MapM = Eigen::Map<Mat>;
  using CRow = Eigen::Map<const Eigen::Matrix<Scalar, 1, Eigen::Dynamic>>;
  using Vec = Eigen::Map<Eigen::Array<Scalar, Eigen::Dynamic, 1>>;
  using CVec = Eigen::Map<const Eigen::Array<Scalar, Eigen::Dynamic, 1>>;
  auto& w = *work_;
  const std::size_t steps = batch.steps, full = batch.batch, nb = sl.size, first = sl.first;
  const std::size_t d = options_.input_size, s = options_.static_size;
  const std::size_t h = options_.hidden_size, g = options_.gates(), gh = g * h, layers = options_.layers;
  const auto eb = static_cast<Eigen::Index>(nb), eh = static_cast<Eigen::Index>(h);
  const auto egh = static_cast<Eigen::Index>(gh), etb = static_cast<Eigen::Index>(steps * nb);
  const auto efirst = static_cast<Eigen::Index>(first);

  // The slice's inputs and step mask, time-major steps × n (gathered when the batch has several slices).
  sl.input_data = batch.inputs.data();
  sl.mask_data = batch.mask.empty() ? nullptr : batch.mask.data();
  if (nb != full) {
    ensure_size(sl.inputs, steps * nb, d);
    for (std::size_t t = 0; t < steps; ++t) {
      std::copy_n(batch.inputs.data() + (t * full + first) * d, nb * d, sl.inputs.data() + t * nb * d);
    }
    sl.input_data = sl.inputs.data();
    if (sl.mask_data != nullptr) {
      sl.mask.resize(steps * nb);
      for (std::size_t t = 0; t < steps; ++t) {
        std::copy_n(batch.mask.data() + t * full + first, nb, sl.mask.data() + t * nb);
      }
      sl.mask_data = sl.mask.data();
    }
  }
  const std::uint8_t* mask = sl.mask_data;

  sl.layers.resize(layers);
  for (auto& layer : sl.layers) {
    ensure_size(layer.pre, steps * nb, gh);
    ensure_size(layer.hidden, (steps + 1) * nb, h);
    if (options_.cell == CellType::lstm) ensure_size(layer.cell, (steps + 1) * nb, h);
    if (options_.cell == CellType::gru) ensure_size(layer.recurrent_n, steps * nb, h);
  }
  if (options_.cell == CellType::gru) ensure_size(sl.scratch, nb, gh);
  ensure_size(sl.bias, 1, gh);
  const std::size_t states_per_layer = options_.cell == CellType::lstm ? 2 : 1;

  for (std::size_t l = 0; l < layers; ++l) {
    auto& layer = sl.layers[l];
    const auto& o = w.offsets[l];
    const std::size_t in = l == 0 ? d : h;
    const auto ein = static_cast<Eigen::Index>(in);

    // Layer input (after the dropout mask that applies to it).
    const Mat& in_mask = l == 0 ? w.input_mask : w.output_masks[l - 1];
    const Scalar* source = l == 0 ? sl.input_data : sl.layers[l - 1].hidden.data() + nb * h;
    if (in_mask.size() > 0) {
      ensure_size(layer.input, steps * nb, in);
      CMap src(source, etb, ein);
      const auto rows_mask = in_mask.middleRows(efirst, eb).array();
      for (std::size_t t = 0; t < steps; ++t) {
        const auto rows = static_cast<Eigen::Index>(t * nb);
        layer.input.middleRows(rows, eb).array() = src.middleRows(rows, eb).array() * rows_mask;
      }
      layer.input_data = layer.input.data();
    } else {
      layer.input_data = source;
    }

    // Input projections for all steps in one product: (T·n × D) · (D × G·H), plus both biases (the GRU's b_hn
    // excepted: it sits inside the reset gate) and, for layer 0, the static projection.
    CMap x(layer.input_data, etb, ein);
    CMap w_ih(parameters_.data() + o.input_weights, egh, ein);
    CMap w_hh(parameters_.data() + o.recurrent_weights, egh, eh);
    const Scalar* b_hn = parameters_.data() + o.recurrent_bias + 2 * h;
    sl.bias = CRow(parameters_.data() + o.input_bias, egh) + CRow(parameters_.data() + o.recurrent_bias, egh);
    if (options_.cell == CellType::gru) sl.bias.rightCols(eh) = CRow(parameters_.data() + o.input_bias + 2 * h, eh);
    layer.pre.noalias() = x * w_ih.transpose();
    if (l == 0 && s > 0) {
      // Static inputs: projected once per sequence, added at every step (same as concatenating them to x_t).
      CMap statics(batch.statics.data() + first * s, eb, static_cast<Eigen::Index>(s));
      CMap w_s(parameters_.data() + w.static_weights, egh, static_cast<Eigen::Index>(s));
      ensure_size(sl.static_projection, nb, gh);
      sl.static_projection.noalias() = statics * w_s.transpose();
      sl.static_projection.rowwise() += sl.bias.row(0);
      for (std::size_t t = 0; t < steps; ++t)
        layer.pre.middleRows(static_cast<Eigen::Index>(t * nb), eb) += sl.static_projection;
    } else {
      for (Eigen::Index r = 0; r < etb; ++r) layer.pre.row(r) += sl.bias.row(0);
    }

    // Initial state.
    const std::size_t state_base = l * states_per_layer * full * h;
    if (initial_state_.empty()) {
      layer.hidden.topRows(eb).setZero();
      if (options_.cell == CellType::lstm) layer.cell.topRows(eb).setZero();
    } else {
      layer.hidden.topRows(eb) = CMap(initial_state_.data() + state_base + first * h, eb, eh);
      if (options_.cell == CellType::lstm)
        layer.cell.topRows(eb) = CMap(initial_state_.data() + state_base + (full + first) * h, eb, eh);
    }
    const Mat& recurrent_mask = w.recurrent_masks[l];
    const bool recurrent_drop = recurrent_mask.size() > 0;
    if (recurrent_drop) ensure_size(layer.hidden_dropped, steps * nb, h);

    for (std::size_t t = 0; t < steps; ++t) {
      const auto row = static_cast<Eigen::Index>(t * nb);
      auto h_prev = layer.hidden.middleRows(row, eb);
      auto gates = layer.pre.middleRows(row, eb);
      // Recurrent product on the (possibly dropped) previous state, B × H times H × G·H, accumulated straight into
      // the pre-activations (Elman, LSTM) or into scratch (GRU: its n part is needed apart).
      const auto recurrent_product = [&](auto& target, bool accumulate) {
        if (recurrent_drop) {
          auto dropped = layer.hidden_dropped.middleRows(row, eb);
          dropped.array() = h_prev.array() * recurrent_mask.middleRows(efirst, eb).array();
          if (accumulate) {
            target.noalias() += dropped * w_hh.transpose();
          } else {
            target.noalias() = dropped * w_hh.transpose();
          }
        } else if (accumulate) {
          target.noalias() += h_prev * w_hh.transpose();
        } else {
          target.noalias() = h_prev * w_hh.transpose();
        }
      };
      if (options_.cell == CellType::gru) {
        recurrent_product(sl.scratch, false);
      } else {
        recurrent_product(gates, true);
      }

      // Gate nonlinearities fused per sequence: one pass over a row that sits in L1.
      for (std::size_t b = 0; b < nb; ++b) {
        const std::size_t r = t * nb + b;
        const Scalar* hp = layer.hidden.data() + r * h;
        Scalar* hn = layer.hidden.data() + (r + nb) * h;
        Scalar* a = layer.pre.data() + r * gh;
        if (mask != nullptr && mask[t * nb + b] == 0) {
          // Padded steps keep the previous state (left padding: the state stays at its initial value).
          std::copy_n(hp, h, hn);
          if (options_.cell == CellType::lstm) {
            std::copy_n(layer.cell.data() + r * h, h, layer.cell.data() + (r + nb) * h);
          }
          if (options_.cell == CellType::gru) std::fill_n(layer.recurrent_n.data() + r * h, h, Scalar(0));
          continue;
        }
        switch (options_.cell) {
          case CellType::elman: {
            // h_t = act(W x_t + b_ih + U h̃_{t−1} + b_hh)   (methods-networks.md, eq. E1; torch.nn.RNN)
            Vec act(a, eh);
            if (options_.elman_activation == ElmanActivation::tanh) {
              act = act.tanh();
            } else if (options_.elman_activation == ElmanActivation::relu) {
              act = act.max(Scalar(0));
            }
            Vec(hn, eh) = act;
            break;
          }
          case CellType::lstm: {
            // Hochreiter & Schmidhuber 1997 with forget gate (Gers et al. 2000); gate order i, f, g, o as
            // torch.nn.LSTM (methods-networks.md, eqs. L1–L6).
            Vec if_gates(a, 2 * eh), g_gate(a + 2 * h, eh), o_gate(a + 3 * h, eh);
            if_gates = if_gates.logistic();
            g_gate = g_gate.tanh();
            o_gate = o_gate.logistic();
            Vec c_next(layer.cell.data() + (r + nb) * h, eh);
            c_next = Vec(a + h, eh) * CVec(layer.cell.data() + r * h, eh) + Vec(a, eh) * g_gate;
            Vec(hn, eh) = o_gate * c_next.tanh();
            break;
          }
          case CellType::gru: {
            // Cho et al. 2014 with the reset gate applied after the recurrent product (torch.nn.GRU):
            // r, z = σ(·), n = tanh(W_n x + b_in + r ⊙ (U_n h̃ + b_hn)), h = (1 − z) ⊙ n + z ⊙ h_prev
            // (methods-networks.md, eqs. G1–G4).
            const Scalar* u = sl.scratch.data() + b * gh;
            Vec rz(a, 2 * eh), n_gate(a + 2 * h, eh), rec_n(layer.recurrent_n.data() + r * h, eh);
            rz = (rz + CVec(u, 2 * eh)).logistic();
            rec_n = CVec(u + 2 * h, eh) + CVec(b_hn, eh);
            n_gate = (n_gate + Vec(a, eh) * rec_n).tanh();
            const Vec z_gate(a + h, eh);
            Vec(hn, eh) = (Scalar(1) - z_gate) * n_gate + z_gate * CVec(hp, eh);
            break;
          }
        }
      }
    }
    MapM(final_state_.data() + state_base + first * h, eb, eh) = layer.hidden.bottomRows(eb);
    if (options_.cell == CellType::lstm) {
      MapM(final_state_.data() + state_base + (full + first) * h, eb, eh) = layer.cell.bottomRows(eb);
    }
  }

  // Head on the last state of the top layer (after its output dropout).
  const auto& top = sl.layers.back();
  const std::size_t outputs = options_.horizon * options_.outputs_per_lead();
  const auto eo = static_cast<Eigen::Index>(outputs);
  ensure_size(sl.head_input, nb, h);
  const Mat& out_mask = w.output_masks.back();
  if (out_mask.size() > 0) {
    sl.head_input.array() = top.hidden.bottomRows(eb).array() * out_mask.middleRows(efirst, eb).array();
  } else {
    sl.head_input = top.hidden.bottomRows(eb);
  }
  MapM y(outputs_.data() + first * outputs, eb, eo);
  CMap w_head(parameters_.data() + w.head_weights, eo, eh);
  y.noalias() = sl.head_input * w_head.transpose();
  y.rowwise() += CRow(parameters_.data() + w.head_bias, eo);
}

template <typename Scalar>
void Network<Scalar>::predict(const SequenceBatch<Scalar>& batch, std::span<Scalar> outputs, DropoutMode mode,
                              std::mt19937_64* rng) {
  const std::size_t expected = batch.batch * options_.horizon * options_.outputs_per_lead();
  if (outputs.size() != expected) {
    throw DataError("network predict: outputs has " + std::to_string(outputs.size()) + " values, expected batch × " +
                    "horizon × outputs_per_lead = " + std::to_string(expected));
  }
  const FlushSubnormals flush;
  forward(batch, mode, rng);
  std::copy(outputs_.begin(), outputs_.end(), outputs.begin());
}

// --- Backward (BPTT) ------------------------------------------------------------------------------------------------

template <typename Scalar>
Scalar Network<Scalar>::loss_and_gradient(const SequenceBatch<Scalar>& batch, const Loss& loss, DropoutMode mode,
                                          std::mt19937_64* rng) {
  // Loss must match the head.
  loss.validate();
  {
    std::ostringstream problem;
    const bool squared = loss.type == LossType::squared_sum || loss.type == LossType::squared_mean;
    if (options_.head == HeadType::point && !squared) problem << "head point needs loss squared_sum or squared_mean";
    if (options_.head == HeadType::gaussian && loss.type != LossType::gaussian_nll)
      problem << "head gaussian needs loss gaussian_nll";
    if (options_.head == HeadType::quantile &&
        (loss.type != LossType::pinball || loss.quantile_levels != options_.quantile_levels)) {
      problem << "head quantile needs loss pinball with the same quantile_levels";
    }
    if (!problem.str().empty())
      throw ConfigError("loss " + to_string(loss.type) + " does not fit the network: " + problem.str());
  }
  if (batch.targets.size() != batch.batch * options_.horizon) {
    throw DataError("sequence batch targets has " + std::to_string(batch.targets.size()) + " values, expected batch (" +
                    std::to_string(batch.batch) + ") × horizon (" + std::to_string(options_.horizon) + ")");
  }

  const FlushSubnormals flush;
  forward(batch, mode, rng);
  auto& w = *work_;
  const std::size_t nb = batch.batch, layers = options_.layers;
  const std::size_t outputs = options_.horizon * options_.outputs_per_lead();
  ensure_size(w.d_head, nb, outputs);
  const Scalar value =
      loss_and_output_gradient<Scalar>(loss, outputs_, batch.targets, std::span<Scalar>(w.d_head.data(), nb * outputs));
  input_gradients_.resize(batch.steps * nb * options_.input_size);
  for_each_slice(w.slices, threads_, [&](Slice& slice) { backward_slice(slice, batch); });

  // Sum over slices in slice order (fixed by the batch size), so the result does not depend on the thread count.
  state_gradient_norms_.assign(batch.steps * layers, Scalar(0));
  for (std::size_t k = 0; k < w.slices.size(); ++k) {
    const auto& slice = w.slices[k];
    if (k > 0) {
      for (std::size_t i = 0; i < gradients_.size(); ++i) gradients_[i] += slice.gradients[i];
    }
    for (std::size_t i = 0; i < state_gradient_norms_.size(); ++i) state_gradient_norms_[i] += slice.norms_sq[i];
  }
  for (auto& v : state_gradient_norms_) v = std::sqrt(v);
  return value;
}

template <typename Scalar>
void Network<Scalar>::backward_slice(Slice& sl, const SequenceBatch<Scalar>& batch) {
  using Mat = typename Slice::Mat;
  using CMap = Eigen::Map<const Mat>;
  using MapM = Eigen::Map<Mat>;
  using MapRow = Eigen::Map<Eigen::Matrix<Scalar, 1, Eigen::Dynamic>>;
  using Vec = Eigen::Map<Eigen::Array<Scalar, Eigen::Dynamic, 1>>;
  using CVec = Eigen::Map<const Eigen::Array<Scalar, Eigen::Dynamic, 1>>;
  auto& w = *work_;
  const std::size_t steps = batch.steps, full = batch.batch, nb = sl.size, first = sl.first;
  const std::size_t d = options_.input_size, s = options_.static_size;
  const std::size_t h = options_.hidden_size, g = options_.gates(), gh = g * h, layers = options_.layers;
  const auto eb = static_cast<Eigen::Index>(nb), eh = static_cast<Eigen::Index>(h);
  const auto egh = static_cast<Eigen::Index>(gh), etb = static_cast<Eigen::Index>(steps * nb);
  const auto efirst = static_cast<Eigen::Index>(first);
  const std::size_t outputs = options_.horizon * options_.outputs_per_lead();
  const auto eo = static_cast<Eigen::Index>(outputs);
  const std::uint8_t* mask = sl.mask_data;

  // The first slice writes gradients_ directly; later ones their own buffer, added in slice order by the caller.
  Scalar* grad = gradients_.data();
  if (&sl != &w.slices.front()) {
    sl.gradients.resize(gradients_.size());
    grad = sl.gradients.data();
  }
  std::fill_n(grad, gradients_.size(), Scalar(0));
  sl.norms_sq.assign(steps * layers, Scalar(0));

  // Head: y = x̃ W^T + b, x̃ = h_T ⊙ output mask. d loss / d h_T starts the sweep of the top layer as carry_h.
  const auto d_head = w.d_head.middleRows(efirst, eb);
  CMap w_head(parameters_.data() + w.head_weights, eo, eh);
  MapM(grad + w.head_weights, eo, eh).noalias() = d_head.transpose() * sl.head_input;
  MapRow head_bias(grad + w.head_bias, eo);
  for (Eigen::Index r = 0; r < eb; ++r) head_bias += d_head.row(r);
  ensure_size(sl.dh, nb, h);
  ensure_size(sl.carry_h, nb, h);
  ensure_size(sl.carry_c, nb, h);
  ensure_size(sl.rec, nb, h);
  if (options_.cell == CellType::gru) ensure_size(sl.scratch, nb, gh);
  // Bias gradients as row sums: a plain loop over contiguous rows vectorises, where Eigen's colwise() reduction
  // of a row-major matrix does not (it took ~15% of a training step).
  const auto column_sums = [](const auto& m, Scalar* out) {
    MapRow sums(out, m.cols());
    sums.setZero();
    for (Eigen::Index r = 0; r < m.rows(); ++r) sums += m.row(r);
  };

  for (std::size_t li = layers; li-- > 0;) {
    auto& layer = sl.layers[li];
    const auto& o = w.offsets[li];
    const std::size_t in = li == 0 ? d : h;
    const auto ein = static_cast<Eigen::Index>(in);
    CMap w_ih(parameters_.data() + o.input_weights, egh, ein);
    CMap w_hh(parameters_.data() + o.recurrent_weights, egh, eh);
    const Mat& recurrent_mask = w.recurrent_masks[li];
    const bool recurrent_drop = recurrent_mask.size() > 0;
    const bool top = li + 1 == layers;
    if (top) {
      sl.carry_h.noalias() = d_head * w_head;
      if (w.output_masks.back().size() > 0) sl.carry_h.array() *= w.output_masks.back().middleRows(efirst, eb).array();
    } else {
      sl.carry_h.setZero();
    }
    sl.carry_c.setZero();
    Scalar* norms = sl.norms_sq.data();

    for (std::size_t t = steps; t-- > 0;) {
      const auto row = static_cast<Eigen::Index>(t * nb);
      // dh = d loss / d h_t: from the layer above (lower layers) plus what flows back from step t+1 (carry_h).
      if (top) {
        sl.dh = sl.carry_h;
      } else {
        sl.dh = sl.d_output.middleRows(row, eb) + sl.carry_h;
      }
      norms[t * layers + li] = sl.dh.squaredNorm();
      // Gate derivatives fused per sequence; step t's activations are overwritten in place by d loss / d pre.
      for (std::size_t b = 0; b < nb; ++b) {
        const std::size_t r = t * nb + b;
        Scalar* a = layer.pre.data() + r * gh;
        const CVec dh(sl.dh.data() + b * h, eh);
        const bool padded = mask != nullptr && mask[t * nb + b] == 0;
        if (padded) {
          // A padded step copies the state: its gradient passes to step t−1 unchanged (carry_c stays, carry_h is
          // set to dh after the product below) and nothing reaches the weights.
          std::fill_n(a, gh, Scalar(0));
          if (options_.cell == CellType::gru) {
            std::fill_n(sl.scratch.data() + b * gh, gh, Scalar(0));
            std::fill_n(layer.recurrent_n.data() + r * h, h, Scalar(0));
            std::fill_n(sl.carry_h.data() + b * h, h, Scalar(0));
          }
          continue;
        }
        switch (options_.cell) {
          case CellType::elman: {
            Vec da(a, eh);
            if (options_.elman_activation == ElmanActivation::tanh) {
              da = dh * (Scalar(1) - da.square());
            } else if (options_.elman_activation == ElmanActivation::relu) {
              da = (da > Scalar(0)).select(dh, Scalar(0));
            } else {
              da = dh;
            }
            break;
          }
          case CellType::lstm: {
            Vec ig(a, eh), fg(a + h, eh), gg(a + 2 * h, eh), og(a + 3 * h, eh);
            const CVec c_prev(layer.cell.data() + r * h, eh), c_next(layer.cell.data() + (r + nb) * h, eh);
            Vec tc(sl.rec.data() + b * h, eh), carry_c(sl.carry_c.data() + b * h, eh);
            tc = c_next.tanh();
            // dc = d loss / d c_t (kept in carry_c until the f-gate term has been formed).
            carry_c = carry_c + dh * og * (Scalar(1) - tc.square());
            og = dh * tc * og * (Scalar(1) - og);
            tc = carry_c * gg * ig * (Scalar(1) - ig);  // d(pre i), parked while i and g are still needed
            gg = carry_c * ig * (Scalar(1) - gg.square());
            ig = tc;
            tc = carry_c * c_prev * fg * (Scalar(1) - fg);  // d(pre f)
            carry_c = carry_c * fg;                         // d loss / d c_{t−1}
            fg = tc;
            break;
          }
          case CellType::gru: {
            Vec rg(a, eh), zg(a + h, eh), ng(a + 2 * h, eh), rec_n(layer.recurrent_n.data() + r * h, eh);
            Vec dr_rz(sl.scratch.data() + b * gh, 2 * eh), dr_n(sl.scratch.data() + b * gh + 2 * h, eh);
            // dn = dh ⊙ (1 − z), dz = dh ⊙ (h_prev − n); d(pre n) = dn ⊙ (1 − n²); d(U_n h̃ + b_hn) = d(pre n) ⊙ r;
            // d(pre r) = d(pre n) ⊙ (U_n h̃ + b_hn) ⊙ r(1 − r). carry_h collects the z ⊙ h_prev path, which
            // bypasses U. The recurrent-side gradient [d(pre r), d(pre z), d(U_n h̃ + b_hn)] goes to scratch.
            const CVec hp(layer.hidden.data() + r * h, eh);
            Vec(sl.carry_h.data() + b * h, eh) = dh * zg;
            dr_n = dh * (Scalar(1) - zg) * (Scalar(1) - ng.square());  // d(pre n), parked
            zg = dh * (hp - ng) * zg * (Scalar(1) - zg);
            ng = dr_n;
            rec_n = dr_n * rec_n;
            dr_n = dr_n * rg;
            rg = rec_n * rg * (Scalar(1) - rg);
            rec_n = dr_n;
            dr_rz = Vec(a, 2 * eh);
            break;
          }
        }
      }
      // d loss / d h_{t−1} through the recurrent product (masked by the recurrent dropout mask).
      const auto d_rec_t = layer.pre.middleRows(row, eb);
      const auto recurrent_gradient = [&](const auto& d_rec, bool accumulate) {
        if (recurrent_drop) {
          sl.rec.noalias() = d_rec * w_hh;
          if (accumulate) {
            sl.carry_h.array() += sl.rec.array() * recurrent_mask.middleRows(efirst, eb).array();
          } else {
            sl.carry_h.array() = sl.rec.array() * recurrent_mask.middleRows(efirst, eb).array();
          }
        } else if (accumulate) {
          sl.carry_h.noalias() += d_rec * w_hh;
        } else {
          sl.carry_h.noalias() = d_rec * w_hh;
        }
      };
      if (options_.cell == CellType::gru) {
        recurrent_gradient(sl.scratch, true);
      } else {
        recurrent_gradient(d_rec_t, false);
      }
      if (mask != nullptr) {
        for (std::size_t b = 0; b < nb; ++b) {
          if (mask[t * nb + b] == 0)
            sl.carry_h.row(static_cast<Eigen::Index>(b)) = sl.dh.row(static_cast<Eigen::Index>(b));
        }
      }
    }

    // Weight gradients: one product over all steps each (pre now holds d loss / d pre-activations).
    CMap x(layer.input_data, etb, ein);
    MapM(grad + o.input_weights, egh, ein).noalias() = layer.pre.transpose() * x;
    column_sums(layer.pre, grad + o.input_bias);
    const auto recurrent_weight_gradient = [&](const auto& h_prev_all) {
      if (options_.cell == CellType::gru) {
        // r and z: the input-side gradient; n: d(U_n h̃ + b_hn), kept in recurrent_n.
        MapM(grad + o.recurrent_weights, 2 * eh, eh).noalias() = layer.pre.leftCols(2 * eh).transpose() * h_prev_all;
        MapM(grad + o.recurrent_weights + 2 * h * h, eh, eh).noalias() = layer.recurrent_n.transpose() * h_prev_all;
      } else {
        MapM(grad + o.recurrent_weights, egh, eh).noalias() = layer.pre.transpose() * h_prev_all;
      }
    };
    if (recurrent_drop) {
      recurrent_weight_gradient(layer.hidden_dropped);
    } else {
      recurrent_weight_gradient(layer.hidden.topRows(etb));
    }
    // For Elman and LSTM the input-side and recurrent-side pre-activation gradients are equal; only the GRU's
    // reset gate (applied after U_n h̃) separates them, in its n part.
    if (options_.cell == CellType::gru) {
      std::copy_n(grad + o.input_bias, 2 * h, grad + o.recurrent_bias);
      column_sums(layer.recurrent_n, grad + o.recurrent_bias + 2 * h);
    } else {
      std::copy_n(grad + o.input_bias, gh, grad + o.recurrent_bias);
    }
    if (li == 0 && s > 0) {
      ensure_size(sl.static_gate_sums, nb, gh);
      sl.static_gate_sums.setZero();
      for (std::size_t t = 0; t < steps; ++t)
        sl.static_gate_sums += layer.pre.middleRows(static_cast<Eigen::Index>(t * nb), eb);
      CMap statics(batch.statics.data() + first * s, eb, static_cast<Eigen::Index>(s));
      MapM(grad + w.static_weights, egh, static_cast<Eigen::Index>(s)).noalias() =
          sl.static_gate_sums.transpose() * statics;
    }

    // Gradient wrt this layer's input: one product (T·n × G·H) · (G·H × D_l), then through its dropout mask.
    ensure_size(sl.d_input, steps * nb, in);
    sl.d_input.noalias() = layer.pre * w_ih;
    const Mat& in_mask = li == 0 ? w.input_mask : w.output_masks[li - 1];
    if (in_mask.size() > 0) {
      const auto rows_mask = in_mask.middleRows(efirst, eb).array();
      for (std::size_t t = 0; t < steps; ++t) {
        sl.d_input.middleRows(static_cast<Eigen::Index>(t * nb), eb).array() *= rows_mask;
      }
    }
    if (li > 0) std::swap(sl.d_output, sl.d_input);
  }
  for (std::size_t t = 0; t < steps; ++t) {
    std::copy_n(sl.d_input.data() + t * nb * d, nb * d, input_gradients_.data() + (t * full + first) * d);
  }
}

template class Network<float>;
template class Network<double>;

}  // namespace libseq::nn
