#include "libseq/nn/network.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>

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

}  // namespace

template <typename Scalar>
struct Network<Scalar>::Workspace {
  using Mat = Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

  struct Offsets {
    std::size_t input_weights, recurrent_weights, input_bias, recurrent_bias;
  };
  std::vector<Offsets> offsets;
  std::size_t static_weights = 0, head_weights = 0, head_bias = 0;

  struct Layer {
    Mat pre;             // T·B × G·H: input projection + biases, then the gate activations of each step
    Mat hidden;          // (T+1)·B × H: rows [0,B) the initial state, rows [(t+1)B, (t+2)B) h_t
    Mat cell;            // LSTM: (T+1)·B × H, like hidden
    Mat recurrent_n;     // GRU: T·B × H, U_n h̃_{t−1} + b_hn (needed by the reset-gate derivative)
    Mat hidden_dropped;  // T·B × H: h̃_{t−1} = h_{t−1} ⊙ recurrent mask (only with recurrent dropout)
    Mat input;           // T·B × D_l: dropped layer input (only when a dropout mask applies to it)
    Mat recurrent_mask;  // B × H (empty = no recurrent dropout this pass)
    Mat output_mask;     // B × H (empty = no output dropout this pass)
    const Scalar* input_data = nullptr;  // the layer input actually used, T·B × D_l row-major
  };
  std::vector<Layer> layers;
  Mat input_mask;                // B × D (empty = no input dropout this pass)
  Mat static_projection;         // B × G·H
  Mat recurrent;                 // B × G·H scratch: U h̃_{t−1} + b_hh
  Mat d_pre, d_recurrent;        // T·B × G·H: d loss / d (input side), d (recurrent side) pre-activations
  Mat d_output, d_input;         // T·B × H, T·B × max(D, H): gradient wrt a layer's outputs / inputs
  Mat dh, dc, carry_h, carry_c;  // B × H
  Mat head_input, d_head;        // B × H, B × outputs
  Mat static_gate_sums;          // B × G·H
  std::size_t steps = 0, batch = 0;
  bool dropout_active = false;
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
    if (options_.cell == CellType::lstm) {
      for (std::size_t j = 0; j < h; ++j) parameters_[o.input_bias + h + j] = Scalar(1);
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
  for (const auto& layer : w.layers) {
    add(layer.pre);
    add(layer.hidden);
    add(layer.cell);
    add(layer.recurrent_n);
    add(layer.hidden_dropped);
    add(layer.input);
    add(layer.recurrent_mask);
    add(layer.output_mask);
  }
  for (const auto* m :
       {&w.input_mask, &w.static_projection, &w.recurrent, &w.d_pre, &w.d_recurrent, &w.d_output, &w.d_input, &w.dh,
        &w.dc, &w.carry_h, &w.carry_c, &w.head_input, &w.d_head, &w.static_gate_sums}) {
    add(*m);
  }
  return count * sizeof(Scalar);
}

template <typename Scalar>
std::span<const Scalar> Network<Scalar>::top_states() const {
  const auto& layer = work_->layers.back();
  const std::size_t b = work_->batch, h = options_.hidden_size;
  return {layer.hidden.data() + b * h, work_->steps * b * h};
}

// --- Forward --------------------------------------------------------------------------------------------------------

template <typename Scalar>
void Network<Scalar>::forward(const SequenceBatch<Scalar>& batch, DropoutMode mode, std::mt19937_64* rng) {
  using Mat = typename Workspace::Mat;
  using CMap = Eigen::Map<const Mat>;
  using MapM = Eigen::Map<Mat>;
  using CRow = Eigen::Map<const Eigen::Matrix<Scalar, 1, Eigen::Dynamic>>;
  auto& w = *work_;
  const std::size_t steps = batch.steps, nb = batch.batch, d = options_.input_size, s = options_.static_size;
  const std::size_t h = options_.hidden_size, g = options_.gates(), gh = g * h, layers = options_.layers;
  const auto eb = static_cast<Eigen::Index>(nb), eh = static_cast<Eigen::Index>(h);
  const auto egh = static_cast<Eigen::Index>(gh);

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

  // (Re)size workspaces only when the shape changes, so repeated calls on one shape allocate nothing.
  w.layers.resize(layers);
  const auto ensure = [](Mat& m, std::size_t rows, std::size_t cols) {
    if (static_cast<std::size_t>(m.rows()) != rows || static_cast<std::size_t>(m.cols()) != cols) {
      m.resize(static_cast<Eigen::Index>(rows), static_cast<Eigen::Index>(cols));
    }
  };
  for (auto& layer : w.layers) {
    ensure(layer.pre, steps * nb, gh);
    ensure(layer.hidden, (steps + 1) * nb, h);
    if (options_.cell == CellType::lstm) ensure(layer.cell, (steps + 1) * nb, h);
    if (options_.cell == CellType::gru) ensure(layer.recurrent_n, steps * nb, h);
  }
  ensure(w.recurrent, nb, gh);
  w.steps = steps;
  w.batch = nb;

  // Variational dropout masks (Gal & Ghahramani 2016): one Bernoulli mask per sequence and unit, reused at
  // every step; inverted scaling by 1/(1−p) so that no rescaling is needed without dropout.
  const bool sample = mode == DropoutMode::sample;
  const auto draw = [&](Mat& mask, std::size_t cols, double p) {
    if (!sample || p <= 0.0) {
      mask.resize(0, 0);
      return;
    }
    ensure(mask, nb, cols);
    const auto keep_scale = static_cast<Scalar>(1.0 / (1.0 - p));
    for (Eigen::Index i = 0; i < mask.size(); ++i) mask.data()[i] = uniform01(*rng) < p ? Scalar(0) : keep_scale;
  };
  draw(w.input_mask, d, options_.input_dropout);
  for (auto& layer : w.layers) {
    draw(layer.recurrent_mask, h, options_.recurrent_dropout);
    draw(layer.output_mask, h, options_.output_dropout);
  }

  const std::uint8_t* mask = batch.mask.empty() ? nullptr : batch.mask.data();
  const std::size_t states_per_layer = options_.cell == CellType::lstm ? 2 : 1;
  final_state_.resize(state_size(nb));

  for (std::size_t l = 0; l < layers; ++l) {
    auto& layer = w.layers[l];
    const auto& o = w.offsets[l];
    const std::size_t in = l == 0 ? d : h;
    const auto ein = static_cast<Eigen::Index>(in);

    // Layer input (after the dropout mask that applies to it).
    const Mat* in_mask = l == 0 ? &w.input_mask : &w.layers[l - 1].output_mask;
    const Scalar* source = l == 0 ? batch.inputs.data() : w.layers[l - 1].hidden.data() + nb * h;
    if (in_mask->size() > 0) {
      ensure(layer.input, steps * nb, in);
      CMap src(source, static_cast<Eigen::Index>(steps * nb), ein);
      for (std::size_t t = 0; t < steps; ++t) {
        const auto rows = static_cast<Eigen::Index>(t * nb);
        layer.input.middleRows(rows, eb).array() = src.middleRows(rows, eb).array() * in_mask->array();
      }
      layer.input_data = layer.input.data();
    } else {
      layer.input_data = source;
    }

    // Input projections for all steps in one product: (T·B × D) · (D × G·H), plus the input bias.
    CMap x(layer.input_data, static_cast<Eigen::Index>(steps * nb), ein);
    CMap w_ih(parameters_.data() + o.input_weights, egh, ein);
    CMap w_hh(parameters_.data() + o.recurrent_weights, egh, eh);
    CRow b_ih(parameters_.data() + o.input_bias, egh);
    CRow b_hh(parameters_.data() + o.recurrent_bias, egh);
    layer.pre.noalias() = x * w_ih.transpose();
    layer.pre.rowwise() += b_ih;
    if (l == 0 && s > 0) {
      // Static inputs: projected once per sequence, added at every step (same as concatenating them to x_t).
      CMap statics(batch.statics.data(), eb, static_cast<Eigen::Index>(s));
      CMap w_s(parameters_.data() + w.static_weights, egh, static_cast<Eigen::Index>(s));
      ensure(w.static_projection, nb, gh);
      w.static_projection.noalias() = statics * w_s.transpose();
      for (std::size_t t = 0; t < steps; ++t)
        layer.pre.middleRows(static_cast<Eigen::Index>(t * nb), eb) += w.static_projection;
    }

    // Initial state.
    const std::size_t state_base = l * states_per_layer * nb * h;
    if (initial_state_.empty()) {
      layer.hidden.topRows(eb).setZero();
      if (options_.cell == CellType::lstm) layer.cell.topRows(eb).setZero();
    } else {
      layer.hidden.topRows(eb) = CMap(initial_state_.data() + state_base, eb, eh);
      if (options_.cell == CellType::lstm)
        layer.cell.topRows(eb) = CMap(initial_state_.data() + state_base + nb * h, eb, eh);
    }
    const bool recurrent_drop = layer.recurrent_mask.size() > 0;
    if (recurrent_drop) ensure(layer.hidden_dropped, steps * nb, h);

    for (std::size_t t = 0; t < steps; ++t) {
      const auto row = static_cast<Eigen::Index>(t * nb);
      auto h_prev = layer.hidden.middleRows(row, eb);
      auto h_next = layer.hidden.middleRows(row + eb, eb);
      auto gates = layer.pre.middleRows(row, eb);
      // Recurrent product on the (possibly dropped) previous state: B × H times H × G·H.
      if (recurrent_drop) {
        auto dropped = layer.hidden_dropped.middleRows(row, eb);
        dropped.array() = h_prev.array() * layer.recurrent_mask.array();
        w.recurrent.noalias() = dropped * w_hh.transpose();
      } else {
        w.recurrent.noalias() = h_prev * w_hh.transpose();
      }
      w.recurrent.rowwise() += b_hh;

      switch (options_.cell) {
        case CellType::elman: {
          // h_t = act(W x_t + b_ih + U h̃_{t−1} + b_hh)   (methods-networks.md, eq. E1; torch.nn.RNN)
          gates += w.recurrent;
          if (options_.elman_activation == ElmanActivation::tanh) {
            gates.array() = gates.array().tanh();
          } else if (options_.elman_activation == ElmanActivation::relu) {
            gates.array() = gates.array().max(Scalar(0));
          }
          h_next = gates;
          break;
        }
        case CellType::lstm: {
          // Hochreiter & Schmidhuber 1997 with forget gate (Gers et al. 2000); gate order i, f, g, o as torch.nn.LSTM
          // (methods-networks.md, eqs. L1–L6).
          gates += w.recurrent;
          gates.leftCols(2 * eh).array() = gates.leftCols(2 * eh).array().logistic();
          gates.middleCols(2 * eh, eh).array() = gates.middleCols(2 * eh, eh).array().tanh();
          gates.rightCols(eh).array() = gates.rightCols(eh).array().logistic();
          auto c_prev = layer.cell.middleRows(row, eb);
          auto c_next = layer.cell.middleRows(row + eb, eb);
          c_next.array() = gates.middleCols(eh, eh).array() * c_prev.array() +
                           gates.leftCols(eh).array() * gates.middleCols(2 * eh, eh).array();
          h_next.array() = gates.rightCols(eh).array() * c_next.array().tanh();
          break;
        }
        case CellType::gru: {
          // Cho et al. 2014 with the reset gate applied after the recurrent product (torch.nn.GRU):
          // r, z = σ(·), n = tanh(W_n x + b_in + r ⊙ (U_n h̃ + b_hn)), h = (1 − z) ⊙ n + z ⊙ h_prev
          // (methods-networks.md, eqs. G1–G4).
          gates.leftCols(2 * eh).array() =
              (gates.leftCols(2 * eh).array() + w.recurrent.leftCols(2 * eh).array()).logistic();
          auto rec_n = layer.recurrent_n.middleRows(row, eb);
          rec_n = w.recurrent.rightCols(eh);
          gates.rightCols(eh).array() =
              (gates.rightCols(eh).array() + gates.leftCols(eh).array() * rec_n.array()).tanh();
          h_next.array() = (Scalar(1) - gates.middleCols(eh, eh).array()) * gates.rightCols(eh).array() +
                           gates.middleCols(eh, eh).array() * h_prev.array();
          break;
        }
      }
      // Padded steps keep the previous state (left padding: the state stays at its initial value).
      if (mask != nullptr) {
        for (std::size_t b = 0; b < nb; ++b) {
          if (mask[t * nb + b] != 0) continue;
          const auto eb_i = static_cast<Eigen::Index>(b);
          h_next.row(eb_i) = h_prev.row(eb_i);
          if (options_.cell == CellType::lstm) {
            layer.cell.row(row + eb + eb_i) = layer.cell.row(row + eb_i);
          }
        }
      }
    }
    MapM(final_state_.data() + state_base, eb, eh) = layer.hidden.bottomRows(eb);
    if (options_.cell == CellType::lstm) {
      MapM(final_state_.data() + state_base + nb * h, eb, eh) = layer.cell.bottomRows(eb);
    }
  }

  // Head on the last state of the top layer (after its output dropout).
  const auto& top = w.layers.back();
  const std::size_t outputs = options_.horizon * options_.outputs_per_lead();
  const auto eo = static_cast<Eigen::Index>(outputs);
  ensure(w.head_input, nb, h);
  if (top.output_mask.size() > 0) {
    w.head_input.array() = top.hidden.bottomRows(eb).array() * top.output_mask.array();
  } else {
    w.head_input = top.hidden.bottomRows(eb);
  }
  outputs_.resize(nb * outputs);
  MapM y(outputs_.data(), eb, eo);
  CMap w_head(parameters_.data() + w.head_weights, eo, eh);
  y.noalias() = w.head_input * w_head.transpose();
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
  using Mat = typename Workspace::Mat;
  using CMap = Eigen::Map<const Mat>;
  using MapM = Eigen::Map<Mat>;
  using MapRow = Eigen::Map<Eigen::Matrix<Scalar, 1, Eigen::Dynamic>>;

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
  const std::size_t steps = batch.steps, nb = batch.batch, d = options_.input_size, s = options_.static_size;
  const std::size_t h = options_.hidden_size, g = options_.gates(), gh = g * h, layers = options_.layers;
  const auto eb = static_cast<Eigen::Index>(nb), eh = static_cast<Eigen::Index>(h);
  const auto egh = static_cast<Eigen::Index>(gh), etb = static_cast<Eigen::Index>(steps * nb);
  const std::size_t outputs = options_.horizon * options_.outputs_per_lead();
  const auto eo = static_cast<Eigen::Index>(outputs);
  const auto ensure = [](Mat& m, std::size_t rows, std::size_t cols) {
    if (static_cast<std::size_t>(m.rows()) != rows || static_cast<std::size_t>(m.cols()) != cols) {
      m.resize(static_cast<Eigen::Index>(rows), static_cast<Eigen::Index>(cols));
    }
  };

  ensure(w.d_head, nb, outputs);
  const Scalar value =
      loss_and_output_gradient<Scalar>(loss, outputs_, batch.targets, std::span<Scalar>(w.d_head.data(), nb * outputs));
  std::fill(gradients_.begin(), gradients_.end(), Scalar(0));

  // Head: y = x̃ W^T + b, x̃ = h_T ⊙ output mask.
  CMap w_head(parameters_.data() + w.head_weights, eo, eh);
  MapM(gradients_.data() + w.head_weights, eo, eh).noalias() = w.d_head.transpose() * w.head_input;
  MapRow(gradients_.data() + w.head_bias, eo) = w.d_head.colwise().sum();
  ensure(w.d_output, steps * nb, h);
  w.d_output.setZero();
  auto d_last = w.d_output.bottomRows(eb);
  d_last.noalias() = w.d_head * w_head;
  if (w.layers.back().output_mask.size() > 0) d_last.array() *= w.layers.back().output_mask.array();

  ensure(w.d_pre, steps * nb, gh);
  if (options_.cell == CellType::gru) ensure(w.d_recurrent, steps * nb, gh);
  ensure(w.dh, nb, h);
  ensure(w.dc, nb, h);
  ensure(w.carry_h, nb, h);
  ensure(w.carry_c, nb, h);
  state_gradient_norms_.assign(steps * layers, Scalar(0));
  const std::uint8_t* mask = batch.mask.empty() ? nullptr : batch.mask.data();

  for (std::size_t li = layers; li-- > 0;) {
    auto& layer = w.layers[li];
    const auto& o = w.offsets[li];
    const std::size_t in = li == 0 ? d : h;
    const auto ein = static_cast<Eigen::Index>(in);
    CMap w_ih(parameters_.data() + o.input_weights, egh, ein);
    CMap w_hh(parameters_.data() + o.recurrent_weights, egh, eh);
    const bool recurrent_drop = layer.recurrent_mask.size() > 0;
    // For Elman and LSTM the input-side and recurrent-side pre-activation gradients are equal; only the GRU's
    // reset gate (applied after U_n h) separates them.
    Mat& d_rec = options_.cell == CellType::gru ? w.d_recurrent : w.d_pre;
    w.carry_h.setZero();
    w.carry_c.setZero();

    for (std::size_t t = steps; t-- > 0;) {
      const auto row = static_cast<Eigen::Index>(t * nb);
      auto gates = layer.pre.middleRows(row, eb);
      auto h_prev = layer.hidden.middleRows(row, eb);
      auto da = w.d_pre.middleRows(row, eb);
      w.dh = w.d_output.middleRows(row, eb) + w.carry_h;
      state_gradient_norms_[t * layers + li] = w.dh.norm();
      // carry_h collects d loss / d h_{t−1} terms that do not pass through U (GRU's z ⊙ h_prev path).
      switch (options_.cell) {
        case CellType::elman: {
          if (options_.elman_activation == ElmanActivation::tanh) {
            da.array() = w.dh.array() * (Scalar(1) - gates.array().square());
          } else if (options_.elman_activation == ElmanActivation::relu) {
            da.array() = (gates.array() > Scalar(0)).select(w.dh.array(), Scalar(0));
          } else {
            da = w.dh;
          }
          w.carry_h.setZero();
          break;
        }
        case CellType::lstm: {
          auto c_prev = layer.cell.middleRows(row, eb);
          auto c_next = layer.cell.middleRows(row + eb, eb);
          const auto ig = gates.leftCols(eh).array();
          const auto fg = gates.middleCols(eh, eh).array();
          const auto gg = gates.middleCols(2 * eh, eh).array();
          const auto og = gates.rightCols(eh).array();
          // Reuse carry_h as scratch for tanh(c_t).
          w.carry_h.array() = c_next.array().tanh();
          w.dc.array() = w.carry_c.array() + w.dh.array() * og * (Scalar(1) - w.carry_h.array().square());
          if (mask != nullptr) {
            // A padded step copies c_{t−1} to c_t: its cell gradient passes through unchanged.
            for (std::size_t b = 0; b < nb; ++b) {
              if (mask[t * nb + b] == 0)
                w.dc.row(static_cast<Eigen::Index>(b)) = w.carry_c.row(static_cast<Eigen::Index>(b));
            }
          }
          da.rightCols(eh).array() = w.dh.array() * w.carry_h.array() * og * (Scalar(1) - og);
          da.leftCols(eh).array() = w.dc.array() * gg * ig * (Scalar(1) - ig);
          da.middleCols(eh, eh).array() = w.dc.array() * c_prev.array() * fg * (Scalar(1) - fg);
          da.middleCols(2 * eh, eh).array() = w.dc.array() * ig * (Scalar(1) - gg.square());
          w.carry_c.array() = w.dc.array() * fg;
          w.carry_h.setZero();
          break;
        }
        case CellType::gru: {
          auto dr = w.d_recurrent.middleRows(row, eb);
          auto rec_n = layer.recurrent_n.middleRows(row, eb);
          const auto rg = gates.leftCols(eh).array();
          const auto zg = gates.middleCols(eh, eh).array();
          const auto ng = gates.rightCols(eh).array();
          // dn = dh ⊙ (1 − z), dz = dh ⊙ (h_prev − n); d(pre n) = dn ⊙ (1 − n²); d(U_n h) = d(pre n) ⊙ r.
          da.rightCols(eh).array() = w.dh.array() * (Scalar(1) - zg) * (Scalar(1) - ng.square());
          da.middleCols(eh, eh).array() = w.dh.array() * (h_prev.array() - ng) * zg * (Scalar(1) - zg);
          da.leftCols(eh).array() = da.rightCols(eh).array() * rec_n.array() * rg * (Scalar(1) - rg);
          dr.leftCols(2 * eh) = da.leftCols(2 * eh);
          dr.rightCols(eh).array() = da.rightCols(eh).array() * rg;
          w.carry_h.array() = w.dh.array() * zg;
          break;
        }
      }
      if (mask != nullptr) {
        for (std::size_t b = 0; b < nb; ++b) {
          if (mask[t * nb + b] != 0) continue;
          const auto eb_i = static_cast<Eigen::Index>(b);
          da.row(eb_i).setZero();
          if (options_.cell == CellType::gru) w.d_recurrent.row(row + eb_i).setZero();
          if (options_.cell == CellType::lstm) w.carry_c.row(eb_i) = w.dc.row(eb_i);
        }
      }
      // d loss / d h_{t−1} through the recurrent product (masked by the recurrent dropout mask).
      auto d_rec_t = d_rec.middleRows(row, eb);
      if (recurrent_drop) {
        w.dc.noalias() = d_rec_t * w_hh;  // dc is free here: reuse as scratch
        w.carry_h.array() += w.dc.array() * layer.recurrent_mask.array();
      } else {
        w.carry_h.noalias() += d_rec_t * w_hh;
      }
      if (mask != nullptr) {
        for (std::size_t b = 0; b < nb; ++b) {
          if (mask[t * nb + b] == 0)
            w.carry_h.row(static_cast<Eigen::Index>(b)) = w.dh.row(static_cast<Eigen::Index>(b));
        }
      }
    }

    // Weight gradients: one product over all steps each.
    CMap x(layer.input_data, etb, ein);
    MapM(gradients_.data() + o.input_weights, egh, ein).noalias() = w.d_pre.transpose() * x;
    // Bias gradients as row sums: a plain loop over contiguous rows vectorises, where Eigen's colwise() reduction
    // of a row-major matrix does not (it took ~15% of a training step).
    const auto column_sums = [&](const Mat& m, Scalar* out) {
      MapRow sums(out, m.cols());
      sums.setZero();
      for (Eigen::Index r = 0; r < m.rows(); ++r) sums += m.row(r);
    };
    column_sums(w.d_pre, gradients_.data() + o.input_bias);
    if (recurrent_drop) {
      MapM(gradients_.data() + o.recurrent_weights, egh, eh).noalias() = d_rec.transpose() * layer.hidden_dropped;
    } else {
      MapM(gradients_.data() + o.recurrent_weights, egh, eh).noalias() = d_rec.transpose() * layer.hidden.topRows(etb);
    }
    if (&d_rec == &w.d_pre) {
      std::copy_n(gradients_.data() + o.input_bias, gh, gradients_.data() + o.recurrent_bias);
    } else {
      column_sums(d_rec, gradients_.data() + o.recurrent_bias);
    }
    if (li == 0 && s > 0) {
      ensure(w.static_gate_sums, nb, gh);
      w.static_gate_sums.setZero();
      for (std::size_t t = 0; t < steps; ++t)
        w.static_gate_sums += w.d_pre.middleRows(static_cast<Eigen::Index>(t * nb), eb);
      CMap statics(batch.statics.data(), eb, static_cast<Eigen::Index>(s));
      MapM(gradients_.data() + w.static_weights, egh, static_cast<Eigen::Index>(s)).noalias() =
          w.static_gate_sums.transpose() * statics;
    }

    // Gradient wrt this layer's input: one product (T·B × G·H) · (G·H × D_l), then through its dropout mask.
    ensure(w.d_input, steps * nb, in);
    w.d_input.noalias() = w.d_pre * w_ih;
    const Mat& in_mask = li == 0 ? w.input_mask : w.layers[li - 1].output_mask;
    if (in_mask.size() > 0) {
      for (std::size_t t = 0; t < steps; ++t) {
        w.d_input.middleRows(static_cast<Eigen::Index>(t * nb), eb).array() *= in_mask.array();
      }
    }
    if (li > 0) std::swap(w.d_output, w.d_input);
  }
  input_gradients_.assign(w.d_input.data(), w.d_input.data() + steps * nb * d);
  return value;
}

template class Network<float>;
template class Network<double>;

}  // namespace libseq::nn
