#include "libseq/pipeline/job.hpp"

#include <algorithm>
#include <fstream>
#include <sstream>

#include "libseq/error.hpp"
#include "libseq/pipeline/config_reader.hpp"

namespace libseq::pipeline {

std::string to_string(ModelScope scope) { return scope == ModelScope::per_site ? "per_site" : "across_sites"; }

std::string to_string(CalibrationMethod method) {
  switch (method) {
    case CalibrationMethod::none:
      return "none";
    case CalibrationMethod::split_conformal:
      return "split_conformal";
    case CalibrationMethod::adaptive:
      return "adaptive";
  }
  return "none";
}

std::string to_string(CalibrationLeads leads) {
  return leads == CalibrationLeads::each ? "each" : (leads == CalibrationLeads::pooled ? "pooled" : "auto");
}

std::string to_string(CalibrationScale scale) { return scale == CalibrationScale::target ? "target" : "transformed"; }

namespace {

constexpr double huge = 1e300;

// Runs `parse` and turns its ConfigError into a recorded problem (so that every problem is reported together).
template <typename F>
void collect(ConfigReader& reader, F&& parse) {
  try {
    parse();
  } catch (const ConfigError& e) {
    reader.problem(e.what());
  }
}

std::optional<data::Period> optional_period(ConfigReader& reader, const char* key, const char* description) {
  const std::string text = reader.text("periods", key, "", description, "\"1974-01-01..1974-12-31\"");
  if (text.empty()) return std::nullopt;
  std::optional<data::Period> out;
  collect(reader, [&] { out = data::parse_period(text, std::string("periods.") + key); });
  return out;
}

// Reads every key of every section into `job`. Also used with an empty document to generate the reference.
void read_job(ConfigReader& r, JobConfig& job) {
  r.section("job", "Names the run and sets reproducibility and parallelism.");
  job.name = r.text("job", "name", "runnel job", "Name of the run, shown in the console summary and the report.",
                    "\"Demo catchments, daily\"");
  job.title = r.text("job", "title", "", "ACDD `title` of the output files; defaults to the name.");
  job.summary = r.text("job", "summary", "", "ACDD `summary` of the output files: what was forecast and how.");
  job.seed = static_cast<std::uint64_t>(r.integer("job", "seed", 1, 0, 9007199254740991LL, "",
                                                  "Base seed; member m of a model uses a seed derived from it, so the "
                                                  "same seed gives the same numbers with any thread count."));
  job.threads = static_cast<int>(
      r.integer("job", "threads", 0, 0, 1024, "threads", "OpenMP threads over members and sites; 0 uses all cores."));

  r.section("data", "Which files and sites to read.");
  for (const auto& f : r.texts("data", "files", {},
                               "Input files: CF NetCDF, runnel HDF5 panel or CSV "
                               "(docs/input-formats.md); relative to the job file.",
                               "[\"catchments.nc\"]")) {
    job.files.emplace_back(f);
  }
  job.sites = r.texts("data", "sites", {}, "Site ids to use; empty uses every site in the files.", "[\"BRK01\"]");
  job.units = r.text_table("data", "units",
                           "Units to convert variables to on reading (only the pairs listed in "
                           "docs/input-formats.md).",
                           "{ air_temperature = \"degC\" }");

  r.section("target", "The variable forecast and its transform.");
  job.features.target =
      r.text("target", "variable", "", "Variable to forecast (name or CF standard_name).", "\"discharge\"");
  collect(r, [&] {
    job.features.transform = data::parse_target_transform(
        r.choice("target", "transform", "none", {"none", "log", "sqrt", "box_cox"},
                 "Transform applied before scaling and inverted on every prediction; log or sqrt suit skewed "
                 "flows."),
        "target.transform");
  });
  job.features.transform_offset = r.number("target", "offset", 0.0, 0.0, huge, "target units",
                                           "Added before log, sqrt and Box-Cox so that zeros stay finite.");
  job.features.box_cox_lambda =
      r.number("target", "box_cox_lambda", 0.5, -2.0, 2.0, "", "λ of the Box-Cox transform ((y+c)^λ − 1)/λ.");

  r.section("inputs", "What the network sees at every step.");
  job.features.dynamic_inputs = r.texts("inputs", "dynamic", {},
                                        "Forcings or covariates per step (names or "
                                        "standard_names).",
                                        "[\"precipitation\", \"air_temperature\"]");
  job.features.static_inputs = r.texts("inputs", "static", {}, "Site attributes fed at every step.", "[\"area_km2\"]");
  for (const auto& c :
       r.texts("inputs", "calendar", {}, "Calendar encodings: day_of_year, hour_of_day, day_of_week, weekend, holiday.",
               "[\"day_of_year\"]")) {
    collect(r, [&] { job.features.calendar.push_back(data::parse_calendar_encoding(c, "inputs.calendar")); });
  }
  job.features.holidays =
      r.texts("inputs", "holidays", {}, "Dates (YYYY-MM-DD) flagged by the holiday encoding.", "[\"2023-12-25\"]");
  job.features.lagged_target = r.flag("inputs", "observed_target", true,
                                      "Feed the observed target up to the issue time as an input (forecast mode).");
  collect(r, [&] {
    job.features.scaling = data::parse_scaling_scope(
        r.choice("inputs", "scaling", "pooled", {"pooled", "per_site"},
                 "Standardise with statistics pooled over sites, or per site; fitted on the fit period only."),
        "inputs.scaling");
  });

  r.section("windows", "The shape of each sample.");
  collect(r, [&] {
    job.windows.mode = data::parse_window_mode(
        r.choice("windows", "mode", "forecast", {"forecast", "simulation"},
                 "forecast: issued at a step for leads 1..horizon with the target observed up to the issue; "
                 "simulation: the target at each step from the inputs alone."),
        "windows.mode");
  });
  job.windows.lookback_steps = static_cast<std::size_t>(
      r.integer("windows", "lookback", 30, 1, 100000, "steps", "History steps fed before the issue step."));
  job.windows.horizon_steps = static_cast<std::size_t>(
      r.integer("windows", "horizon", 1, 1, 10000, "steps", "Lead times 1..horizon (1 in simulation mode)."));
  job.windows.future_inputs_known =
      r.flag("windows", "future_inputs_known", false,
             "The dynamic inputs of the target steps are known at issue time (a weather forecast, or a "
             "perfect-forecast hindcast).");

  job.windows.issue_every = static_cast<std::size_t>(
      r.integer("windows", "issue_every", 1, 1, 100000, "steps",
                "One forecast every so many steps, aligned so that the first lead falls on a multiple of it since "
                "1970-01-01T00:00Z (24 on hourly data: day-ahead forecasts issued at midnight UTC)."));

  r.section("periods", "Periods as START..END (ISO 8601; a date-only END includes the whole day).");
  const std::string fit = r.required_text("periods", "fit", "Period the networks and baselines are fitted on.",
                                          "\"2008-01-01..2014-12-31\"");
  if (!fit.empty()) collect(r, [&] { job.periods.fit = data::parse_period(fit, "periods.fit"); });
  job.periods.validation = optional_period(r, "validation", "Early stopping and model choice; may equal calibration.");
  job.periods.calibration = optional_period(r, "calibration",
                                            "Interval calibration (conformal) and baseline "
                                            "residual quantiles.");
  job.periods.test = optional_period(r, "test", "The hindcast period that is scored and written.");

  r.section("network", "The recurrent network of every member.");
  collect(r, [&] {
    job.network.cell = nn::parse_cell_type(
        r.choice("network", "cell", "lstm", {"elman", "lstm", "gru"}, "Recurrent cell."), "network.cell");
  });
  collect(r, [&] {
    job.network.elman_activation = nn::parse_elman_activation(
        r.choice("network", "elman_activation", "tanh", {"tanh", "relu", "identity"}, "Activation of Elman cells."),
        "network.elman_activation");
  });
  job.network.hidden_size =
      static_cast<std::size_t>(r.integer("network", "hidden", 32, 1, 4096, "units", "Hidden units per layer."));
  job.network.layers = static_cast<std::size_t>(r.integer("network", "layers", 1, 1, 8, "", "Stacked layers."));
  collect(r, [&] {
    job.network.head = nn::parse_head_type(
        r.choice("network", "head", "gaussian", {"point", "gaussian", "quantile"},
                 "Output per lead: a point, a Gaussian (mean, log-variance, trained on its negative "
                 "log-likelihood) or quantiles (pinball loss)."),
        "network.head");
  });
  job.network.quantile_levels = r.numbers("network", "head_quantiles", {0.05, 0.25, 0.5, 0.75, 0.95}, 1e-6, 1 - 1e-6,
                                          "", "Levels of the quantile head.");
  job.network.input_dropout =
      r.number("network", "input_dropout", 0.0, 0.0, 0.95, "", "Variational dropout on the inputs.");
  job.network.recurrent_dropout =
      r.number("network", "recurrent_dropout", 0.0, 0.0, 0.95, "", "Variational dropout on the recurrent state.");
  job.network.output_dropout =
      r.number("network", "output_dropout", 0.0, 0.0, 0.95, "", "Dropout on the last state before the head.");
  collect(r, [&] {
    const std::string g = r.choice("network", "gate_bias", "standard", {"standard", "chrono"},
                                   "Gate biases at initialisation: standard (LSTM forget gate 1), or chrono "
                                   "(Tallec & Ollivier 2018) for memories as long as the window (lstm, gru).");
    job.network.chrono_steps = g == "chrono" ? std::max<std::size_t>(3, job.windows.sequence_steps()) : 0;
    if (g == "chrono" && job.network.cell == nn::CellType::elman) {
      r.problem("network.gate_bias = \"chrono\": needs a gated cell (network.cell = \"lstm\" or \"gru\")");
    }
  });

  r.section("training", "How each member is trained.");
  collect(r, [&] {
    job.scope = r.choice("training", "scope", "across_sites", {"per_site", "across_sites"},
                         "One model per site, or one model trained on all sites.") == "per_site"
                    ? ModelScope::per_site
                    : ModelScope::across_sites;
  });
  auto& t = job.training;
  t.epochs = static_cast<std::size_t>(r.integer("training", "epochs", 40, 1, 100000, "", "Maximum epochs."));
  t.batch_size = static_cast<std::size_t>(r.integer("training", "batch_size", 64, 1, 65536, "", "Windows per batch."));
  collect(r, [&] {
    const std::string o = r.choice("training", "optimizer", "adam", {"sgd", "adam", "adamw"}, "Optimiser.");
    t.optimizer.type = o == "sgd" ? train::OptimizerType::sgd
                                  : (o == "adamw" ? train::OptimizerType::adamw : train::OptimizerType::adam);
  });
  t.optimizer.learning_rate = r.number("training", "learning_rate", 3e-3, 1e-12, 10.0, "", "Initial learning rate.");
  t.optimizer.weight_decay = r.number("training", "weight_decay", 0.0, 0.0, 10.0, "",
                                      "L2 (adam, sgd) or decoupled "
                                      "(adamw) weight decay.");
  t.optimizer.momentum = r.number("training", "momentum", 0.9, 0.0, 0.9999, "", "SGD momentum.");
  t.clip_norm = r.number("training", "clip_norm", 1.0, 0.0, huge, "", "Clip gradients to this global norm; 0 off.");
  collect(r, [&] {
    const std::string s = r.choice("training", "schedule", "plateau", {"constant", "step", "cosine", "plateau"},
                                   "Learning-rate schedule.");
    t.schedule.type =
        s == "constant" ? train::ScheduleType::constant
                        : (s == "step" ? train::ScheduleType::step
                                       : (s == "cosine" ? train::ScheduleType::cosine : train::ScheduleType::plateau));
  });
  t.schedule.plateau_patience =
      static_cast<std::size_t>(r.integer("training", "plateau_patience", 4, 1, 10000, "epochs",
                                         "Epochs without improvement before the rate "
                                         "is lowered (plateau schedule)."));
  t.schedule.plateau_factor =
      r.number("training", "plateau_factor", 0.3, 1e-6, 0.999, "", "Factor applied to the rate on a plateau.");
  t.early_stopping.patience = static_cast<std::size_t>(
      r.integer("training", "patience", 8, 1, 100000, "epochs", "Early-stopping patience on the validation loss."));
  t.early_stopping.min_delta =
      r.number("training", "min_delta", 0.0, 0.0, huge, "", "Smallest improvement that counts.");
  collect(r, [&] {
    t.bptt = train::parse_bptt_mode(
        r.choice("training", "bptt", "full", {"full", "truncated"}, "Full or truncated backpropagation through time."),
        "training.bptt");
  });
  t.bptt_window =
      static_cast<std::size_t>(r.integer("training", "bptt_window", 0, 0, 100000, "steps", "Truncated BPTT window."));
  t.bptt_stride = static_cast<std::size_t>(
      r.integer("training", "bptt_stride", 0, 0, 100000, "steps", "Truncated BPTT stride; 0 = the window."));

  r.section("ensemble", "Members and how they differ.");
  job.members = static_cast<std::size_t>(r.integer("ensemble", "members", 4, 1, 1000, "", "Members per model."));
  collect(r, [&] {
    job.resampling.scheme = uncertainty::parse_resample_scheme(
        r.choice("ensemble", "resampling", "moving_block", {"none", "moving_block", "stationary", "sites"},
                 "Bootstrap of the training windows per member."),
        "ensemble.resampling");
  });
  job.resampling.block_length = static_cast<std::size_t>(r.integer(
      "ensemble", "block_length", 0, 0, 1000000, "windows", "Bootstrap block length; 0 = the documented default."));
  job.mc_passes = static_cast<std::size_t>(r.integer("ensemble", "mc_dropout_passes", 0, 0, 1000, "",
                                                     "MC-dropout passes per member at prediction (needs dropout)."));

  r.section("calibration", "Calibration of the network's intervals on the calibration period.");
  collect(r, [&] {
    const std::string c = r.choice("calibration", "method", "split_conformal", {"none", "split_conformal", "adaptive"},
                                   "none, split conformal (CQR on each interval), or adaptive conformal inference "
                                   "through the test period.");
    job.calibration = c == "none"
                          ? CalibrationMethod::none
                          : (c == "adaptive" ? CalibrationMethod::adaptive : CalibrationMethod::split_conformal);
  });
  job.adaptive_step =
      r.number("calibration", "adaptive_step", 0.005, 1e-6, 0.5, "", "Step size γ of adaptive conformal inference.");
  collect(r, [&] {
    const std::string c = r.choice("calibration", "scale", "transformed", {"transformed", "target"},
                                   "Scale of the conformity scores: the target transform's (a relative widening, "
                                   "as errors grow with flow) or the target's units (additive).");
    job.calibration_scale = c == "target" ? CalibrationScale::target : CalibrationScale::transformed;
  });
  collect(r, [&] {
    const std::string c = r.choice("calibration", "leads", "auto", {"auto", "each", "pooled"},
                                   "Calibrate each lead time on its own, all leads together, or (auto) each lead "
                                   "when every lead has min_cases_per_lead cases, else all together.");
    job.calibration_leads =
        c == "each" ? CalibrationLeads::each : (c == "pooled" ? CalibrationLeads::pooled : CalibrationLeads::automatic);
  });
  job.calibration_min_cases = static_cast<std::size_t>(
      r.integer("calibration", "min_cases_per_lead", 100, 1, 100000000, "cases",
                "Calibration cases each lead needs for leads = \"auto\" to calibrate it on its own; at 100 the "
                "coverage of a 90 % interval varies by about 0.03 from one calibration set to another."));

  r.section("baselines", "Classical methods run on the same windows and periods.");
  for (const auto& b : r.texts("baselines", "methods", {"persistence", "climatology", "ridge_arx"},
                               "persistence, seasonal_naive, climatology, ridge_arx, exp_smoothing, local_level.")) {
    collect(r, [&] { job.baselines.push_back(baselines::parse_baseline_kind(b)); });
  }
  job.seasonal_period = static_cast<std::size_t>(r.integer("baselines", "seasonal_period", 0, 0, 100000, "steps",
                                                           "Season of seasonal_naive and Holt-Winters; 0 = a day of "
                                                           "steps (sub-daily data) or 365 (daily)."));
  job.second_seasonal_period = static_cast<std::size_t>(r.integer(
      "baselines", "second_seasonal_period", 0, 0, 100000, "steps", "Second season of double-seasonal Holt-Winters."));
  job.naive_period = static_cast<std::size_t>(r.integer(
      "baselines", "naive_period", 0, 0, 100000, "steps",
      "Period of seasonal_naive (e.g. 168 on hourly data: the same hour a week before); 0 = seasonal_period."));
  collect(r, [&] {
    job.smoothing = baselines::parse_smoothing_model(r.choice("baselines", "smoothing", "holt",
                                                              {"simple", "holt", "holt_winters", "double_seasonal"},
                                                              "Model of the exp_smoothing baseline."));
  });
  job.ridge.target_lags = static_cast<std::size_t>(
      r.integer("baselines", "ridge_target_lags", 3, 1, 1000, "steps", "Lagged targets of ridge ARX."));
  job.ridge.input_lags = static_cast<std::size_t>(
      r.integer("baselines", "ridge_input_lags", 2, 0, 1000, "steps", "Lagged inputs of ridge ARX."));
  job.climatology.window_half_width = static_cast<std::size_t>(r.integer(
      "baselines", "climatology_window", 15, 0, 183, "days", "Half-width of the smoothing window of climatology."));

  r.section("scoring", "What is reported.");
  job.quantiles =
      r.numbers("scoring", "quantiles", job.quantiles, 1e-6, 1 - 1e-6, "", "Quantile levels written for every method.");
  job.intervals = r.numbers("scoring", "intervals", job.intervals, 0.01, 0.999, "",
                            "Central interval coverages scored (and calibrated).");
  job.metrics = r.texts("scoring", "metrics", {}, "Metrics to report; empty = all applicable (docs/methods.md).");
  job.bootstrap_resamples = static_cast<std::size_t>(r.integer(
      "scoring", "bootstrap_resamples", 0, 0, 100000, "", "Moving-block bootstrap intervals for metrics; 0 = none."));

  r.section("outputs", "Where and what to write.");
  job.output_directory = r.text("outputs", "directory", "runnel-output",
                                "Folder of the outputs; relative to the job "
                                "file.");
  job.write_hdf5 = r.flag("outputs", "hdf5", true, "Write results.h5 (docs/output-format.md).");
  job.write_netcdf = r.flag("outputs", "netcdf", true, "Write hindcasts.nc (CF-1.8 timeSeries).");
  job.write_geojson = r.flag("outputs", "geojson", true, "Write stations.geojson.");
  job.write_report = r.flag("outputs", "report", true, "Write report.html.");
  job.keep_members = r.flag("outputs", "members", false, "Store every member's values in results.h5.");
}

void cross_checks(ConfigReader& r, JobConfig& job) {
  if (job.files.empty()) r.problem("data.files: at least one input file is required");
  if (job.features.target.empty())
    r.problem("target.variable: required, but missing (example: variable = \"discharge\")");
  if (job.windows.mode == data::WindowMode::simulation && job.windows.horizon_steps != 1) {
    r.problem("windows.horizon: must be 1 in simulation mode, got " + std::to_string(job.windows.horizon_steps));
  }
  if (!job.periods.test) r.problem("periods.test: required for a hindcast run (the period that is scored)");
  if (job.calibration != CalibrationMethod::none && !job.periods.calibration) {
    r.problem("periods.calibration: required when calibration.method is " + to_string(job.calibration));
  }
  if (job.mc_passes > 0 && job.network.input_dropout == 0 && job.network.recurrent_dropout == 0 &&
      job.network.output_dropout == 0) {
    r.problem("ensemble.mc_dropout_passes: needs some dropout in [network] (all dropout rates are 0)");
  }
  if (job.training.bptt == train::BpttMode::truncated && job.training.bptt_window == 0) {
    r.problem("training.bptt_window: required (>= 1) with bptt = \"truncated\"");
  }
  if (!std::is_sorted(job.quantiles.begin(), job.quantiles.end()) ||
      std::adjacent_find(job.quantiles.begin(), job.quantiles.end()) != job.quantiles.end()) {
    r.problem("scoring.quantiles: levels must be strictly increasing");
  }
  if (job.network.head == nn::HeadType::quantile) {
    const auto& q = job.network.quantile_levels;
    if (q.size() < 2 || !std::is_sorted(q.begin(), q.end()) || std::adjacent_find(q.begin(), q.end()) != q.end()) {
      r.problem("network.head_quantiles: at least two strictly increasing levels are needed for the quantile head");
    }
  }
  // Every interval's bounds are among the reported quantiles so that they can be scored.
  for (double c : job.intervals) {
    for (double level : {(1 - c) / 2, (1 + c) / 2}) {
      const bool present =
          std::any_of(job.quantiles.begin(), job.quantiles.end(), [&](double q) { return std::abs(q - level) < 1e-9; });
      if (!present) job.quantiles.push_back(level);
    }
  }
  std::sort(job.quantiles.begin(), job.quantiles.end());
  job.quantiles.erase(std::unique(job.quantiles.begin(), job.quantiles.end(),
                                  [](double a, double b) { return std::abs(a - b) < 1e-9; }),
                      job.quantiles.end());
  job.features.dynamic_inputs.erase(
      std::remove(job.features.dynamic_inputs.begin(), job.features.dynamic_inputs.end(), std::string()),
      job.features.dynamic_inputs.end());
  const bool simulation = job.windows.mode == data::WindowMode::simulation;
  for (auto kind : job.baselines) {
    if (simulation && kind != baselines::BaselineKind::climatology) {
      r.problem("baselines.methods: '" + baselines::to_string(kind) +
                "' needs the observed target up to the issue time, which simulation mode does not have; use "
                "climatology only");
    }
  }
  // The network's loss follows its head.
  switch (job.network.head) {
    case nn::HeadType::point:
      job.training.loss.type = nn::LossType::squared_mean;
      break;
    case nn::HeadType::gaussian:
      job.training.loss.type = nn::LossType::gaussian_nll;
      break;
    case nn::HeadType::quantile:
      job.training.loss.type = nn::LossType::pinball;
      job.training.loss.quantile_levels = job.network.quantile_levels;
      break;
  }
  job.training.seed = job.seed;
  job.resampling.seed = job.seed;
  job.resampling.lookback_steps = job.windows.lookback_steps;
  job.ridge.max_lead = job.windows.horizon_steps;
  job.ridge.use_target_step_inputs = job.windows.future_inputs_known;
  job.training.early_stopping.enabled = job.periods.validation.has_value();
  collect(r, [&] { job.features.validate(); });
  collect(r, [&] { job.windows.validate(); });
  collect(r, [&] { job.training.validate(); });
}

}  // namespace

JobConfig parse_job(std::string_view text, const std::filesystem::path& path) {
  ConfigReader reader(text, path.string());
  JobConfig job;
  read_job(reader, job);
  reader.check_unknown_keys();
  if (reader.problems().empty()) cross_checks(reader, job);
  reader.throw_if_problems();
  const auto base = path.parent_path();
  for (auto& f : job.files) {
    if (f.is_relative()) f = base / f;
  }
  if (job.output_directory.is_relative()) job.output_directory = base / job.output_directory;
  if (job.title.empty()) job.title = job.name;
  job.job_text = std::string(text);
  job.job_path = path;
  return job;
}

JobConfig load_job(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw IoError(path.string() + ": cannot read the job file (does it exist?)");
  std::ostringstream text;
  text << in.rdbuf();
  return parse_job(text.str(), path);
}

std::string config_reference() {
  ConfigReader reader("", "reference");
  JobConfig job;
  read_job(reader, job);
  std::ostringstream out;
  out << "# Job file reference\n\n"
      << "A job is a TOML file. Every key is listed here with its type, default, units and an example; this page is\n"
      << "generated from the parser (`runnel init --reference`), so it matches the code. Unknown keys, wrong types\n"
      << "and out-of-range values are all reported at once before any work starts, each naming its key.\n"
      << "`runnel init --example hydrology|load` writes a commented starter file.\n";
  for (const auto& [section, description] : reader.section_docs()) {
    out << "\n## [" << section << "]\n\n" << description << "\n\n";
    out << "| key | type | default | units | description | example |\n|---|---|---|---|---|---|\n";
    for (const auto& d : reader.documentation()) {
      if (d.section != section) continue;
      auto cell = [](std::string s) {
        std::string o;
        for (char c : s) o += c == '|' ? std::string("\\|") : std::string(1, c);
        return o;
      };
      out << "| `" << d.key << "` | " << cell(d.type) << " | `" << cell(d.default_text) << "` | " << cell(d.units)
          << " | " << cell(d.description) << " | `" << cell(d.example) << "` |\n";
    }
  }
  return out.str();
}

}  // namespace libseq::pipeline

namespace libseq::pipeline {

std::vector<std::string> example_kinds() { return {"hydrology", "load"}; }

std::string example_job(std::string_view kind) {
  if (kind == "hydrology") {
    return R"(# runnel job: daily discharge forecasts for the invented demo catchments.
# Every key is documented in docs/config.md; keys left out take their defaults.

[job]
name = "Demo catchments, 1-day-ahead discharge"
summary = "Ensemble LSTM hindcasts of daily discharge with calibrated intervals, scored against baselines"
seed = 20261201
threads = 0                      # 0 = all cores

[data]
files = ["../data-samples/catchments.nc"]

[target]
variable = "discharge"           # name or CF standard_name
transform = "log"                # skewed flows: model log(q + offset)
offset = 0.01                    # m3 s-1

[inputs]
dynamic = ["precipitation", "air_temperature"]
static = ["area_km2", "mean_elevation_m"]
calendar = ["day_of_year"]
observed_target = true           # the observed flow up to the issue day is an input

[windows]
mode = "forecast"
lookback = 60                    # days of history
horizon = 1                      # days ahead

[periods]
fit = "2008-01-01..2015-12-31"
validation = "2016-01-01..2017-12-31"
calibration = "2016-01-01..2017-12-31"
test = "2018-01-01..2022-12-31"

[network]
cell = "lstm"
hidden = 24
head = "gaussian"

[training]
scope = "across_sites"           # one model trained on all catchments
epochs = 15
batch_size = 128
learning_rate = 0.005

[ensemble]
members = 4
resampling = "moving_block"

[calibration]
method = "split_conformal"

[baselines]
methods = ["persistence", "climatology", "ridge_arx"]

[scoring]
intervals = [0.8, 0.9]

[outputs]
directory = "../runnel-output/catchments"
)";
  }
  if (kind == "load") {
    return R"(# runnel job: day-ahead hourly load forecasts for the invented demo feeders.
# Every key is documented in docs/config.md; keys left out take their defaults.

[job]
name = "Demo feeders, day-ahead load"
summary = "Ensemble GRU day-ahead hourly load quantiles with calibrated intervals, scored against baselines"
seed = 20261201

[data]
files = ["../data-samples/feeders.nc"]

[target]
variable = "load"

[inputs]
dynamic = ["air_temperature"]
calendar = ["hour_of_day", "day_of_week", "weekend", "holiday"]
# public holidays of the (invented) Serrain calendar, see data-samples/README.md
holidays = ["2022-01-01", "2022-03-14", "2022-04-25", "2022-06-17", "2022-10-03", "2022-12-21", "2022-12-31",
            "2023-01-01", "2023-03-14", "2023-04-24", "2023-06-16", "2023-10-02", "2023-12-21", "2023-12-31"]

[windows]
mode = "forecast"
lookback = 72                    # hours of history
horizon = 24                     # a day ahead
future_inputs_known = true       # temperature forecasts for the next day are available
issue_every = 24                 # one day-ahead forecast per day, issued at midnight UTC

[periods]
fit = "2022-01-01..2023-06-30"
validation = "2023-07-01..2023-09-30"
calibration = "2023-07-01..2023-09-30"
test = "2023-10-01..2023-12-31"

[network]
cell = "gru"
hidden = 32
head = "gaussian"

[training]
scope = "across_sites"
epochs = 15
batch_size = 128
learning_rate = 0.005

[ensemble]
members = 4

[baselines]
methods = ["persistence", "seasonal_naive", "exp_smoothing"]
seasonal_period = 24             # the daily cycle of hourly data...
second_seasonal_period = 168     # ...and the weekly one
naive_period = 168               # seasonal naive: the same hour one week before
smoothing = "double_seasonal"    # additive Holt-Winters with both seasons

[scoring]
intervals = [0.8, 0.95]

[outputs]
directory = "../runnel-output/feeders"
)";
  }
  std::string kinds;
  for (const auto& k : example_kinds()) kinds += (kinds.empty() ? "" : ", ") + k;
  throw ConfigError("init --example: '" + std::string(kind) + "' is not one of " + kinds);
}

}  // namespace libseq::pipeline
