#include "libseq/pipeline/operational.hpp"

#include <omp.h>

#include <algorithm>
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <exception>
#include <map>
#include <set>
#include <sstream>

#include "libseq/caution.hpp"
#include "libseq/error.hpp"
#include "libseq/io/bundle.hpp"
#include "libseq/train/model_io.hpp"
#include "libseq/uncertainty/conformal.hpp"
#include "libseq/uncertainty/ensemble.hpp"
#include "libseq/version.hpp"
#include "run_impl.hpp"

namespace libseq::pipeline {

namespace {

using Clock = std::chrono::steady_clock;

// ---------------------------------------------------------------------------------------------------------------
// Shared between fit and forecast: the job as run_job sees it, the reading options, text forms of options
// ---------------------------------------------------------------------------------------------------------------

// run_job's overrides, so that fit_job trains with the same seeds.
JobConfig effective_job(const JobConfig& job_in, std::optional<std::uint64_t> seed) {
  JobConfig job = job_in;
  if (seed) {
    job.seed = *seed;
    job.training.seed = job.seed;
    job.resampling.seed = job.seed;
  }
  return job;
}

int thread_count(std::optional<int> requested, int job_threads) {
  const int threads = requested.value_or(job_threads);
  return threads > 0 ? threads : omp_get_num_procs();
}

io::ReadOptions read_options_of(const JobConfig& job) {
  io::ReadOptions read;
  read.variables.push_back(job.features.target);
  for (const auto& v : job.features.dynamic_inputs) read.variables.push_back(v);
  for (const auto& [variable, units] : job.units) read.target_units[variable] = units;
  return read;
}

std::string join(const std::vector<std::string>& items, const char* separator) {
  std::string out;
  for (std::size_t i = 0; i < items.size(); ++i) out += (i ? separator : "") + items[i];
  return out;
}

std::vector<std::string> split_lines(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    if (!line.empty()) lines.push_back(line);
  }
  return lines;
}

std::string number_text(double value) {
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.17g", value);
  return buffer;
}

// For readers of the bundle, and compared on reading with what the stored job text parses to today.
std::string feature_options_text(const data::FeatureOptions& o) {
  std::vector<std::string> calendar;
  for (auto c : o.calendar) calendar.push_back(data::to_string(c));
  std::ostringstream text;
  text << "target = " << o.target << "\n"
       << "dynamic_inputs = " << join(o.dynamic_inputs, ", ") << "\n"
       << "static_inputs = " << join(o.static_inputs, ", ") << "\n"
       << "calendar = " << join(calendar, ", ") << "\n"
       << "holidays = " << join(o.holidays, ", ") << "\n"
       << "lagged_target = " << (o.lagged_target ? "true" : "false") << "\n"
       << "transform = " << data::to_string(o.transform) << "\n"
       << "box_cox_lambda = " << number_text(o.box_cox_lambda) << "\n"
       << "transform_offset = " << number_text(o.transform_offset) << "\n"
       << "scaling = " << data::to_string(o.scaling) << "\n";
  return text.str();
}

std::string window_options_text(const data::WindowOptions& o) {
  std::ostringstream text;
  text << "mode = " << data::to_string(o.mode) << "\n"
       << "lookback_steps = " << o.lookback_steps << "\n"
       << "horizon_steps = " << o.horizon_steps << "\n"
       << "future_inputs_known = " << (o.future_inputs_known ? "true" : "false") << "\n"
       << "issue_every = " << o.issue_every << "\n";
  return text.str();
}

io::NamedArray scaling_array(const std::vector<data::Scaling>& scaling) {
  std::vector<double> values;
  for (const auto& s : scaling) {
    values.push_back(s.mean);
    values.push_back(s.deviation);
  }
  return io::NamedArray::of_doubles({scaling.size(), 2}, std::move(values));
}

std::string model_prefix(std::size_t model) { return "model" + std::to_string(model) + "."; }
std::string member_prefix(std::size_t model, std::size_t member) {
  return model_prefix(model) + "member" + std::to_string(member) + ".";
}
std::string interval_prefix(std::size_t model, std::size_t interval) {
  return model_prefix(model) + "interval" + std::to_string(interval) + ".";
}

// ---------------------------------------------------------------------------------------------------------------
// Reading a bundle back
// ---------------------------------------------------------------------------------------------------------------

class BundleReader {
 public:
  BundleReader(const io::ModelBundle& bundle, std::string source) : bundle_(bundle), source_(std::move(source)) {}

  const std::string& text(const std::string& key) const {
    const auto it = bundle_.text.find(key);
    if (it == bundle_.text.end()) throw FormatError(source_ + ": text entry '" + key + "' is missing");
    return it->second;
  }
  bool has_text(const std::string& key) const { return bundle_.text.count(key) != 0; }
  const std::vector<double>& doubles(const std::string& key) const {
    const auto it = bundle_.arrays.find(key);
    if (it == bundle_.arrays.end()) throw FormatError(source_ + ": array '" + key + "' is missing");
    try {
      return it->second.doubles(source_ + ": array '" + key + "'");
    } catch (const DataError& e) {
      throw FormatError(e.what());
    }
  }
  const io::NamedArray& array(const std::string& key) const {
    const auto it = bundle_.arrays.find(key);
    if (it == bundle_.arrays.end()) throw FormatError(source_ + ": array '" + key + "' is missing");
    return it->second;
  }
  std::uint64_t unsigned_text(const std::string& key) const {
    const std::string& value = text(key);
    std::uint64_t out = 0;
    const auto [end, error] = std::from_chars(value.data(), value.data() + value.size(), out);
    if (error != std::errc() || end != value.data() + value.size()) {
      throw FormatError(source_ + ": text entry '" + key + "' = '" + value + "', expected a non-negative integer");
    }
    return out;
  }
  std::vector<data::Scaling> scaling(const std::string& key) const {
    const auto& a = array(key);
    if (a.shape.size() != 2 || a.shape[1] != 2) {
      throw FormatError(source_ + ": array '" + key + "' must have shape (n, 2): mean and deviation");
    }
    const auto& values = doubles(key);
    std::vector<data::Scaling> out;
    for (std::size_t i = 0; i + 1 < values.size(); i += 2) out.push_back({values[i], values[i + 1]});
    return out;
  }
  // The entries below `prefix`, with the prefix removed (one member's network bundle).
  io::ModelBundle sub_bundle(const std::string& prefix) const {
    io::ModelBundle out;
    for (const auto& [key, value] : bundle_.text) {
      if (key.rfind(prefix, 0) == 0) out.text[key.substr(prefix.size())] = value;
    }
    for (const auto& [key, value] : bundle_.arrays) {
      if (key.rfind(prefix, 0) == 0) out.arrays[key.substr(prefix.size())] = value;
    }
    return out;
  }
  const std::string& source() const { return source_; }

 private:
  const io::ModelBundle& bundle_;
  std::string source_;
};

uncertainty::CalibratorState read_calibrator(const BundleReader& r, const std::string& prefix) {
  uncertainty::CalibratorState state;
  try {
    state.options.score = uncertainty::parse_conformal_score(r.text(prefix + "score"), prefix + "score");
  } catch (const ConfigError& e) {
    throw FormatError(r.source() + ": " + e.what());
  }
  const auto& settings = r.doubles(prefix + "settings");
  if (settings.size() != 2) throw FormatError(r.source() + ": array '" + prefix + "settings' must hold 2 values");
  state.options.miscoverage = settings[0];
  state.options.per_lead = settings[1] != 0.0;
  const auto& a = r.array(prefix + "leads");
  if (a.shape.size() != 2 || a.shape[1] != 6) {
    throw FormatError(r.source() + ": array '" + prefix + "leads' must have shape (leads, 6)");
  }
  const auto& v = r.doubles(prefix + "leads");
  for (std::size_t i = 0; i + 5 < v.size(); i += 6) {
    uncertainty::LeadCalibration lead;
    lead.lead = static_cast<std::size_t>(v[i]);
    lead.count = static_cast<std::size_t>(v[i + 1]);
    lead.rank = static_cast<std::size_t>(v[i + 2]);
    lead.score_quantile = v[i + 3];
    lead.coverage_before = v[i + 4];
    lead.coverage_after = v[i + 5];
    state.leads.push_back(lead);
  }
  return state;
}

void write_calibrator(io::ModelBundle& bundle, const std::string& prefix, const uncertainty::CalibratorState& state) {
  bundle.text[prefix + "score"] = uncertainty::to_string(state.options.score);
  bundle.arrays[prefix + "settings"] =
      io::NamedArray::of_doubles({2}, {state.options.miscoverage, state.options.per_lead ? 1.0 : 0.0});
  std::vector<double> values;
  for (const auto& lead : state.leads) {
    values.insert(values.end(),
                  {static_cast<double>(lead.lead), static_cast<double>(lead.count), static_cast<double>(lead.rank),
                   lead.score_quantile, lead.coverage_before, lead.coverage_after});
  }
  bundle.arrays[prefix + "leads"] = io::NamedArray::of_doubles({state.leads.size(), 6}, std::move(values));
}

}  // namespace

// ---------------------------------------------------------------------------------------------------------------
// fit_job
// ---------------------------------------------------------------------------------------------------------------

FitSummary fit_job(const JobConfig& job_in, const RunOptions& run_options, const std::filesystem::path& bundle_path) {
  const auto started = Clock::now();
  const JobConfig job = effective_job(job_in, run_options.seed);
  const int threads = thread_count(run_options.threads, job.threads);
  omp_set_num_threads(threads);
  auto report = [&](const std::string& stage, const std::string& detail, std::size_t done, std::size_t total) {
    if (!run_options.progress) return;
    run_options.progress({stage, detail, done, total, std::chrono::duration<double>(Clock::now() - started).count()});
  };
  FitSummary summary;
  summary.bundle = bundle_path.empty() ? job.output_directory / "model.h5" : bundle_path;

  report("reading", "", 0, job.files.size());
  io::ReadOptions read = read_options_of(job);
  read.sites = job.sites;
  const data::Panel panel = detail::read_joined_panel(job.files, read, summary.warnings);
  report("reading", "", job.files.size(), job.files.size());
  const std::vector<std::string> problems = job.periods.problems(panel.axis());
  if (!problems.empty()) {
    std::string message =
        job.job_path.string() + ": " + std::to_string(problems.size()) + " problem(s) with the periods and the data:";
    for (const auto& p : problems) message += "\n  " + p;
    throw ConfigError(message);
  }
  const data::FeaturePlan plan = data::FeaturePlan::fit(panel, job.features, job.periods.fit);
  const data::FeatureTable table(panel, plan);
  const detail::ScoreScale score_scale(job, plan);
  const auto& axis = panel.axis();
  const std::size_t leads = job.windows.lead_count();
  const std::size_t level_count = job.quantiles.size();
  const std::size_t site_count = panel.site_count();

  // ---- Bundle head: what the job is and where it came from --------------------------------------------------------
  io::ModelBundle bundle;
  bundle.text["bundle.kind"] = job_bundle_kind;
  bundle.text["bundle.layout_version"] = std::to_string(job_bundle_layout_version);
  bundle.text["job.text"] = job.job_text;
  bundle.text["job.path"] = job.job_path.string();
  bundle.text["job.name"] = job.name;
  bundle.text["job.seed"] = std::to_string(job.seed);
  bundle.text["provenance.library_version"] = version();
  bundle.text["provenance.git_commit"] = git_commit();
  bundle.text["provenance.created"] = detail::now_iso();
  std::string inputs;
  for (const auto& f : job.files) inputs += io::sha256_of_file(f) + "  " + f.string() + "\n";
  bundle.text["provenance.inputs"] = inputs;
  bundle.text["caution"] = caution_text();
  const auto& target_info = panel.variables()[plan.target_variable()];
  bundle.text["target.variable"] = target_info.name;
  bundle.text["target.units"] = target_info.units;
  bundle.text["target.standard_name"] = target_info.standard_name;
  bundle.arrays["data.step_seconds"] = io::NamedArray::of_doubles({}, {static_cast<double>(axis.step_seconds())});
  bundle.text["features.options"] = feature_options_text(job.features);
  bundle.text["features.dynamic_feature_names"] = join(plan.dynamic_feature_names(), "\n");
  bundle.text["features.scaling_site_ids"] = join(plan.site_ids(), "\n");
  bundle.arrays["features.dynamic_scaling"] = scaling_array(plan.dynamic_scaling());
  bundle.arrays["features.static_scaling"] = scaling_array(plan.static_scaling());
  bundle.arrays["features.target_scaling"] = scaling_array(plan.all_target_scaling());
  bundle.text["windows.options"] = window_options_text(job.windows);
  bundle.arrays["quantile_levels"] = io::NamedArray::of_doubles({level_count}, job.quantiles);
  bundle.arrays["intervals"] = io::NamedArray::of_doubles({job.intervals.size()}, job.intervals);
  bundle.text["calibration.method"] = to_string(job.calibration);

  // ---- Models, exactly as run_job groups, seeds and trains them ----------------------------------------------------
  const std::vector<std::vector<std::size_t>> models = detail::model_sites(job, site_count);
  const uncertainty::EnsembleOptions ensemble_options = detail::ensemble_options_for(job, plan);
  const data::IndexRange fit_range = data::index_range(axis, job.periods.fit);
  const auto all_train = data::make_windows(table, job.windows, fit_range, true);
  const auto all_validation =
      job.periods.validation
          ? data::make_windows(table, job.windows, data::index_range(axis, *job.periods.validation), true)
          : std::vector<data::Window>{};
  const auto all_calibration =
      job.periods.calibration
          ? data::make_windows(table, job.windows, data::index_range(axis, *job.periods.calibration), true)
          : std::vector<data::Window>{};

  // What one model adds to the bundle and the summary, kept apart so that models can train in parallel and be
  // merged in model order (the same bundle for any thread count); the same rule for going parallel as run_job.
  struct FitLog {
    io::ModelBundle part;
    std::vector<io::TrainingRecord> training;
    std::vector<std::string> calibration;
    std::vector<std::string> warnings;
    bool stored = false;
  };
  std::vector<FitLog> logs(models.size());
  auto fit_one = [&](std::size_t m, FitLog& log) {
    const auto& model_sites = models[m];
    const std::string model_name = detail::model_name(job, panel, model_sites);
    const std::optional<uncertainty::Ensemble> trained =
        detail::train_model(table, job, ensemble_options, all_train, all_validation, model_sites, m);
    if (!trained) {
      log.warnings.push_back("model " + model_name +
                             ": no training window with an observed target in the fit "
                             "period; not stored, its sites get no forecast");
      return;
    }
    const uncertainty::Ensemble& ensemble = *trained;
    log.stored = true;

    const std::string prefix = model_prefix(m);
    std::vector<std::string> site_ids;
    for (std::size_t s : model_sites) site_ids.push_back(panel.sites()[s].id);
    log.part.text[prefix + "name"] = model_name;
    log.part.text[prefix + "sites"] = join(site_ids, "\n");
    log.part.arrays[prefix + "member_count"] =
        io::NamedArray::of_doubles({}, {static_cast<double>(ensemble.members().size())});
    for (std::size_t k = 0; k < ensemble.members().size(); ++k) {
      const auto& member = ensemble.members()[k];
      const io::ModelBundle network = train::to_bundle(ensemble.networks()[k], &member.summary);
      const std::string mp = member_prefix(m, k);
      for (const auto& [key, value] : network.text) log.part.text[mp + key] = value;
      for (const auto& [key, value] : network.arrays) log.part.arrays[mp + key] = value;
      log.part.text[mp + "seed"] = std::to_string(member.seed);
      log.part.arrays[mp + "windows_drawn"] =
          io::NamedArray::of_doubles({}, {static_cast<double>(member.windows_drawn)});

      const auto& ts = member.summary;
      io::TrainingRecord record = detail::training_record(model_name, k, member);
      if (ts.termination == train::TerminationReason::diverged) {
        log.warnings.push_back("model " + model_name + ", member " + std::to_string(k) + ": training diverged (" +
                               ts.termination_detail + "); member left out of forecasts");
      }
      log.training.push_back(std::move(record));
    }

    // Calibrators on the calibration period: the same predictions, seed and CQR options as run_job.
    if (job.calibration == CalibrationMethod::none) return;
    detail::WindowSource calibration(table, job.windows, detail::windows_of_sites(all_calibration, model_sites));
    if (calibration.size() == 0) {
      log.warnings.push_back("model " + model_name +
                             ": no calibration window with an observed target; "
                             "intervals left uncalibrated");
      return;
    }
    const auto cal_members = ensemble.predict(calibration, job.seed + 29);
    const auto cal_dist =
        detail::to_target_units(cal_members, table, calibration.windows(), leads, job.quantiles, false);
    std::vector<double> observed;
    std::vector<std::size_t> lead_of_case;
    for (std::size_t c = 0; c < cal_dist.cases; ++c) {
      const auto& w = calibration.windows()[c / leads];
      observed.push_back(
          score_scale.forward(table.observed_target(w.site, detail::target_step(job.windows, w.issue, c % leads))));
      lead_of_case.push_back(c % leads);
    }
    const bool per_lead = detail::calibrate_per_lead(job, observed, lead_of_case, leads);
    for (std::size_t i = 0; i < job.intervals.size(); ++i) {
      const double coverage = job.intervals[i];
      const std::size_t lo = detail::level_position(job.quantiles, (1 - coverage) / 2);
      const std::size_t hi = detail::level_position(job.quantiles, (1 + coverage) / 2);
      std::vector<double> lower, upper;
      for (std::size_t c = 0; c < cal_dist.cases; ++c) {
        lower.push_back(score_scale.forward(cal_dist.quantiles[c * level_count + lo]));
        upper.push_back(score_scale.forward(cal_dist.quantiles[c * level_count + hi]));
      }
      const auto calibrator = detail::fit_interval_calibrator(observed, lower, upper, lead_of_case, coverage, per_lead);
      write_calibrator(log.part, interval_prefix(m, i), calibrator.state());
      char label[32];
      std::snprintf(label, sizeof label, "%g", coverage);
      std::string line = "model " + model_name + ", interval " + label + ":";
      for (const auto& lead : calibrator.state().leads) {
        char buffer[96];
        if (per_lead) {
          std::snprintf(buffer, sizeof buffer, " lead %zu n=%zu Q=%.4g;", lead.lead + 1, lead.count,
                        lead.score_quantile);
        } else {
          std::snprintf(buffer, sizeof buffer, " all leads n=%zu Q=%.4g;", lead.count, lead.score_quantile);
        }
        line += buffer;
      }
      log.calibration.push_back(line);
    }
    log.part.text[prefix + "calibrated"] = "true";
  };
  std::vector<std::exception_ptr> errors;
  detail::for_each_model(
      job, threads, models.size(), [&](std::size_t m) { fit_one(m, logs[m]); },
      [&](std::size_t m, std::size_t finished) {
        report("training", "model " + detail::model_name(job, panel, models[m]), finished, models.size());
      },
      errors);
  std::vector<std::string> stored_models;
  for (std::size_t m = 0; m < models.size(); ++m) {
    if (errors[m]) std::rethrow_exception(errors[m]);
    auto& log = logs[m];
    for (auto& [key, value] : log.part.text) bundle.text[key] = std::move(value);
    for (auto& [key, value] : log.part.arrays) bundle.arrays[key] = std::move(value);
    summary.training.insert(summary.training.end(), log.training.begin(), log.training.end());
    summary.calibration.insert(summary.calibration.end(), log.calibration.begin(), log.calibration.end());
    summary.warnings.insert(summary.warnings.end(), log.warnings.begin(), log.warnings.end());
    if (log.stored) {
      ++summary.models_trained;
      stored_models.push_back(std::to_string(m));
    }
  }
  report("training", "", models.size(), models.size());
  bundle.text["models"] = join(stored_models, "\n");
  bundle.text["warnings"] = join(summary.warnings, "\n");

  report("writing", summary.bundle.filename().string(), 0, 1);
  if (summary.bundle.has_parent_path()) std::filesystem::create_directories(summary.bundle.parent_path());
  io::save_bundle(summary.bundle, bundle);
  report("writing", "", 1, 1);
  summary.wall_seconds = std::chrono::duration<double>(Clock::now() - started).count();
  return summary;
}

std::string FitSummary::brief_report() const {
  std::ostringstream out;
  char seconds[32];
  std::snprintf(seconds, sizeof seconds, "%.1f", wall_seconds);
  out << models_trained << " model(s), " << training.size() << " member(s) trained, " << seconds << " s\n";
  for (const auto& line : calibration) out << "calibrated " << line << "\n";
  for (const auto& w : warnings) out << "warning: " << w << "\n";
  out << "wrote " << bundle.string() << "\n";
  return out.str();
}

// ---------------------------------------------------------------------------------------------------------------
// forecast_from_bundle
// ---------------------------------------------------------------------------------------------------------------

ForecastResult forecast_from_bundle(const std::filesystem::path& bundle_path,
                                    const std::vector<std::filesystem::path>& data_files, data::UtcSeconds issue_time,
                                    std::size_t horizon, const ForecastOptions& options) {
  const std::string source = bundle_path.string();
  const io::ModelBundle bundle = io::load_bundle(bundle_path);
  const BundleReader r(bundle, source);
  if (!r.has_text("bundle.kind") || r.text("bundle.kind") != job_bundle_kind) {
    throw FormatError(source + ": not a bundle of a whole job (text entry 'bundle.kind' should be '" +
                      std::string(job_bundle_kind) + "'; write one with `runnel fit`)");
  }
  if (r.text("bundle.layout_version") != std::to_string(job_bundle_layout_version)) {
    throw FormatError(source + ": bundle.layout_version = '" + r.text("bundle.layout_version") +
                      "', this library reads " + std::to_string(job_bundle_layout_version));
  }
  // The job text is the source of truth for every option; the stored option texts guard against a library whose
  // parser would read the same text differently.
  const JobConfig job = effective_job(parse_job(r.text("job.text"), r.text("job.path")), r.unsigned_text("job.seed"));
  if (feature_options_text(job.features) != r.text("features.options")) {
    throw FormatError(source +
                      ": features.options differ from what the stored job text parses to; the bundle was "
                      "written by another library version");
  }
  if (window_options_text(job.windows) != r.text("windows.options")) {
    throw FormatError(source +
                      ": windows.options differ from what the stored job text parses to; the bundle was "
                      "written by another library version");
  }
  const std::size_t leads = job.windows.lead_count();
  if (horizon == 0 || horizon > leads) {
    throw ConfigError("horizon: " + std::to_string(horizon) + " is outside 1.." + std::to_string(leads) +
                      ": the bundle " + source + " forecasts " + std::to_string(leads) +
                      " lead(s) (windows.horizon of its job)");
  }
  omp_set_num_threads(thread_count(options.threads, job.threads));
  if (data_files.empty()) throw ConfigError("data: at least one data file is required");

  ForecastResult result;
  result.issue_time = issue_time;
  result.quantile_levels = job.quantiles;
  result.target_variable = r.text("target.variable");
  result.target_units = r.text("target.units");
  result.target_standard_name = r.text("target.standard_name");
  result.mode = data::to_string(job.windows.mode);
  result.job_name = job.name;
  result.bundle = bundle_path;

  // ---- The latest data, restricted to the bundle's sites ---------------------------------------------------------
  std::vector<std::string> model_keys = split_lines(r.text("models"));
  std::vector<std::string> bundle_sites;
  for (const auto& m : model_keys) {
    for (const auto& id : split_lines(r.text("model" + m + ".sites"))) bundle_sites.push_back(id);
  }
  data::Panel read_panel = detail::read_joined_panel(data_files, read_options_of(job), result.warnings);
  {
    std::vector<bool> drop;
    for (const auto& s : read_panel.sites()) {
      drop.push_back(std::find(bundle_sites.begin(), bundle_sites.end(), s.id) == bundle_sites.end());
    }
    read_panel.remove_sites(drop);
  }
  for (const auto& id : bundle_sites) {
    if (!read_panel.find_site(id)) result.warnings.push_back("site " + id + ": not in the data; no forecast");
  }
  if (read_panel.site_count() == 0) {
    throw DataError(join(std::vector<std::string>(data_files.begin(), data_files.end()), ", ") +
                    ": none of the bundle's sites (" + join(bundle_sites, ", ") + ") is in the data");
  }
  const auto& data_axis = read_panel.axis();
  const auto bundle_step = static_cast<std::int64_t>(r.doubles("data.step_seconds").at(0));
  if (data_axis.step_seconds() != bundle_step) {
    throw DataError(data_files.front().string() + ": time step " + data_axis.describe_step() +
                    " differs from the step the bundle " + source + " was fitted on (" + std::to_string(bundle_step) +
                    " s)");
  }
  result.step_seconds = bundle_step;
  const std::string issue_text = data::format_iso8601(issue_time);
  if (issue_time > data_axis.end()) {
    throw ConfigError("issue time " + issue_text + " is after the end of the data (" +
                      data::format_iso8601(data_axis.end()) + " in " + data_files.front().string() + ")");
  }
  const std::int64_t found = data_axis.index_of(issue_time);
  if (found < 0) {
    throw ConfigError("issue time " + issue_text + " is not on the data's time grid (start " +
                      data::format_iso8601(data_axis.start()) + ", step " + data_axis.describe_step() + ")");
  }
  const auto issue = static_cast<std::size_t>(found);
  const std::size_t lookback = job.windows.lookback_steps;
  if (issue + 1 < lookback) {
    throw ConfigError("issue time " + issue_text + " needs " + std::to_string(lookback) +
                      " steps of history (windows.lookback), from " +
                      data::format_iso8601(issue_time - static_cast<std::int64_t>(lookback - 1) * bundle_step) +
                      "; the data in " + data_files.front().string() + " start at " +
                      data::format_iso8601(data_axis.start()));
  }

  // The lead steps must lie on the axis so that their calendar features are computed as in the hindcast; past the
  // data's end their values stay missing.
  const std::size_t needed = issue + 1 + (job.windows.mode == data::WindowMode::forecast ? leads : 0);
  data::Panel panel(data::TimeAxis(data_axis.start(), bundle_step, std::max(needed, data_axis.length())),
                    read_panel.sites(), read_panel.variables());
  for (std::size_t s = 0; s < read_panel.site_count(); ++s) {
    std::copy(read_panel.site_values(s).begin(), read_panel.site_values(s).end(), panel.site_values(s).begin());
  }
  for (const auto& src : read_panel.sources()) panel.add_source(src);

  const data::FeaturePlan plan = data::FeaturePlan::restore(
      panel, job.features, r.scaling("features.dynamic_scaling"), r.scaling("features.static_scaling"),
      r.scaling("features.target_scaling"), split_lines(r.text("features.scaling_site_ids")));
  const data::FeatureTable table(panel, plan);
  const detail::ScoreScale score_scale(job, plan);
  const auto windows = data::make_issue_windows(table, job.windows, {issue});  // one per site, in panel order

  if (job.windows.mode == data::WindowMode::forecast && job.features.lagged_target) {
    for (std::size_t s = 0; s < panel.site_count(); ++s) {
      bool any = false;
      for (std::size_t t = issue + 1 - lookback; t <= issue && !any; ++t)
        any = std::isfinite(table.observed_target(s, t));
      if (!any) {
        result.warnings.push_back("site " + panel.sites()[s].id + ": no observed " + result.target_variable +
                                  " in the " + std::to_string(lookback) + " steps up to " + issue_text +
                                  "; the forecast runs on the inputs alone");
      }
    }
  }

  // ---- Predict with each stored model ----------------------------------------------------------------------------
  const std::size_t level_count = job.quantiles.size();
  std::vector<std::optional<SiteForecast>> per_site(panel.site_count());
  bool any_calibrated = false;
  for (const auto& key : model_keys) {
    std::size_t m = 0;
    const auto [end, error] = std::from_chars(key.data(), key.data() + key.size(), m);
    if (error != std::errc() || end != key.data() + key.size()) {
      throw FormatError(source + ": text entry 'models' holds '" + key + "', expected model numbers");
    }
    std::vector<data::Window> model_windows;
    for (const auto& id : split_lines(r.text(model_prefix(m) + "sites"))) {
      if (const auto s = panel.find_site(id)) model_windows.push_back(windows[*s]);
    }
    if (model_windows.empty()) continue;
    const auto member_count = static_cast<std::size_t>(r.doubles(model_prefix(m) + "member_count").at(0));
    std::vector<nn::Network<float>> networks;
    std::vector<uncertainty::EnsembleMember> members;
    for (std::size_t k = 0; k < member_count; ++k) {
      const std::string mp = member_prefix(m, k);
      auto loaded = train::from_bundle<float>(r.sub_bundle(mp), source + " (" + mp + ")");
      uncertainty::EnsembleMember member;
      if (!loaded.summary) throw FormatError(source + ": member '" + mp + "' has no training summary");
      member.summary = *loaded.summary;
      member.seed = r.unsigned_text(mp + "seed");
      member.windows_drawn = static_cast<std::size_t>(r.doubles(mp + "windows_drawn").at(0));
      networks.push_back(std::move(loaded.network));
      members.push_back(std::move(member));
    }
    auto ensemble_options = detail::ensemble_options_for(job, plan);
    ensemble_options.resampling.seed = detail::model_seed(job.seed, m);
    const auto ensemble =
        uncertainty::Ensemble::from_networks(ensemble_options, std::move(networks), std::move(members));
    detail::WindowSource issue_source(table, job.windows, model_windows);
    const auto predicted = ensemble.predict(issue_source, job.seed + 17);
    auto dist = detail::to_target_units(predicted, table, issue_source.windows(), leads, job.quantiles, false);

    if (r.has_text(model_prefix(m) + "calibrated")) {
      any_calibrated = true;
      for (std::size_t i = 0; i < job.intervals.size(); ++i) {
        const auto calibrator = uncertainty::Calibrator::from_state(read_calibrator(r, interval_prefix(m, i)));
        const std::size_t lo = detail::level_position(job.quantiles, (1 - job.intervals[i]) / 2);
        const std::size_t hi = detail::level_position(job.quantiles, (1 + job.intervals[i]) / 2);
        for (std::size_t c = 0; c < dist.cases; ++c) {
          const auto interval =
              calibrator.quantile_interval(score_scale.forward(dist.quantiles[c * level_count + lo]),
                                           score_scale.forward(dist.quantiles[c * level_count + hi]), c % leads);
          dist.quantiles[c * level_count + lo] = score_scale.inverse(interval.lower);
          dist.quantiles[c * level_count + hi] = score_scale.inverse(interval.upper);
        }
      }
      detail::order_calibrated_quantiles(dist.quantiles, job.quantiles, job.intervals);
    }
    for (std::size_t i = 0; i < model_windows.size(); ++i) {
      const std::size_t s = model_windows[i].site;
      SiteForecast f;
      f.site = panel.sites()[s];
      for (std::size_t k = 0; k < horizon; ++k) {
        const std::size_t c = i * leads + k;
        const auto lead = static_cast<std::int64_t>(job.windows.mode == data::WindowMode::forecast ? k + 1 : 0);
        f.leads.push_back(lead);
        f.valid_times.push_back(issue_time + lead * bundle_step);
        f.mean.push_back(dist.mean[c]);
        f.median.push_back(dist.median[c]);
        for (std::size_t q = 0; q < level_count; ++q) f.quantiles.push_back(dist.quantiles[c * level_count + q]);
      }
      per_site[s] = std::move(f);
    }
  }
  result.calibrated = any_calibrated;
  for (auto& f : per_site) {
    if (f) result.sites.push_back(std::move(*f));
  }
  if (options.csv) {
    write_forecast_csv(*options.csv, result);
    result.outputs.push_back(*options.csv);
  }
  if (options.netcdf) {
    write_forecast_netcdf(*options.netcdf, result);
    result.outputs.push_back(*options.netcdf);
  }
  return result;
}

std::string ForecastResult::brief_report() const {
  std::ostringstream out;
  out << "issued " << data::format_iso8601(issue_time) << " from " << bundle.string() << ": " << sites.size()
      << " site(s), " << (sites.empty() ? 0 : sites.front().leads.size()) << " lead(s), "
      << (calibrated ? "calibrated" : "uncalibrated") << " intervals\n";
  for (const auto& w : warnings) out << "warning: " << w << "\n";
  for (const auto& path : outputs) out << "wrote " << path.string() << "\n";
  return out.str();
}

}  // namespace libseq::pipeline
