#include <omp.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <limits>
#include <map>
#include <optional>
#include <set>

#include "libseq/data/time_axis.hpp"
#include "libseq/error.hpp"
#include "libseq/io/reader.hpp"
#include "run_impl.hpp"

namespace libseq::pipeline::detail {

WindowSource::WindowSource(const data::FeatureTable& table, const data::WindowOptions& options,
                           std::vector<data::Window> windows)
    : table_(table), options_(options), windows_(std::move(windows)) {
  input_size_ = data::batch_input_size(table.plan(), options_);
}

void WindowSource::fill(std::span<const std::size_t> indices, nn::SequenceBatch<float>& batch) const {
  data::WindowBatch packed;
  data::fill_batch(table_, options_, windows_, indices, packed);
  batch.steps = packed.steps;
  batch.batch = packed.batch;
  batch.inputs = std::move(packed.inputs);
  batch.statics = std::move(packed.statics);
  batch.mask.clear();
  batch.targets = std::move(packed.targets);
}

CaseDistributions to_target_units(const uncertainty::MemberForecasts& members, const data::FeatureTable& table,
                                  std::span<const data::Window> windows, std::size_t leads,
                                  const std::vector<double>& levels, bool keep_members) {
  const bool transformed = table.plan().options().transform != data::TargetTransform::none;
  constexpr std::size_t grid = 200;
  uncertainty::MixtureOptions options;
  options.levels = levels;
  if (transformed) {
    for (std::size_t i = 0; i < grid; ++i) options.levels.push_back((static_cast<double>(i) + 0.5) / grid);
  }
  std::sort(options.levels.begin(), options.levels.end());
  options.levels.erase(std::unique(options.levels.begin(), options.levels.end()), options.levels.end());
  options.keep_member_values = keep_members;
  const uncertainty::MixtureTable mixed = uncertainty::mix(members, options);

  CaseDistributions out;
  out.cases = mixed.case_count;
  out.levels = levels;
  out.quantiles.resize(out.cases * levels.size());
  out.median.resize(out.cases);
  out.mean.resize(out.cases);
  std::vector<std::size_t> level_index;
  for (double level : levels) {
    level_index.push_back(static_cast<std::size_t>(
        std::lower_bound(options.levels.begin(), options.levels.end(), level) - options.levels.begin()));
  }
  const std::size_t all_levels = options.levels.size();
  for (std::size_t c = 0; c < out.cases; ++c) {
    const std::size_t site = windows[c / leads].site;
    auto back = [&](double scaled) { return std::isfinite(scaled) ? table.unscale_target(site, scaled) : NAN; };
    for (std::size_t q = 0; q < levels.size(); ++q) {
      out.quantiles[c * levels.size() + q] = back(mixed.quantiles[c * all_levels + level_index[q]]);
    }
    out.median[c] = back(mixed.median[c]);
    if (!transformed) {
      out.mean[c] = back(mixed.mean[c]);
    } else {
      double sum = 0.0;
      std::size_t count = 0;
      for (std::size_t q = 0; q < all_levels; ++q) {
        const double level = options.levels[q];
        // Only the midpoint grid enters the mean (the reported levels may add others).
        const double position = level * grid - 0.5;
        if (std::abs(position - std::round(position)) > 1e-9) continue;
        sum += back(mixed.quantiles[c * all_levels + q]);
        ++count;
      }
      out.mean[c] = count ? sum / static_cast<double>(count) : NAN;
    }
  }
  if (keep_members && !mixed.member_values.empty()) {
    out.member_count = mixed.member_values.size() / std::max<std::size_t>(1, out.cases);
    out.members.resize(mixed.member_values.size());
    for (std::size_t c = 0; c < out.cases; ++c) {
      const std::size_t site = windows[c / leads].site;
      for (std::size_t m = 0; m < out.member_count; ++m) {
        const double v = mixed.member_values[c * out.member_count + m];
        out.members[c * out.member_count + m] = std::isfinite(v) ? table.unscale_target(site, v) : NAN;
      }
    }
  }
  return out;
}

uncertainty::EnsembleOptions ensemble_options_for(const JobConfig& job, const data::FeaturePlan& plan) {
  uncertainty::EnsembleOptions options;
  options.members = job.members;
  options.resampling = job.resampling;
  options.mc_passes = job.mc_passes;
  options.network = job.network;
  options.network.input_size = data::batch_input_size(plan, job.windows);
  options.network.static_size = plan.static_feature_count();
  options.network.horizon = job.windows.lead_count();
  options.training = job.training;
  options.validate();
  return options;
}

io::TrainingRecord training_record(const std::string& model_name, std::size_t index,
                                   const uncertainty::EnsembleMember& member) {
  const auto& ts = member.summary;
  io::TrainingRecord record;
  record.model = model_name;
  record.member = static_cast<std::uint32_t>(index);
  record.seed = member.seed;
  record.termination = train::to_string(ts.termination);
  record.epochs = static_cast<std::uint32_t>(ts.epochs_run);
  record.best_epoch = static_cast<std::uint32_t>(ts.best_epoch);
  record.best_validation_loss = ts.monitored_validation && ts.has_best ? ts.best_loss : NAN;
  record.train_loss = ts.train_loss;
  record.validation_loss = ts.validation_loss;
  record.gradient_norm = ts.gradient_norm_mean;
  record.clipped_steps = ts.clipped_total;
  record.total_steps = ts.updates;
  for (std::size_t i = 0; i < ts.final_gradient.lags.size(); ++i) {
    record.diagnostic_lags.push_back(static_cast<std::int64_t>(ts.final_gradient.lags[i]));
    record.diagnostic_gradient_norms.push_back(ts.final_gradient.input_gradient_norm[i]);
  }
  record.seconds = ts.wall_seconds;
  return record;
}

uncertainty::Calibrator fit_interval_calibrator(std::span<const double> observed, std::span<const double> lower,
                                                std::span<const double> upper, std::span<const std::size_t> lead,
                                                double coverage, bool per_lead) {
  uncertainty::CalibrationSet data;
  data.observed = observed;
  data.lower = lower;
  data.upper = upper;
  data.lead = lead;
  uncertainty::ConformalOptions conformal;
  conformal.score = uncertainty::ConformalScore::quantile_pair;
  conformal.miscoverage = 1 - coverage;
  conformal.per_lead = per_lead;
  return uncertainty::Calibrator::fit(data, conformal);
}

ScoreScale::ScoreScale(const JobConfig& job, const data::FeaturePlan& plan)
    : plan_(&plan),
      identity_(job.calibration_scale == CalibrationScale::target ||
                job.features.transform == data::TargetTransform::none),
      floor_(-std::numeric_limits<double>::infinity()) {
  if (job.features.transform == data::TargetTransform::sqrt) floor_ = 0.0;
  if (job.features.transform == data::TargetTransform::box_cox && job.features.box_cox_lambda > 1e-12) {
    floor_ = -1.0 / job.features.box_cox_lambda;
  }
}

double ScoreScale::forward(double y) const {
  if (identity_ || std::isnan(y)) return y;
  const double z = plan_->transform_target(y);
  return std::isnan(z) ? floor_ : z;  // NaN only below the domain (y + offset <= 0): the transform's limit there
}

double ScoreScale::inverse(double z) const {
  if (identity_ || std::isnan(z)) return z;
  if (z == std::numeric_limits<double>::infinity()) return z;
  return z <= floor_ ? -plan_->options().transform_offset : plan_->inverse_transform_target(z);
}

bool calibrate_per_lead(const JobConfig& job, std::span<const double> observed, std::span<const std::size_t> lead,
                        std::size_t leads) {
  if (job.calibration_leads == CalibrationLeads::each) return true;
  if (job.calibration_leads == CalibrationLeads::pooled) return false;
  if (leads <= 1) return true;
  std::vector<std::size_t> count(leads, 0);
  for (std::size_t c = 0; c < observed.size() && c < lead.size(); ++c) {
    if (std::isfinite(observed[c]) && lead[c] < leads) ++count[lead[c]];
  }
  return *std::min_element(count.begin(), count.end()) >= job.calibration_min_cases;
}

std::size_t target_step(const data::WindowOptions& w, std::size_t issue, std::size_t lead) {
  return w.mode == data::WindowMode::forecast ? issue + 1 + lead : issue;
}

std::size_t level_position(const std::vector<double>& levels, double level) {
  for (std::size_t i = 0; i < levels.size(); ++i) {
    if (std::abs(levels[i] - level) < 1e-9) return i;
  }
  throw DataError("internal: quantile level " + std::to_string(level) + " is not among the reported levels");
}

std::vector<std::vector<std::size_t>> model_sites(const JobConfig& job, std::size_t site_count) {
  std::vector<std::vector<std::size_t>> models;
  if (job.scope == ModelScope::across_sites) {
    models.emplace_back();
    for (std::size_t s = 0; s < site_count; ++s) models.back().push_back(s);
  } else {
    for (std::size_t s = 0; s < site_count; ++s) models.push_back({s});
  }
  return models;
}

std::string model_name(const JobConfig& job, const data::Panel& panel, const std::vector<std::size_t>& sites) {
  return job.scope == ModelScope::across_sites ? std::string("*") : panel.sites().at(sites.at(0)).id;
}

void for_each_model(const JobConfig& job, int threads, std::size_t count, const std::function<void(std::size_t)>& body,
                    const std::function<void(std::size_t, std::size_t)>& done,
                    std::vector<std::exception_ptr>& errors) {
  const bool parallel = threads > 1 && count > job.members;
  errors.assign(count, nullptr);
  std::size_t finished = 0;
  auto one = [&](std::size_t m) {
    try {
      body(m);
    } catch (...) {
      errors[m] = std::current_exception();
    }
#pragma omp critical(runnel_model_done)
    done(m, ++finished);
  };
  if (parallel) {
    omp_set_max_active_levels(1);
#pragma omp parallel for schedule(dynamic, 1)
    for (std::size_t m = 0; m < count; ++m) one(m);
  } else {
    for (std::size_t m = 0; m < count; ++m) one(m);
  }
}

std::string now_iso() {
  const auto seconds =
      std::chrono::duration_cast<std::chrono::seconds>(std::chrono::system_clock::now().time_since_epoch()).count();
  return data::format_iso8601(seconds);
}

void order_calibrated_quantiles(std::vector<double>& quantiles, const std::vector<double>& levels,
                                const std::vector<double>& intervals) {
  std::vector<double> order(intervals);
  std::sort(order.begin(), order.end());
  std::vector<std::pair<std::size_t, std::size_t>> bounds;
  std::vector<bool> is_bound(levels.size(), false);
  for (double coverage : order) {
    bounds.emplace_back(level_position(levels, (1 - coverage) / 2), level_position(levels, (1 + coverage) / 2));
    is_bound[bounds.back().first] = is_bound[bounds.back().second] = true;
  }
  const std::size_t width = levels.size();
  const double inf = std::numeric_limits<double>::infinity();
  for (std::size_t c = 0; width > 0 && c + width <= quantiles.size(); c += width) {
    double* q = quantiles.data() + c;
    for (std::size_t i = 1; i < bounds.size(); ++i) {
      const double inner_lo = q[bounds[i - 1].first];
      const double inner_hi = q[bounds[i - 1].second];
      if (inner_lo < q[bounds[i].first]) q[bounds[i].first] = inner_lo;  // false for NaN
      if (inner_hi > q[bounds[i].second]) q[bounds[i].second] = inner_hi;
    }
    for (std::size_t j = 0; j < width; ++j) {
      if (is_bound[j] || std::isnan(q[j])) continue;
      double below = -inf, above = inf;
      for (std::size_t i = 0; i < width; ++i) {
        if (!is_bound[i] || std::isnan(q[i])) continue;
        if (i < j) below = std::max(below, q[i]);
        if (i > j) above = std::min(above, q[i]);
      }
      if (below <= above) q[j] = std::clamp(q[j], below, above);
    }
  }
  sort_case_quantiles(quantiles, width);
}

double difference_standard_error(const std::vector<double>& a, const std::vector<double>& b, std::size_t overlap) {
  std::vector<double> d;
  for (std::size_t i = 0; i < a.size() && i < b.size(); ++i) {
    if (std::isfinite(a[i]) && std::isfinite(b[i])) d.push_back(a[i] - b[i]);
  }
  const std::size_t n = d.size();
  if (n < 2) return 0.0;
  double mean = 0.0;
  for (double v : d) mean += v;
  mean /= static_cast<double>(n);
  auto autocovariance = [&](std::size_t lag) {
    double sum = 0.0;
    for (std::size_t i = lag; i < n; ++i) sum += (d[i] - mean) * (d[i - lag] - mean);
    return sum / static_cast<double>(n);
  };
  const double gamma0 = autocovariance(0);
  double variance = gamma0;
  for (std::size_t lag = 1; lag <= overlap && lag < n; ++lag) variance += 2 * autocovariance(lag);
  if (!(variance > 0)) variance = gamma0;
  return std::sqrt(variance / static_cast<double>(n));
}

std::vector<data::Window> windows_of_sites(const std::vector<data::Window>& all,
                                           const std::vector<std::size_t>& sites) {
  const std::set<std::size_t> wanted(sites.begin(), sites.end());
  std::vector<data::Window> out;
  for (const auto& w : all) {
    if (wanted.count(w.site)) out.push_back(w);
  }
  return out;
}

std::optional<uncertainty::Ensemble> train_model(const data::FeatureTable& table, const JobConfig& job,
                                                 const uncertainty::EnsembleOptions& options,
                                                 const std::vector<data::Window>& all_training,
                                                 const std::vector<data::Window>& all_validation,
                                                 const std::vector<std::size_t>& sites, std::size_t model) {
  const WindowSource training(table, job.windows, windows_of_sites(all_training, sites));
  if (training.size() == 0) return std::nullopt;
  // Resampling is within each of the model's sites: sites renumbered 0..n-1 in the model's order.
  std::map<std::size_t, std::size_t> local_site;
  for (std::size_t s : sites) local_site.emplace(s, local_site.size());
  std::vector<std::size_t> window_site;
  for (const auto& w : training.windows()) window_site.push_back(local_site.at(w.site));
  const WindowSource validation(table, job.windows, windows_of_sites(all_validation, sites));
  auto model_options = options;
  model_options.resampling.seed = model_seed(job.seed, model);
  return uncertainty::Ensemble::train(model_options, training, window_site, sites.size(),
                                      validation.size() ? &validation : nullptr);
}

std::uint64_t model_seed(std::uint64_t job_seed, std::size_t model) {
  return uncertainty::member_seed(job_seed, 1000003 * (model + 1));
}

data::Panel read_joined_panel(const std::vector<std::filesystem::path>& files, const io::ReadOptions& read,
                              std::vector<std::string>& warnings) {
  std::optional<data::Panel> joined;
  for (const auto& file : files) {
    io::ReadResult result = io::read_panel(file, read);
    for (auto& w : result.warnings) warnings.push_back(std::move(w));
    if (!joined) {
      joined = std::move(result.panel);
      continue;
    }
    const data::Panel& next = result.panel;
    if (!(next.axis() == joined->axis())) {
      throw DataError(file.string() + ": time axis " + data::format_iso8601(next.axis().start()) + " step " +
                      next.axis().describe_step() +
                      " differs from the first file's; files read together must "
                      "share the time axis");
    }
    if (next.variable_count() != joined->variable_count()) {
      throw DataError(file.string() + ": has other variables than the first file");
    }
    std::vector<data::SiteInfo> sites = joined->sites();
    for (const auto& s : next.sites()) {
      if (joined->find_site(s.id)) throw DataError(file.string() + ": site '" + s.id + "' is also in an earlier file");
      sites.push_back(s);
    }
    data::Panel merged(joined->axis(), sites, joined->variables());
    for (std::size_t s = 0; s < joined->site_count(); ++s) {
      std::copy(joined->site_values(s).begin(), joined->site_values(s).end(), merged.site_values(s).begin());
    }
    for (std::size_t s = 0; s < next.site_count(); ++s) {
      std::copy(next.site_values(s).begin(), next.site_values(s).end(),
                merged.site_values(joined->site_count() + s).begin());
    }
    for (const auto& src : joined->sources()) merged.add_source(src);
    for (const auto& src : next.sources()) merged.add_source(src);
    joined = std::move(merged);
  }
  if (!joined || joined->site_count() == 0) throw DataError("no site with data in the files read");
  if (joined->sources().empty()) {
    for (const auto& f : files) joined->add_source(f.string());
  }
  return std::move(*joined);
}

void sort_case_quantiles(std::vector<double>& quantiles, std::size_t width) {
  for (std::size_t c = 0; c + width <= quantiles.size(); c += width) {
    std::sort(quantiles.begin() + static_cast<std::ptrdiff_t>(c),
              quantiles.begin() + static_cast<std::ptrdiff_t>(c + width),
              [](double a, double b) { return std::isnan(b) ? !std::isnan(a) : a < b; });
  }
}

}  // namespace libseq::pipeline::detail
