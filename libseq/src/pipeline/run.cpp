#include "libseq/pipeline/run.hpp"

#include <omp.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <exception>
#include <map>
#include <set>
#include <sstream>

#include "case_sets_impl.hpp"
#include "libseq/baselines/climatology.hpp"
#include "libseq/baselines/exp_smoothing.hpp"
#include "libseq/baselines/intervals.hpp"
#include "libseq/baselines/local_level.hpp"
#include "libseq/baselines/persistence.hpp"
#include "libseq/baselines/ridge_arx.hpp"
#include "libseq/baselines/seasonal_naive.hpp"
#include "libseq/caution.hpp"
#include "libseq/error.hpp"
#include "libseq/io/reader.hpp"
#include "libseq/metrics/deterministic.hpp"
#include "libseq/metrics/scorecard.hpp"
#include "libseq/pipeline/report.hpp"
#include "libseq/pipeline/score.hpp"
#include "libseq/uncertainty/conformal.hpp"
#include "libseq/uncertainty/ensemble.hpp"
#include "libseq/version.hpp"
#include "run_impl.hpp"

namespace libseq::pipeline {

namespace {

using Clock = std::chrono::steady_clock;

// ---------------------------------------------------------------------------------------------------------------
// Reading
// ---------------------------------------------------------------------------------------------------------------

// Reads every variable of every file (joined by site), so that every input the job names can be checked against
// what the files hold before any work starts.
data::Panel load_panel(const JobConfig& job, std::vector<std::string>& warnings) {
  io::ReadOptions read;
  read.sites = job.sites;
  for (const auto& [variable, units] : job.units) read.target_units[variable] = units;
  return detail::read_joined_panel(job.files, read, warnings);
}

// Every input of the job that the panel lacks, each naming its key.
std::vector<std::string> input_problems(const JobConfig& job, const data::Panel& panel) {
  std::string files;
  for (const auto& f : job.files) files += (files.empty() ? "" : ", ") + f.string();
  std::string present;
  for (const auto& v : panel.variables()) {
    present += (present.empty() ? "" : ", ") + v.name;
    if (!v.standard_name.empty()) present += " (" + v.standard_name + ")";
  }
  std::vector<std::string> problems;
  auto check = [&](const std::string& key, const std::string& name) {
    if (!panel.find_variable(name)) {
      problems.push_back(key + ": '" + name + "' is not in " + files +
                         " (by name or standard_name; variables "
                         "present: " +
                         present + ")");
    }
  };
  check("target.variable", job.features.target);
  for (const auto& name : job.features.dynamic_inputs) check("inputs.dynamic", name);
  for (const auto& name : job.features.static_inputs) {
    for (const auto& site : panel.sites()) {
      if (site.attributes.count(name)) continue;
      std::string attributes;
      for (const auto& [a, value] : site.attributes) attributes += (attributes.empty() ? "" : ", ") + a;
      problems.push_back("inputs.static: '" + name + "' is not a static attribute of site '" + site.id + "' in " +
                         files + " (attributes present: " + (attributes.empty() ? "none" : attributes) + ")");
      break;
    }
  }
  return problems;
}

// ---------------------------------------------------------------------------------------------------------------
// Per-site hindcast assembly
// ---------------------------------------------------------------------------------------------------------------

struct SiteCases {
  std::vector<std::size_t> issues;  // issue steps (forecast) or simulated steps (simulation), increasing
  std::vector<double> observed;     // issues × leads, target units
};

io::ForecastBlock make_block(const std::string& method, std::size_t n, std::size_t leads,
                             const std::vector<double>& levels) {
  io::ForecastBlock b;
  b.method = method;
  b.mean.assign(n * leads, NAN);
  b.median.assign(n * leads, NAN);
  b.quantile_levels = levels;
  b.quantiles.assign(n * leads * levels.size(), NAN);
  return b;
}

// ---------------------------------------------------------------------------------------------------------------
// Baselines
// ---------------------------------------------------------------------------------------------------------------

std::unique_ptr<baselines::Forecaster> make_baseline(baselines::BaselineKind kind, const JobConfig& job,
                                                     std::int64_t step_seconds) {
  const bool sub_daily = step_seconds < 86400;
  const std::size_t day = sub_daily ? static_cast<std::size_t>(86400 / step_seconds) : 1;
  const std::size_t season = job.seasonal_period ? job.seasonal_period : (sub_daily ? day : 365);
  switch (kind) {
    case baselines::BaselineKind::persistence:
      return std::make_unique<baselines::Persistence>();
    case baselines::BaselineKind::seasonal_naive: {
      baselines::SeasonalNaiveOptions o;
      o.period_steps = job.naive_period ? job.naive_period : season;
      return std::make_unique<baselines::SeasonalNaive>(o);
    }
    case baselines::BaselineKind::climatology:
      return std::make_unique<baselines::Climatology>(job.climatology);
    case baselines::BaselineKind::ridge_arx:
      return std::make_unique<baselines::RidgeArx>(job.ridge);
    case baselines::BaselineKind::exp_smoothing: {
      baselines::ExpSmoothingOptions o;
      o.model = job.smoothing;
      o.period_steps = season;
      o.second_period_steps = job.second_seasonal_period ? job.second_seasonal_period : (sub_daily ? 7 * day : 0);
      return std::make_unique<baselines::ExpSmoothing>(o);
    }
    case baselines::BaselineKind::local_level:
      return std::make_unique<baselines::LocalLevel>();
  }
  throw ConfigError("baselines.methods: unknown baseline");
}

using detail::block_from_set;
using detail::calibrate_sets;
using detail::CaseSet;
using detail::round_to_float;
using detail::set_from_block;
using detail::split_by_site;

}  // namespace

// ---------------------------------------------------------------------------------------------------------------
// The job
// ---------------------------------------------------------------------------------------------------------------

RunSummary run_job(const JobConfig& job_in, const RunOptions& run_options) {
  const auto started = Clock::now();
  JobConfig job = job_in;
  if (run_options.seed) {
    job.seed = *run_options.seed;
    job.training.seed = job.seed;
    job.resampling.seed = job.seed;
  }
  const int threads =
      run_options.threads.value_or(job.threads) > 0 ? run_options.threads.value_or(job.threads) : omp_get_num_procs();
  omp_set_num_threads(threads);
  auto report = [&](const std::string& stage, const std::string& detail, std::size_t done, std::size_t total) {
    if (!run_options.progress) return;
    run_options.progress({stage, detail, done, total, std::chrono::duration<double>(Clock::now() - started).count()});
  };

  io::RunResults results;
  report("reading", "", 0, job.files.size());
  data::Panel panel = load_panel(job, results.warnings);
  report("reading", "", job.files.size(), job.files.size());

  // Periods against the data, and inputs against the files: all problems at once.
  std::vector<std::string> problems = input_problems(job, panel);
  for (auto& p : job.periods.problems(panel.axis())) problems.push_back(std::move(p));
  if (!problems.empty()) {
    std::string message = job.job_path.string() + ": " + std::to_string(problems.size()) +
                          " problem(s) with the job's inputs and periods against the data:";
    for (const auto& p : problems) message += "\n  " + p;
    throw ConfigError(message);
  }
  const data::FeaturePlan plan = data::FeaturePlan::fit(panel, job.features, job.periods.fit);
  const data::FeatureTable table(panel, plan);
  const detail::ScoreScale score_scale(job, plan);
  const auto& axis = panel.axis();
  const data::IndexRange fit_range = data::index_range(axis, job.periods.fit);
  const data::IndexRange validation_range =
      job.periods.validation ? data::index_range(axis, *job.periods.validation) : data::IndexRange{};
  const data::IndexRange calibration_range =
      job.periods.calibration ? data::index_range(axis, *job.periods.calibration) : data::IndexRange{};
  const data::IndexRange test_range = data::index_range(axis, *job.periods.test);
  const std::size_t leads = job.windows.lead_count();
  const std::size_t level_count = job.quantiles.size();

  // Results skeleton: one SiteResults per site with the test cases.
  const std::size_t site_count = panel.site_count();
  const auto all_test = data::make_windows(table, job.windows, test_range, false);
  std::vector<SiteCases> cases(site_count);
  for (const auto& w : all_test) cases[w.site].issues.push_back(w.issue);
  results.title = job.title;
  results.summary = job.summary;
  results.mode = data::to_string(job.windows.mode);
  const auto& target_info = panel.variables()[plan.target_variable()];
  results.target_variable = target_info.name;
  results.target_units = target_info.units;
  results.target_standard_name = target_info.standard_name;
  results.step_seconds = axis.step_seconds();
  for (std::size_t k = 0; k < leads; ++k) {
    results.leads.push_back(job.windows.mode == data::WindowMode::forecast ? static_cast<std::int64_t>(k + 1) : 0);
  }
  results.test_period = job.periods.test->to_string();
  for (std::size_t s = 0; s < site_count; ++s) {
    io::SiteResults site;
    site.site = panel.sites()[s];
    for (std::size_t issue : cases[s].issues) {
      site.issue_times.push_back(axis.time_at(issue));
      for (std::size_t k = 0; k < leads; ++k) {
        const std::size_t step = detail::target_step(job.windows, issue, k);
        site.observed.push_back(table.observed_target(s, step));
        cases[s].observed.push_back(table.observed_target(s, step));
      }
    }
    results.sites.push_back(std::move(site));
  }

  // ---- Networks: one ensemble per model -------------------------------------------------------------------------
  const std::vector<std::vector<std::size_t>> models = detail::model_sites(job, site_count);
  const uncertainty::EnsembleOptions ensemble_options = detail::ensemble_options_for(job, plan);

  const auto all_train = data::make_windows(table, job.windows, fit_range, true);
  const auto all_validation = validation_range.empty() ? std::vector<data::Window>{}
                                                       : data::make_windows(table, job.windows, validation_range, true);
  const auto all_calibration = calibration_range.empty()
                                   ? std::vector<data::Window>{}
                                   : data::make_windows(table, job.windows, calibration_range, true);
  // The selection period chooses the final forecast's combination: validation, else calibration.
  const auto& all_selection = all_validation.empty() ? all_calibration : all_validation;
  std::vector<CaseSet> raw_test(site_count), raw_selection(site_count), raw_calibration(site_count);
  std::vector<io::ForecastBlock> member_blocks(site_count);
  RunSummary summary;
  // Checkpoints for --resume: one results file per finished model, valid only for the same job text, seed and
  // input files (the fingerprint), removed when the run completes.
  for (const auto& f : job.files) results.provenance.inputs.push_back({f.string(), io::sha256_of_file(f)});
  std::string fingerprint = job.job_text + "\nseed " + std::to_string(job.seed);
  for (const auto& input : results.provenance.inputs) fingerprint += "\n" + input.sha256;
  const auto checkpoint_dir = job.output_directory / ".resume";
  auto checkpoint_path = [&](std::size_t m) {
    char name[32];
    std::snprintf(name, sizeof name, "model_%05zu.h5", m);
    return checkpoint_dir / name;
  };
  if (!run_options.resume) std::filesystem::remove_all(checkpoint_dir);
  std::filesystem::create_directories(checkpoint_dir);
  // What training one model adds to the results, kept apart so that models can train in parallel and still be
  // merged in model order (the same results for any thread count).
  struct ModelLog {
    std::vector<io::TrainingRecord> training;
    std::vector<std::uint64_t> seeds;
    std::vector<std::string> warnings;
    bool trained = false;
    bool resumed = false;
  };
  std::vector<ModelLog> logs(models.size());
  // Each model writes only its own sites' slots (raw_test, raw_selection, raw_calibration, member_blocks) and its
  // own log. HDF5 (checkpoints) is not thread-safe in Debian's serial build, hence the named critical sections.
  auto train_one = [&](std::size_t m, ModelLog& log) {
    const auto& model_sites = models[m];
    const std::string model_name = detail::model_name(job, panel, model_sites);
    if (run_options.resume && std::filesystem::exists(checkpoint_path(m))) {
      io::RunResults done;
#pragma omp critical(runnel_hdf5)
      done = io::read_results_hdf5(checkpoint_path(m));
      if (done.summary == fingerprint && done.sites.size() == 3 * model_sites.size()) {
        for (std::size_t i = 0; i < model_sites.size(); ++i) {
          const std::size_t s = model_sites[i];
          raw_test[s] = set_from_block(done.sites[3 * i], done.sites[3 * i].methods.at(0), axis);
          raw_selection[s] = set_from_block(done.sites[3 * i + 1], done.sites[3 * i + 1].methods.at(0), axis);
          raw_calibration[s] = set_from_block(done.sites[3 * i + 2], done.sites[3 * i + 2].methods.at(0), axis);
          member_blocks[s].member_count = done.sites[3 * i].methods.at(0).member_count;
          member_blocks[s].members = done.sites[3 * i].methods.at(0).members;
        }
        for (const auto& record : done.training) {
          log.training.push_back(record);
          log.seeds.push_back(record.seed);
        }
        log.resumed = true;
        return;
      }
      log.warnings.push_back("model " + model_name +
                             ": its checkpoint belongs to another job, seed or input; "
                             "trained again");
    }
    const std::optional<uncertainty::Ensemble> trained =
        detail::train_model(table, job, ensemble_options, all_train, all_validation, model_sites, m);
    if (!trained) {
      log.warnings.push_back("model " + model_name +
                             ": no training window with an observed target in the fit "
                             "period; the network is skipped there");
      return;
    }
    const uncertainty::Ensemble& ensemble = *trained;
    log.trained = true;
    for (std::size_t k = 0; k < ensemble.members().size(); ++k) {
      const auto& member = ensemble.members()[k];
      const auto& ts = member.summary;
      io::TrainingRecord record = detail::training_record(model_name, k, member);
      if (ts.termination == train::TerminationReason::diverged) {
        log.warnings.push_back("model " + model_name + ", member " + std::to_string(k) + ": training diverged (" +
                               ts.termination_detail + "); member left out");
      }
      log.training.push_back(std::move(record));
      log.seeds.push_back(member.seed);
    }

    // Raw (uncalibrated) network distributions on the test, selection and calibration periods, per site.
    detail::WindowSource test(table, job.windows, detail::windows_of_sites(all_test, model_sites));
    if (test.size() > 0) {
      const auto dist = detail::to_target_units(ensemble.predict(test, job.seed + 17), table, test.windows(), leads,
                                                job.quantiles, job.keep_members);
      split_by_site(test.windows(), dist, table, job.windows, leads, raw_test);
      if (dist.member_count > 0) {
        std::vector<std::size_t> position(site_count, 0);
        for (std::size_t i = 0; i < test.windows().size(); ++i) {
          const std::size_t site = test.windows()[i].site;
          auto& block = member_blocks[site];
          block.member_count = dist.member_count;
          block.members.resize(cases[site].issues.size() * leads * dist.member_count);
          const std::size_t row = position[site]++;
          for (std::size_t k = 0; k < leads; ++k) {
            for (std::size_t j = 0; j < dist.member_count; ++j) {
              block.members[(row * leads + k) * dist.member_count + j] =
                  static_cast<float>(dist.members[(i * leads + k) * dist.member_count + j]);
            }
          }
        }
      }
    }
    for (auto* period : {&raw_selection, &raw_calibration}) {
      const auto& windows = period == &raw_selection ? all_selection : all_calibration;
      detail::WindowSource source(table, job.windows, detail::windows_of_sites(windows, model_sites));
      if (source.size() == 0) continue;
      const auto dist =
          detail::to_target_units(ensemble.predict(source, job.seed + (period == &raw_selection ? 23 : 29)), table,
                                  source.windows(), leads, job.quantiles, false);
      split_by_site(source.windows(), dist, table, job.windows, leads, *period);
    }
    for (std::size_t s : model_sites) {
      round_to_float(raw_test[s]);
      round_to_float(raw_selection[s]);
      round_to_float(raw_calibration[s]);
    }
    io::RunResults checkpoint;
    checkpoint.summary = fingerprint;
    checkpoint.mode = results.mode;
    checkpoint.leads = results.leads;
    // Per site: the test entry (raw network block, members), then its selection and calibration entries.
    for (std::size_t s : model_sites) {
      for (int part = 0; part < 3; ++part) {
        const CaseSet& set = part == 0 ? raw_test[s] : (part == 1 ? raw_selection[s] : raw_calibration[s]);
        io::SiteResults site;
        site.site = panel.sites()[s];
        site.site.id += part == 0 ? "" : (part == 1 ? "#selection" : "#calibration");
        for (std::size_t issue : set.issues) site.issue_times.push_back(axis.time_at(issue));
        site.observed.assign(set.observed.begin(), set.observed.end());
        io::ForecastBlock block = block_from_set("network_raw", set, job.quantiles);
        if (part == 0) {
          block.member_count = member_blocks[s].member_count;
          block.members = member_blocks[s].members;
        }
        site.methods = {std::move(block)};
        checkpoint.sites.push_back(std::move(site));
      }
    }
    checkpoint.training = log.training;
#pragma omp critical(runnel_hdf5)
    io::write_results_hdf5(checkpoint_path(m), checkpoint);
  };
  std::vector<std::exception_ptr> errors;
  detail::for_each_model(
      job, threads, models.size(), [&](std::size_t m) { train_one(m, logs[m]); },
      [&](std::size_t m, std::size_t finished) {
        report("training", "model " + detail::model_name(job, panel, models[m]), finished, models.size());
      },
      errors);
  for (std::size_t m = 0; m < models.size(); ++m) {
    if (errors[m]) std::rethrow_exception(errors[m]);
  }
  for (auto& log : logs) {
    results.training.insert(results.training.end(), log.training.begin(), log.training.end());
    results.provenance.seeds.insert(results.provenance.seeds.end(), log.seeds.begin(), log.seeds.end());
    results.warnings.insert(results.warnings.end(), log.warnings.begin(), log.warnings.end());
    summary.models_trained += log.trained ? 1 : 0;
    summary.models_resumed += log.resumed ? 1 : 0;
  }
  report("training", "", models.size(), models.size());
  // Network intervals calibrated per model (pooled over the model's sites, per lead).
  std::vector<CaseSet> network_test = raw_test;
  if (job.calibration != CalibrationMethod::none) {
    for (const auto& model_sites : models) {
      std::vector<const CaseSet*> calibration;
      std::vector<CaseSet*> test;
      for (std::size_t s : model_sites) {
        calibration.push_back(&raw_calibration[s]);
        test.push_back(&network_test[s]);
      }
      if (!calibrate_sets(job, score_scale, calibration, test, leads, "network", results.warnings, results.notes)) {
        results.warnings.push_back(
            "network: no calibration case with an observed target for every lead; its "
            "intervals are left uncalibrated");
      }
    }
  }
  for (std::size_t s = 0; s < site_count; ++s) {
    if (network_test[s].rows() != cases[s].issues.size()) continue;  // no network at this site
    io::ForecastBlock block = block_from_set(network_method_name, network_test[s], job.quantiles);
    block.member_count = member_blocks[s].member_count;
    block.members = std::move(member_blocks[s].members);
    results.sites[s].methods.push_back(std::move(block));
  }

  // ---- Baselines, per site, on the same cases -------------------------------------------------------------------
  std::vector<double> mase_scales(site_count, NAN);
  // Baseline forecasts on the selection and calibration cases of the network, for the final combination.
  std::vector<std::vector<std::pair<CaseSet, CaseSet>>> baseline_sets(site_count);
  std::vector<std::vector<CaseSet>> baseline_tests(site_count);
  std::vector<std::vector<std::string>> baseline_names(site_count);
  for (std::size_t s = 0; s < site_count; ++s) {
    report("baselines", panel.sites()[s].id, s, site_count);
    std::vector<double> target(axis.length());
    for (std::size_t t = 0; t < axis.length(); ++t) target[t] = table.observed_target(s, t);
    std::vector<std::vector<double>> inputs;
    for (const auto& name : job.features.dynamic_inputs) {
      const std::size_t v = panel.require_variable(name, "job inputs");
      std::vector<double> series(axis.length());
      for (std::size_t t = 0; t < axis.length(); ++t) series[t] = panel.at(s, t, v);
      inputs.push_back(std::move(series));
    }
    baselines::SeriesSet series;
    series.target = target;
    for (const auto& in : inputs) series.inputs.emplace_back(in);
    series.axis = axis;
    // MASE scale: in-sample one-step naive error on the fit period (Hyndman & Koehler 2006).
    mase_scales[s] =
        metrics::naive_mae_scale(std::span<const double>(target).subspan(fit_range.begin, fit_range.size()), 1);
    const auto& issues = cases[s].issues;
    if (issues.empty()) continue;
    // Simulation of step t is the lead-1 forecast issued at t − 1.
    std::vector<std::size_t> baseline_issues;
    for (std::size_t issue : issues) {
      baseline_issues.push_back(job.windows.mode == data::WindowMode::forecast ? issue : issue - 1);
    }
    const baselines::IndexRange fit{fit_range.begin, fit_range.end};
    const baselines::IndexRange validation =
        validation_range.empty() ? fit : baselines::IndexRange{validation_range.begin, validation_range.end};
    const baselines::IndexRange calibration =
        calibration_range.empty() ? fit : baselines::IndexRange{calibration_range.begin, calibration_range.end};
    for (auto kind : job.baselines) {
      const std::string name = baselines::to_string(kind);
      try {
        auto forecaster = make_baseline(kind, job, axis.step_seconds());
        forecaster->fit(series, fit, validation);
        const auto points = forecaster->forecast(series, baseline_issues, leads);
        const auto quantiles =
            baselines::forecast_quantiles(*forecaster, series, baseline_issues, leads, job.quantiles, calibration);
        io::ForecastBlock block = make_block(name, issues.size(), leads, job.quantiles);
        const std::size_t median =
            static_cast<std::size_t>(std::find_if(job.quantiles.begin(), job.quantiles.end(),
                                                  [](double q) { return std::abs(q - 0.5) < 1e-9; }) -
                                     job.quantiles.begin());
        for (std::size_t i = 0; i < issues.size(); ++i) {
          for (std::size_t k = 0; k < leads; ++k) {
            block.mean[i * leads + k] = static_cast<float>(points.value(i, k));
            block.median[i * leads + k] =
                static_cast<float>(median < level_count ? quantiles.value(i, k, median) : points.value(i, k));
            for (std::size_t q = 0; q < level_count; ++q) {
              block.quantiles[(i * leads + k) * level_count + q] = static_cast<float>(quantiles.value(i, k, q));
            }
          }
        }
        // The same method on the selection and calibration cases (for the final forecast).
        auto on_cases = [&](const CaseSet& like) {
          CaseSet out = like;
          std::vector<std::size_t> at;
          for (std::size_t issue : like.issues) {
            at.push_back(job.windows.mode == data::WindowMode::forecast ? issue : issue - 1);
          }
          if (at.empty()) return out;
          const auto p = forecaster->forecast(series, at, leads);
          const auto q = baselines::forecast_quantiles(*forecaster, series, at, leads, job.quantiles, calibration);
          for (std::size_t i = 0; i < at.size(); ++i) {
            for (std::size_t k = 0; k < leads; ++k) {
              const std::size_t c = i * leads + k;
              out.mean[c] = p.value(i, k);
              out.median[c] = median < level_count ? q.value(i, k, median) : p.value(i, k);
              for (std::size_t l = 0; l < level_count; ++l) out.quantiles[c * level_count + l] = q.value(i, k, l);
            }
          }
          return out;
        };
        if (raw_selection[s].rows() > 0 && raw_calibration[s].rows() > 0 && raw_test[s].rows() == issues.size()) {
          baseline_sets[s].emplace_back(on_cases(raw_selection[s]), on_cases(raw_calibration[s]));
          CaseSet test_set = raw_test[s];
          for (std::size_t c = 0; c < test_set.mean.size(); ++c) {
            test_set.mean[c] = block.mean[c];
            test_set.median[c] = block.median[c];
          }
          for (std::size_t c = 0; c < test_set.quantiles.size(); ++c) test_set.quantiles[c] = block.quantiles[c];
          baseline_tests[s].push_back(std::move(test_set));
          baseline_names[s].push_back(name);
        }
        results.sites[s].methods.push_back(std::move(block));
      } catch (const Error& e) {
        results.warnings.push_back("site " + panel.sites()[s].id + ", baseline " + name + ": " + e.what() +
                                   "; left out at this site");
      }
    }
  }
  report("baselines", "", site_count, site_count);

  // ---- The final forecast: the network combined with a baseline (docs/methods.md, step 8) -----------------------
  for (std::size_t s = 0; s < site_count && !job.baselines.empty(); ++s) {
    if (baseline_sets[s].empty()) continue;
    auto final = detail::combine_final(job, raw_selection[s], raw_test[s], raw_calibration[s], baseline_sets[s],
                                       baseline_tests[s], baseline_names[s], results.leads);
    if (job.calibration != CalibrationMethod::none) {
      calibrate_sets(job, score_scale, {&final.calibration}, {&final.test}, leads,
                     "site " + panel.sites()[s].id + ", final", results.warnings, results.notes);
    }
    results.sites[s].methods.push_back(block_from_set(final_method_name, final.test, job.quantiles));
    results.notes.push_back("site " + panel.sites()[s].id + ", final forecast: " + final.choice);
  }

  // ---- Scoring ---------------------------------------------------------------------------------------------------
  report("scoring", "", 0, 1);
  for (std::size_t s = 0; s < site_count; ++s) results.sites[s].mase_scale = mase_scales[s];
  ScoringOptions scoring;
  scoring.metrics = job.metrics;
  scoring.intervals = job.intervals;
  scoring.bootstrap_resamples = job.bootstrap_resamples;
  scoring.bootstrap_block = std::max<std::size_t>(1, job.windows.lookback_steps / 2);
  scoring.seed = job.seed;
  results.metrics = score_hindcasts(results, scoring);
  report("scoring", "", 1, 1);

  // ---- Provenance and outputs ------------------------------------------------------------------------------------
  auto& p = results.provenance;
  p.job_text = job.job_text;
  p.job_path = job.job_path.string();
  p.library_version = version();
  p.git_commit = git_commit();
  p.created = detail::now_iso();
  p.threads = threads;
  p.wall_seconds = std::chrono::duration<double>(Clock::now() - started).count();

  std::filesystem::create_directories(job.output_directory);
  const std::size_t output_count = job.write_hdf5 + job.write_netcdf + job.write_geojson + job.write_report;
  std::size_t written = 0;
  auto output = [&](const char* name, auto&& write) {
    const auto path = job.output_directory / name;
    report("writing", name, written, output_count);
    write(path);
    summary.outputs.push_back(path);
    ++written;
  };
  if (job.write_hdf5) output("results.h5", [&](const auto& path) { io::write_results_hdf5(path, results); });
  if (job.write_netcdf) output("hindcasts.nc", [&](const auto& path) { io::write_results_netcdf(path, results); });
  if (job.write_geojson) {
    output("stations.geojson", [&](const auto& path) { io::write_station_geojson(path, results); });
  }
  if (job.write_report) output("report.html", [&](const auto& path) { write_report(path, results, {}); });
  report("writing", "", written, output_count);
  std::filesystem::remove_all(checkpoint_dir);
  summary.wall_seconds = std::chrono::duration<double>(Clock::now() - started).count();
  summary.results = std::move(results);
  return summary;
}

// ---------------------------------------------------------------------------------------------------------------
// Summaries
// ---------------------------------------------------------------------------------------------------------------

std::string RunSummary::brief_report() const {
  std::ostringstream out;
  std::set<std::string> methods;
  for (const auto& s : results.sites) {
    for (const auto& m : s.methods) methods.insert(m.method);
  }
  char seconds[32];
  std::snprintf(seconds, sizeof seconds, "%.1f", wall_seconds);
  out << results.sites.size() << " site(s), " << methods.size() << " method(s), " << models_trained
      << " model(s) trained";
  if (models_resumed) out << ", " << models_resumed << " resumed";
  out << ", " << seconds << " s\n";
  // Notes are per site; on large runs they stay in results.h5 (/notes) and the report.
  if (results.notes.size() <= 5) {
    for (const auto& n : results.notes) {
      out << "note: " << (n.size() > 160 ? n.substr(0, 157) + "..." : n) << "\n";
    }
  } else {
    out << results.notes.size()
        << " notes (the final forecast's weights and calibration choices per site) are in results.h5 /notes\n";
  }
  if (!results.notes.empty() && results.notes.size() <= 5) {
    out << "(notes in full: results.h5 /notes)\n";
  }
  for (const auto& w : results.warnings) out << "warning: " << w << "\n";
  for (const auto& path : outputs) out << "wrote " << path.string() << "\n";
  return out.str();
}

std::string RunSummary::full_report() const {
  // Per site and method: pooled-over-leads metrics. The first interval's coverage is shown.
  std::map<std::tuple<std::string, std::string, std::string>, double> value;
  std::string coverage_name;
  for (const auto& row : results.metrics) {
    if (row.lead != -1) continue;
    value[{row.site, row.method, row.metric}] = row.value;
    if (coverage_name.empty() && row.metric.rfind("coverage_", 0) == 0) coverage_name = row.metric;
  }
  const bool load_like = results.step_seconds < 86400;
  const std::vector<std::string> columns = load_like ? std::vector<std::string>{"mape", "rmse", "crps", coverage_name}
                                                     : std::vector<std::string>{"nse", "kge", "crps", coverage_name};
  std::ostringstream out;
  char line[256];
  std::snprintf(line, sizeof line, "%-16s %-16s", "site", "method");
  out << line;
  for (const auto& c : columns) {
    std::snprintf(line, sizeof line, " %12s", c.c_str());
    out << line;
  }
  out << "\n";
  auto print_site = [&](const std::string& id, const std::vector<std::string>& methods) {
    for (const auto& m : methods) {
      std::snprintf(line, sizeof line, "%-16.16s %-16.16s", id.c_str(), m.c_str());
      out << line;
      for (const auto& c : columns) {
        auto it = value.find({id, m, c});
        if (it == value.end() || !std::isfinite(it->second)) {
          std::snprintf(line, sizeof line, " %12s", "-");
        } else {
          std::snprintf(line, sizeof line, " %12.4g", it->second);
        }
        out << line;
      }
      out << "\n";
    }
  };
  std::vector<std::string> method_order;
  for (const auto& s : results.sites) {
    std::vector<std::string> methods;
    for (const auto& m : s.methods) {
      methods.push_back(m.method);
      if (std::find(method_order.begin(), method_order.end(), m.method) == method_order.end()) {
        method_order.push_back(m.method);
      }
    }
    print_site(s.site.id, methods);
  }
  print_site("*", method_order);
  out << "(metrics over all lead times of the test period " << results.test_period << "; '*' pools all sites)\n";
  return out.str();
}

}  // namespace libseq::pipeline
