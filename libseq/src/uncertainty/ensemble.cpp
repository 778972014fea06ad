#include "libseq/uncertainty/ensemble.hpp"

#include <algorithm>
#include <cmath>
#include <exception>
#include <random>
#include <sstream>
#include <string>
#include <utility>

#include "libseq/error.hpp"
#include "uncertainty/random_impl.hpp"

namespace libseq::uncertainty {

namespace {

constexpr std::size_t max_mc_passes = 10000;

// Runs `check` and appends the message of a ConfigError it throws, so that validate() reports every broken rule of
// the nested options at once instead of stopping at the first.
template <typename Check>
void collect(std::ostringstream& problems, Check&& check) {
  try {
    check();
  } catch (const ConfigError& e) {
    problems << "\n  " << e.what();
  }
}

// The training windows of one member: the drawn indices of the base source, in draw order, with repeats. The
// trainer shuffles positions of this view, so a window drawn twice is visited twice per epoch, which is what the
// bootstrap means (each draw is one training case).
class ResampledView final : public train::SequenceSource<float> {
 public:
  ResampledView(const train::SequenceSource<float>& base, std::vector<std::size_t> indices)
      : base_(base), indices_(std::move(indices)) {}
  std::size_t size() const override { return indices_.size(); }
  std::size_t steps() const override { return base_.steps(); }
  std::size_t input_size() const override { return base_.input_size(); }
  std::size_t static_size() const override { return base_.static_size(); }
  std::size_t horizon() const override { return base_.horizon(); }
  void fill(std::span<const std::size_t> indices, nn::SequenceBatch<float>& batch) const override {
    base_.fill(map(indices), batch);
  }
  bool fill_step_targets(std::span<const std::size_t> indices, std::size_t step,
                         std::vector<float>& targets) const override {
    return base_.fill_step_targets(map(indices), step, targets);
  }

 private:
  // A local vector per call keeps concurrent calls (allowed by SequenceSource) independent.
  std::vector<std::size_t> map(std::span<const std::size_t> indices) const {
    std::vector<std::size_t> mapped(indices.size());
    for (std::size_t i = 0; i < indices.size(); ++i) mapped[i] = indices_.at(indices[i]);
    return mapped;
  }
  const train::SequenceSource<float>& base_;
  std::vector<std::size_t> indices_;
};

void check_source_shape(const nn::NetworkOptions& network, const train::SequenceSource<float>& source,
                        const std::string& what) {
  std::ostringstream problems;
  if (source.input_size() != network.input_size) {
    problems << "\n  input_size = " << source.input_size() << ": expected network.input_size = " << network.input_size;
  }
  if (source.static_size() != network.static_size) {
    problems << "\n  static_size = " << source.static_size()
             << ": expected network.static_size = " << network.static_size;
  }
  if (source.horizon() != network.horizon) {
    problems << "\n  horizon = " << source.horizon() << ": expected network.horizon = " << network.horizon;
  }
  if (source.size() > 0 && source.steps() < 1) {
    problems << "\n  steps = " << source.steps() << ": expected >= 1";
  }
  const std::string text = problems.str();
  if (!text.empty()) throw DataError("ensemble: the " + what + " source does not fit the network:" + text);
}

// Seed of MC-dropout pass `pass` of member `member`: two SplitMix64 mixing rounds (Steele, Lea & Flood 2014), so
// that passes and members draw from unrelated streams and a member keeps its streams when others are left out.
std::uint64_t pass_seed(std::uint64_t seed, std::size_t member, std::size_t pass) {
  return detail::mix_seed(detail::mix_seed(seed, member), pass);
}

bool same_shape(const nn::NetworkOptions& a, const nn::NetworkOptions& b) {
  return a.cell == b.cell && (a.cell != nn::CellType::elman || a.elman_activation == b.elman_activation) &&
         a.input_size == b.input_size && a.static_size == b.static_size && a.hidden_size == b.hidden_size &&
         a.layers == b.layers && a.head == b.head && a.horizon == b.horizon && a.quantile_levels == b.quantile_levels &&
         a.input_dropout == b.input_dropout && a.recurrent_dropout == b.recurrent_dropout &&
         a.output_dropout == b.output_dropout;
}

}  // namespace

void EnsembleOptions::validate() const {
  std::ostringstream problems;
  if (members < 1) problems << "\n  ensemble.members = " << members << ": expected an integer >= 1";
  if (mc_passes > max_mc_passes) {
    problems << "\n  ensemble.mc_passes = " << mc_passes << ": expected an integer in [0, " << max_mc_passes
             << "] (0 = dropout off at prediction)";
  }
  collect(problems, [&] { resampling.validate(); });
  collect(problems, [&] { network.validate(); });
  collect(problems, [&] { training.validate(); });
  // The network also checks this, but only when training starts; here it fails before any member is built.
  const nn::LossType loss = training.loss.type;
  switch (network.head) {
    case nn::HeadType::point:
      if (loss != nn::LossType::squared_sum && loss != nn::LossType::squared_mean) {
        problems << "\n  train.loss = " << nn::to_string(loss)
                 << ": expected squared_sum or squared_mean for a point head";
      }
      break;
    case nn::HeadType::gaussian:
      if (loss != nn::LossType::gaussian_nll) {
        problems << "\n  train.loss = " << nn::to_string(loss) << ": expected gaussian_nll for a gaussian head";
      }
      break;
    case nn::HeadType::quantile:
      if (loss != nn::LossType::pinball) {
        problems << "\n  train.loss = " << nn::to_string(loss) << ": expected pinball for a quantile head";
      } else if (training.loss.quantile_levels != network.quantile_levels) {
        problems << "\n  train.loss.quantile_levels: expected the same levels as network.quantile_levels";
      }
      break;
  }
  const std::string text = problems.str();
  if (!text.empty()) throw ConfigError("invalid ensemble options:" + text);
}

bool EnsembleMember::usable() const {
  return summary.termination != train::TerminationReason::diverged &&
         summary.termination != train::TerminationReason::no_data;
}

Ensemble Ensemble::train(const EnsembleOptions& options, const train::SequenceSource<float>& training,
                         std::span<const std::size_t> window_site, std::size_t site_count,
                         const train::SequenceSource<float>* validation) {
  options.validate();
  check_source_shape(options.network, training, "training");
  if (validation != nullptr) check_source_shape(options.network, *validation, "validation");
  if (window_site.size() != training.size()) {
    throw DataError("ensemble: window_site has " + std::to_string(window_site.size()) +
                    " entries, expected one per training sequence (" + std::to_string(training.size()) + ")");
  }
  for (std::size_t i = 0; i < window_site.size(); ++i) {
    if (window_site[i] >= site_count) {
      throw DataError("ensemble: training window " + std::to_string(i) + " belongs to site " +
                      std::to_string(window_site[i]) + ", expected a site index below " + std::to_string(site_count));
    }
  }

  const std::size_t count = options.members;
  std::vector<nn::Network<float>> networks(count, nn::Network<float>(options.network));
  std::vector<EnsembleMember> members(count);
  std::vector<std::exception_ptr> failures(count);

  // One member per iteration and per thread; each writes only its own slots, and nothing inside depends on which
  // thread runs it, hence bit-identical results for any thread count. Dynamic scheduling because members that
  // stop early finish at different times.
  const auto signed_count = static_cast<long long>(count);
#pragma omp parallel for schedule(dynamic, 1)
  for (long long i = 0; i < signed_count; ++i) {
    const auto m = static_cast<std::size_t>(i);
    try {
      Resample resample = resample_windows(window_site, site_count, options.resampling, m);
      EnsembleMember& member = members[m];
      member.seed = member_seed(options.resampling.seed, m);
      member.windows_drawn = resample.indices.size();
      const ResampledView view(training, std::move(resample.indices));
      train::TrainOptions member_training = options.training;
      member_training.seed = member.seed;
      const train::Trainer<float> trainer(std::move(member_training));
      member.summary = trainer.train(networks[m], view, validation);
    } catch (...) {
      failures[m] = std::current_exception();
    }
  }
  for (const auto& failure : failures) {
    if (failure) std::rethrow_exception(failure);
  }
  return Ensemble(options, std::move(networks), std::move(members));
}

std::vector<std::size_t> Ensemble::usable_members() const {
  std::vector<std::size_t> usable;
  for (std::size_t m = 0; m < members_.size(); ++m) {
    if (members_[m].usable()) usable.push_back(m);
  }
  return usable;
}

MemberForecasts Ensemble::predict(const train::SequenceSource<float>& source, std::uint64_t seed) const {
  const nn::NetworkOptions& shape = options_.network;
  check_source_shape(shape, source, "prediction");
  const std::vector<std::size_t> usable = usable_members();
  const std::size_t passes = std::max<std::size_t>(1, options_.mc_passes);
  const nn::DropoutMode mode = options_.mc_passes > 0 ? nn::DropoutMode::sample : nn::DropoutMode::off;
  const std::size_t horizon = shape.horizon;
  const std::size_t per_lead = shape.outputs_per_lead();
  const std::size_t sequences = source.size();
  const std::size_t batch_size = options_.training.batch_size;

  MemberForecasts out;
  out.case_count = sequences * horizon;
  out.member_count = usable.size() * passes;
  const std::size_t cells = out.case_count * out.member_count;
  switch (shape.head) {
    case nn::HeadType::gaussian:
      out.kind = MemberKind::gaussian;
      out.means.assign(cells, 0.0);
      out.variances.assign(cells, 0.0);
      break;
    case nn::HeadType::quantile:
      out.kind = MemberKind::quantiles;
      out.levels = shape.quantile_levels;
      out.values.assign(cells * shape.quantile_levels.size(), 0.0);
      break;
    case nn::HeadType::point:
      out.kind = MemberKind::points;
      out.values.assign(cells, 0.0);
      break;
  }

  std::vector<std::exception_ptr> failures(usable.size());
  const auto signed_count = static_cast<long long>(usable.size());
#pragma omp parallel for schedule(dynamic, 1)
  for (long long i = 0; i < signed_count; ++i) {
    const auto u = static_cast<std::size_t>(i);
    try {
      const std::size_t m = usable[u];
      nn::Network<float> network = networks_[m];  // a private copy: Network workspaces are not shareable
      network.clear_initial_state();
      nn::SequenceBatch<float> batch;
      std::vector<float> outputs;
      std::vector<std::size_t> indices;
      for (std::size_t pass = 0; pass < passes; ++pass) {
        std::mt19937_64 rng(pass_seed(seed, m, pass));
        const std::size_t column = u * passes + pass;
        for (std::size_t first = 0; first < sequences; first += batch_size) {
          const std::size_t rows = std::min(batch_size, sequences - first);
          indices.resize(rows);
          for (std::size_t b = 0; b < rows; ++b) indices[b] = first + b;
          source.fill(indices, batch);
          outputs.resize(rows * horizon * per_lead);
          network.predict(batch, outputs, mode, mode == nn::DropoutMode::sample ? &rng : nullptr);
          for (std::size_t b = 0; b < rows; ++b) {
            for (std::size_t lead = 0; lead < horizon; ++lead) {
              const std::size_t cell = ((first + b) * horizon + lead) * out.member_count + column;
              const float* head = outputs.data() + (b * horizon + lead) * per_lead;
              switch (shape.head) {
                case nn::HeadType::gaussian:
                  out.means[cell] = head[0];
                  out.variances[cell] = std::exp(static_cast<double>(head[1]));  // the head emits log σ²
                  break;
                case nn::HeadType::quantile:
                  for (std::size_t q = 0; q < per_lead; ++q) out.values[cell * per_lead + q] = head[q];
                  break;
                case nn::HeadType::point:
                  out.values[cell] = head[0];
                  break;
              }
            }
          }
        }
      }
    } catch (...) {
      failures[u] = std::current_exception();
    }
  }
  for (const auto& failure : failures) {
    if (failure) std::rethrow_exception(failure);
  }
  return out;
}

Ensemble Ensemble::from_networks(EnsembleOptions options, std::vector<nn::Network<float>> networks,
                                 std::vector<EnsembleMember> members) {
  options.validate();
  if (networks.size() != options.members || members.size() != options.members) {
    throw DataError("ensemble: " + std::to_string(networks.size()) + " networks and " + std::to_string(members.size()) +
                    " member records given, expected ensemble.members = " + std::to_string(options.members) +
                    " of each");
  }
  const std::size_t parameters = nn::Network<float>(options.network).parameter_count();
  for (std::size_t m = 0; m < networks.size(); ++m) {
    if (!same_shape(networks[m].options(), options.network) || networks[m].parameter_count() != parameters) {
      throw DataError("ensemble: network of member " + std::to_string(m) +
                      " has a different shape (cell, sizes, layers, head, horizon, quantile levels, dropout or "
                      "parameter count) than ensemble.network");
    }
  }
  return Ensemble(std::move(options), std::move(networks), std::move(members));
}

}  // namespace libseq::uncertainty
