#include "libseq/train/trainer.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <limits>
#include <numeric>
#include <random>
#include <sstream>

#include "libseq/error.hpp"

namespace libseq::train {

std::string to_string(BpttMode mode) { return mode == BpttMode::full ? "full" : "truncated"; }

BpttMode parse_bptt_mode(std::string_view text, std::string_view key) {
  if (text == "full") return BpttMode::full;
  if (text == "truncated") return BpttMode::truncated;
  throw ConfigError(std::string(key) + " = '" + std::string(text) + "': expected one of full, truncated");
}

std::string to_string(TerminationReason reason) {
  switch (reason) {
    case TerminationReason::max_epochs: return "max_epochs";
    case TerminationReason::early_stopped: return "early_stopped";
    case TerminationReason::diverged: return "diverged";
    case TerminationReason::no_data: return "no_data";
  }
  return "unknown";
}

TerminationReason parse_termination_reason(std::string_view text, std::string_view key) {
  for (auto reason : {TerminationReason::max_epochs, TerminationReason::early_stopped, TerminationReason::diverged,
                      TerminationReason::no_data}) {
    if (text == to_string(reason)) return reason;
  }
  throw ConfigError(std::string(key) + " = '" + std::string(text) +
                    "': expected one of max_epochs, early_stopped, diverged, no_data");
}

void TrainOptions::validate() const {
  std::ostringstream problems;
  auto collect = [&](auto&& check) {
    try {
      check();
    } catch (const ConfigError& e) {
      problems << "\n  " << e.what();
    }
  };
  if (epochs < 1) problems << "\n  train.epochs = " << epochs << ": expected an integer >= 1";
  if (batch_size < 1) problems << "\n  train.batch_size = " << batch_size << ": expected an integer >= 1";
  if (bptt == BpttMode::truncated) {
    if (bptt_window < 1) problems << "\n  train.bptt_window = " << bptt_window << ": expected >= 1 for truncated BPTT";
    if (bptt_stride > bptt_window) {
      problems << "\n  train.bptt_stride = " << bptt_stride << ": expected 0 (= window) or 1.." << bptt_window;
    }
  }
  if (!(std::isfinite(clip_norm) && clip_norm >= 0)) {
    problems << "\n  train.clip_norm = " << clip_norm << ": expected a finite value >= 0 (0 = no clipping)";
  }
  collect([&] { loss.validate(); });
  collect([&] { optimizer.validate(); });
  collect([&] { schedule.validate(); });
  collect([&] { early_stopping.validate(); });
  const std::string text = problems.str();
  if (!text.empty()) throw ConfigError("invalid training options:" + text);
}

namespace {

// SplitMix64 (Steele, Lea & Flood 2014): independent, platform-independent sub-seeds from one member seed.
std::uint64_t derive_seed(std::uint64_t seed, std::uint64_t stream) {
  std::uint64_t z = seed + 0x9e3779b97f4a7c15ULL * (stream + 1);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

// Fisher–Yates shuffle (Knuth, TAOCP vol. 2, Algorithm 3.4.2P) with our own index draw, because std::shuffle's
// use of the generator is implementation-defined and would make orders differ between standard libraries.
void shuffle_indices(std::vector<std::size_t>& order, std::mt19937_64& rng) {
  for (std::size_t i = order.size(); i > 1; --i) {
    // A 64-bit draw reduced modulo i: the modulo bias is below i / 2^64, negligible for any data set size.
    const auto j = static_cast<std::size_t>(rng() % static_cast<std::uint64_t>(i));
    std::swap(order[i - 1], order[j]);
  }
}

template <typename Scalar>
std::size_t present_targets(const std::vector<Scalar>& targets) {
  return static_cast<std::size_t>(std::count_if(targets.begin(), targets.end(), [](Scalar v) { return !std::isnan(v); }));
}

template <typename Scalar>
void check_source(const nn::NetworkOptions& net, const SequenceSource<Scalar>& source, const char* role) {
  std::ostringstream problems;
  if (source.input_size() != net.input_size) {
    problems << " input_size " << source.input_size() << " (network expects " << net.input_size << ");";
  }
  if (source.static_size() != net.static_size) {
    problems << " static_size " << source.static_size() << " (network expects " << net.static_size << ");";
  }
  if (source.horizon() != net.horizon) {
    problems << " horizon " << source.horizon() << " (network expects " << net.horizon << ");";
  }
  if (source.steps() == 0) problems << " no steps per sequence;";
  const std::string text = problems.str();
  if (!text.empty()) throw DataError(std::string("trainer: the ") + role + " sequences have" + text);
}

// Steps [first, last) of a time-major batch.
template <typename Scalar>
void slice_steps(const nn::SequenceBatch<Scalar>& batch, std::size_t input_size, std::size_t first, std::size_t last,
                 nn::SequenceBatch<Scalar>& chunk) {
  const std::size_t b = batch.batch;
  chunk.steps = last - first;
  chunk.batch = b;
  chunk.inputs.assign(batch.inputs.begin() + static_cast<std::ptrdiff_t>(first * b * input_size),
                      batch.inputs.begin() + static_cast<std::ptrdiff_t>(last * b * input_size));
  chunk.statics = batch.statics;
  if (batch.mask.empty()) {
    chunk.mask.clear();
  } else {
    chunk.mask.assign(batch.mask.begin() + static_cast<std::ptrdiff_t>(first * b),
                      batch.mask.begin() + static_cast<std::ptrdiff_t>(last * b));
  }
}

// Running statistics of one epoch.
struct EpochTally {
  double loss_sum = 0.0;
  double loss_weight = 0.0;
  double norm_sum = 0.0;
  double norm_max = 0.0;
  std::size_t updates = 0;
  std::size_t clipped = 0;
};

// Combines batch losses into the epoch loss: mean losses are weighted by their non-missing target count, the
// squared_sum loss is summed.
double combine(const nn::Loss& loss, double value, std::size_t targets) {
  return loss.type == nn::LossType::squared_sum ? value : value * static_cast<double>(targets);
}

template <typename Scalar>
class Run {
 public:
  Run(const TrainOptions& options, nn::Network<Scalar>& network, const SequenceSource<Scalar>& training)
      : options_(options), network_(network), training_(training),
        optimizer_(options.optimizer, network.parameter_count()),
        dropout_rng_(derive_seed(options.seed, 3)) {
    const auto& net = network.options();
    const bool has_dropout = net.input_dropout > 0 || net.recurrent_dropout > 0 || net.output_dropout > 0;
    mode_ = options.dropout && has_dropout ? nn::DropoutMode::sample : nn::DropoutMode::off;
    outputs_.resize(options.batch_size * net.horizon * net.outputs_per_lead());
  }

  void set_learning_rate(double rate) { optimizer_.set_learning_rate(rate); }

  // One pass over the batch `indices`. Returns false (with `detail`) when a loss or gradient was non-finite.
  bool batch(std::span<const std::size_t> indices, EpochTally& tally, std::string& detail) {
    training_.fill(indices, batch_);
    const std::size_t steps = batch_.steps;
    if (options_.bptt == BpttMode::full) return update(batch_, tally, detail);

    // Truncated BPTT (Williams & Peng 1990, "BPTT(h; h')"): windows [s, s + window) with s = 0, stride, 2·stride…
    // until a window reaches the last step. Each window starts from the state carried from the previous one
    // (set_initial_state: no gradient flows into it, so the gradient stops at the window edge) and is an update
    // when it has targets; windows without targets only carry the state forward.
    const std::size_t window = options_.bptt_window;
    const std::size_t stride = options_.bptt_stride == 0 ? window : options_.bptt_stride;
    const std::size_t input_size = network_.options().input_size;
    carried_.clear();
    network_.clear_initial_state();
    bool ok = true;
    for (std::size_t start = 0; ok; start += stride) {
      const std::size_t end = std::min(start + window, steps);
      const bool last = end == steps;
      if (!last && stride < end - start) {
        // State at the next window's start: forward over the first `stride` steps of this window.
        slice_steps(batch_, input_size, start, start + stride, chunk_);
        forward_only(chunk_);
        next_carried_.assign(network_.final_state().begin(), network_.final_state().end());
        restore_carried();
      }
      slice_steps(batch_, input_size, start, end, chunk_);
      bool has_targets = true;
      if (last) {
        chunk_.targets = batch_.targets;
      } else {
        has_targets = training_.fill_step_targets(indices, end - 1, chunk_.targets) && present_targets(chunk_.targets) > 0;
      }
      if (has_targets) {
        ok = update(chunk_, tally, detail);
      } else {
        forward_only(chunk_);
      }
      if (last) break;
      if (stride < end - start) {
        carried_.swap(next_carried_);
      } else {
        carried_.assign(network_.final_state().begin(), network_.final_state().end());
      }
      restore_carried();
    }
    network_.clear_initial_state();
    return ok;
  }

  std::uint64_t updates() const { return optimizer_.steps_taken(); }

 private:
  void restore_carried() {
    if (carried_.empty()) {
      network_.clear_initial_state();
    } else {
      network_.set_initial_state(carried_);
    }
  }

  void forward_only(const nn::SequenceBatch<Scalar>& chunk) {
    const auto& net = network_.options();
    outputs_.resize(chunk.batch * net.horizon * net.outputs_per_lead());
    network_.predict(chunk, outputs_, mode_, &dropout_rng_);
  }

  bool update(const nn::SequenceBatch<Scalar>& chunk, EpochTally& tally, std::string& detail) {
    const std::size_t targets = present_targets(chunk.targets);
    if (targets == 0) return true;  // nothing to learn from; an Adam step on a zero gradient would still move θ
    const double loss = static_cast<double>(network_.loss_and_gradient(chunk, options_.loss, mode_, &dropout_rng_));
    double norm = 0.0;
    bool clipped = false;
    if (options_.clip_norm > 0) {
      const ClipResult clip = clip_by_global_norm<Scalar>(network_.gradients(), options_.clip_norm);
      norm = clip.norm_before;
      clipped = clip.clipped;
    } else {
      norm = global_norm<Scalar>(network_.gradients());
    }
    if (!std::isfinite(loss) || !std::isfinite(norm)) {
      char text[160];
      std::snprintf(text, sizeof text, "non-finite %s (loss %g, gradient norm %g) at update %llu",
                    std::isfinite(loss) ? "gradient" : "loss", loss, norm,
                    static_cast<unsigned long long>(optimizer_.steps_taken() + 1));
      detail = text;
      return false;
    }
    optimizer_.step(network_.parameters(), network_.gradients());
    tally.loss_sum += combine(options_.loss, loss, targets);
    tally.loss_weight += static_cast<double>(targets);
    tally.norm_sum += norm;
    tally.norm_max = std::max(tally.norm_max, norm);
    ++tally.updates;
    if (clipped) ++tally.clipped;
    return true;
  }

  const TrainOptions& options_;
  nn::Network<Scalar>& network_;
  const SequenceSource<Scalar>& training_;
  Optimizer<Scalar> optimizer_;
  std::mt19937_64 dropout_rng_;
  nn::DropoutMode mode_ = nn::DropoutMode::off;
  nn::SequenceBatch<Scalar> batch_, chunk_;
  std::vector<Scalar> outputs_, carried_, next_carried_;
};

}  // namespace

template <typename Scalar>
Trainer<Scalar>::Trainer(TrainOptions options) : options_(std::move(options)) {
  options_.validate();
}

template <typename Scalar>
double Trainer<Scalar>::evaluate(nn::Network<Scalar>& network, const SequenceSource<Scalar>& source) const {
  check_source(network.options(), source, "evaluation");
  const auto& net = network.options();
  network.clear_initial_state();
  nn::SequenceBatch<Scalar> batch;
  std::vector<Scalar> outputs;
  std::vector<std::size_t> indices;
  double total = 0.0;
  std::size_t weight = 0;
  for (std::size_t first = 0; first < source.size(); first += options_.batch_size) {
    const std::size_t count = std::min(options_.batch_size, source.size() - first);
    indices.resize(count);
    std::iota(indices.begin(), indices.end(), first);
    source.fill(indices, batch);
    const std::size_t targets = present_targets(batch.targets);
    if (targets == 0) continue;
    outputs.resize(count * net.horizon * net.outputs_per_lead());
    network.predict(batch, outputs, nn::DropoutMode::off, nullptr);
    const double value = static_cast<double>(
        nn::loss_value<Scalar>(options_.loss, outputs, std::span<const Scalar>(batch.targets)));
    total += combine(options_.loss, value, targets);
    weight += targets;
  }
  if (weight == 0) return std::numeric_limits<double>::quiet_NaN();
  return options_.loss.type == nn::LossType::squared_sum ? total : total / static_cast<double>(weight);
}

template <typename Scalar>
TrainSummary Trainer<Scalar>::train(nn::Network<Scalar>& network, const SequenceSource<Scalar>& training,
                                    const SequenceSource<Scalar>* validation) const {
  const auto started = std::chrono::steady_clock::now();
  check_source(network.options(), training, "training");
  if (validation != nullptr) check_source(network.options(), *validation, "validation");
  TrainSummary summary;
  const bool use_validation = validation != nullptr && validation->size() > 0;
  summary.monitored_validation = use_validation;
  auto finish = [&] {
    summary.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
    return summary;
  };
  if (training.size() == 0) {
    summary.termination = TerminationReason::no_data;
    summary.termination_detail = "the training source has no sequences";
    return finish();
  }
  if (options_.initialize_network) network.initialize(derive_seed(options_.seed, 1));
  network.clear_initial_state();

  // Diagnostic batch: the first sequences of the validation source (else of the training source), in order.
  const SequenceSource<Scalar>& probe_source = use_validation ? *validation : training;
  nn::SequenceBatch<Scalar> probe;
  const std::vector<std::size_t> lags =
      options_.diagnostic_lags.empty() ? default_gradient_lags() : options_.diagnostic_lags;
  if (options_.gradient_diagnostic) {
    std::vector<std::size_t> first(std::min(options_.batch_size, probe_source.size()));
    std::iota(first.begin(), first.end(), std::size_t{0});
    probe_source.fill(first, probe);
    if (present_targets(probe.targets) > 0) {
      summary.initial_gradient = measure_gradient_through_time(network, probe, options_.loss, lags);
    }
  }

  Run<Scalar> run(options_, network, training);
  LearningRateSchedule schedule(options_.schedule, options_.optimizer.learning_rate, options_.epochs);
  EarlyStopping<Scalar> stopper(options_.early_stopping);
  std::mt19937_64 shuffle_rng(derive_seed(options_.seed, 2));
  std::vector<std::size_t> order(training.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  const double nan = std::numeric_limits<double>::quiet_NaN();

  for (std::size_t epoch = 0; epoch < options_.epochs; ++epoch) {
    const double rate = schedule.rate();
    run.set_learning_rate(rate);
    summary.learning_rate.push_back(rate);
    if (options_.shuffle) shuffle_indices(order, shuffle_rng);
    EpochTally tally;
    std::string detail;
    bool finite = true;
    for (std::size_t first = 0; first < order.size() && finite; first += options_.batch_size) {
      const std::size_t count = std::min(options_.batch_size, order.size() - first);
      finite = run.batch(std::span<const std::size_t>(order).subspan(first, count), tally, detail);
      if (!finite) detail = "epoch " + std::to_string(epoch) + ", batch " + std::to_string(first / options_.batch_size) +
                            ": " + detail;
    }
    ++summary.epochs_run;
    summary.updates += tally.updates;
    summary.clipped_total += tally.clipped;
    summary.clipped_updates.push_back(static_cast<double>(tally.clipped));
    summary.gradient_norm_mean.push_back(tally.updates > 0 ? tally.norm_sum / static_cast<double>(tally.updates) : nan);
    summary.gradient_norm_max.push_back(tally.updates > 0 ? tally.norm_max : nan);
    double train_loss = nan;
    if (tally.loss_weight > 0) {
      train_loss = options_.loss.type == nn::LossType::squared_sum ? tally.loss_sum : tally.loss_sum / tally.loss_weight;
    }
    if (!finite) {
      summary.train_loss.push_back(nan);
      if (use_validation) summary.validation_loss.push_back(nan);
      summary.termination = TerminationReason::diverged;
      summary.termination_detail = detail;
      break;
    }
    summary.train_loss.push_back(train_loss);
    double monitored = train_loss;
    if (use_validation) {
      monitored = evaluate(network, *validation);
      summary.validation_loss.push_back(monitored);
    }
    const bool stop = stopper.update(epoch, monitored, network.parameters());
    schedule.end_epoch(monitored);
    if (stop) {
      summary.termination = TerminationReason::early_stopped;
      summary.termination_detail = "no improvement larger than " + std::to_string(options_.early_stopping.min_delta) +
                                   " for " + std::to_string(options_.early_stopping.patience) + " epochs";
      break;
    }
  }

  summary.has_best = stopper.has_best();
  if (summary.has_best) {
    summary.best_epoch = stopper.best_epoch();
    summary.best_loss = stopper.best_loss();
    if (options_.early_stopping.restore_best) summary.restored_best = stopper.restore(network.parameters());
  }
  if (options_.gradient_diagnostic && summary.initial_gradient.measured()) {
    summary.final_gradient = measure_gradient_through_time(network, probe, options_.loss, lags);
  }
  return finish();
}

namespace {
std::string format_number(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%.6g", value);
  return text;
}
}  // namespace

std::string TrainSummary::brief_report() const {
  std::string text = to_string(termination) + " after " + std::to_string(epochs_run) + " epoch" +
                     (epochs_run == 1 ? "" : "s");
  if (!termination_detail.empty()) text += " (" + termination_detail + ")";
  if (has_best) {
    text += "; best " + std::string(monitored_validation ? "validation" : "training") + " loss " +
            format_number(best_loss) + " at epoch " + std::to_string(best_epoch) + (restored_best ? " (restored)" : "");
  }
  text += "; " + std::to_string(clipped_total) + " of " + std::to_string(updates) + " updates clipped; " +
          format_number(wall_seconds) + " s";
  return text;
}

std::string TrainSummary::full_report() const {
  std::string text = brief_report() + "\n";
  text += "epoch  learning_rate   train_loss  validation_loss  grad_norm_mean  grad_norm_max  clipped\n";
  char line[160];
  for (std::size_t e = 0; e < epochs_run; ++e) {
    const double validation = e < validation_loss.size() ? validation_loss[e] : std::nan("");
    std::snprintf(line, sizeof line, "%5zu  %13.6g  %11.6g  %15.6g  %14.6g  %13.6g  %7.0f\n", e, learning_rate[e],
                  train_loss[e], validation, gradient_norm_mean[e], gradient_norm_max[e], clipped_updates[e]);
    text += line;
  }
  text += "initial weights: " + initial_gradient.report();
  text += "final weights: " + final_gradient.report();
  return text;
}

template class Trainer<float>;
template class Trainer<double>;

}  // namespace libseq::train
