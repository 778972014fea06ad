// HDF5 results files (layout: docs/output-format.md, version io::results_format_version).
#include <cctype>
#include <cmath>

#include "hdf5_util_impl.hpp"
#include "libseq/caution.hpp"
#include "libseq/error.hpp"
#include "libseq/io/results.hpp"

namespace libseq::io {

namespace {

using detail::H5File;
using detail::H5Handle;

// Group name of a site: the id itself when it is a plain HDF5-safe name, else an indexed name (the id is always
// also stored as the group's `site_id` attribute).
std::string site_group_name(const std::string& id, std::size_t index) {
  bool plain = !id.empty() && id != "." && id != "..";
  for (char c : id) {
    if (!(std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-' || c == '.')) plain = false;
  }
  return plain ? id : "site_" + std::to_string(index);
}

void write_block(const H5File& file, hid_t site_group, const ForecastBlock& block, hsize_t n, hsize_t leads) {
  H5Handle group = file.create_group(site_group, block.method);
  file.write_floats(group.get(), "mean", {n, leads}, block.mean);
  file.write_floats(group.get(), "median", {n, leads}, block.median);
  file.write_doubles(group.get(), "quantile_levels", {block.quantile_levels.size()}, block.quantile_levels);
  file.write_floats(group.get(), "quantiles", {n, leads, block.quantile_levels.size()}, block.quantiles);
  if (block.member_count > 0) file.write_floats(group.get(), "members", {n, leads, block.member_count}, block.members);
}

}  // namespace

void write_results_hdf5(const std::filesystem::path& path, const RunResults& results) {
  results.validate();
  write_atomically(path, [&](const std::filesystem::path& temporary) {
    H5File file = H5File::create(temporary);
    const hid_t root = file.root();
    file.attr_string(root, "runnel_layout", "results");
    file.attr_int(root, "runnel_layout_version", results_format_version);
    file.attr_string(root, "caution", caution_text());
    file.attr_string(root, "title", results.title);
    file.attr_string(root, "summary", results.summary);
    file.attr_string(root, "mode", results.mode);
    file.attr_string(root, "target_variable", results.target_variable);
    file.attr_string(root, "target_units", results.target_units);
    file.attr_string(root, "target_standard_name", results.target_standard_name);
    file.attr_int(root, "step_seconds", results.step_seconds);
    file.attr_string(root, "test_period", results.test_period);
    file.write_int64s(root, "leads", results.leads);
    file.write_strings(root, "warnings", results.warnings);
    file.write_strings(root, "notes", results.notes);

    {
      H5Handle sites = file.create_group(root, "sites");
      file.attr_string(sites.get(), "crs", "EPSG:4326");
      std::vector<std::string> ids, names, groups;
      std::vector<double> latitude, longitude, elevation, mase_scale;
      for (std::size_t i = 0; i < results.sites.size(); ++i) {
        mase_scale.push_back(results.sites[i].mase_scale);
        const auto& s = results.sites[i].site;
        ids.push_back(s.id);
        names.push_back(s.name);
        groups.push_back(site_group_name(s.id, i));
        latitude.push_back(s.latitude);
        longitude.push_back(s.longitude);
        elevation.push_back(s.elevation);
      }
      file.write_strings(sites.get(), "id", ids);
      file.write_strings(sites.get(), "name", names);
      file.write_strings(sites.get(), "group", groups);
      file.write_doubles(sites.get(), "latitude", {latitude.size()}, latitude);
      file.write_doubles(sites.get(), "longitude", {longitude.size()}, longitude);
      file.write_doubles(sites.get(), "elevation", {elevation.size()}, elevation);
      file.write_doubles(sites.get(), "mase_scale", {mase_scale.size()}, mase_scale);

      H5Handle hindcasts = file.create_group(root, "hindcasts");
      const hsize_t leads = results.leads.size();
      for (std::size_t i = 0; i < results.sites.size(); ++i) {
        const auto& site = results.sites[i];
        H5Handle group = file.create_group(hindcasts.get(), groups[i]);
        file.attr_string(group.get(), "site_id", site.site.id);
        const hsize_t n = site.issue_times.size();
        file.write_int64s(group.get(), "issue_time", site.issue_times);
        file.attr_string(group.get(), "issue_time_units", "seconds since 1970-01-01T00:00:00Z");
        file.write_floats(group.get(), "observed", {n, leads}, site.observed);
        std::vector<std::string> methods;
        for (const auto& block : site.methods) {
          write_block(file, group.get(), block, n, leads);
          methods.push_back(block.method);
        }
        file.write_strings(group.get(), "methods", methods);
      }
    }

    {
      H5Handle metrics = file.create_group(root, "metrics");
      std::vector<std::string> site, method, metric;
      std::vector<std::int64_t> lead;
      std::vector<double> value, ci_low, ci_high;
      std::vector<std::uint64_t> used, skipped;
      for (const auto& row : results.metrics) {
        site.push_back(row.site);
        method.push_back(row.method);
        metric.push_back(row.metric);
        lead.push_back(row.lead);
        value.push_back(row.value);
        ci_low.push_back(row.ci_low);
        ci_high.push_back(row.ci_high);
        used.push_back(row.used);
        skipped.push_back(row.skipped);
      }
      file.write_strings(metrics.get(), "site", site);
      file.write_strings(metrics.get(), "method", method);
      file.write_strings(metrics.get(), "metric", metric);
      file.write_int64s(metrics.get(), "lead", lead);
      file.write_doubles(metrics.get(), "value", {value.size()}, value);
      file.write_doubles(metrics.get(), "ci_low", {ci_low.size()}, ci_low);
      file.write_doubles(metrics.get(), "ci_high", {ci_high.size()}, ci_high);
      file.write_uint64s(metrics.get(), "used", used);
      file.write_uint64s(metrics.get(), "skipped", skipped);
    }

    {
      H5Handle training = file.create_group(root, "training");
      for (std::size_t i = 0; i < results.training.size(); ++i) {
        const auto& record = results.training[i];
        char name[32];
        std::snprintf(name, sizeof name, "record_%05zu", i);
        H5Handle group = file.create_group(training.get(), name);
        file.attr_string(group.get(), "model", record.model);
        file.attr_int(group.get(), "member", record.member);
        file.attr_uint64(group.get(), "seed", record.seed);
        file.attr_string(group.get(), "termination", record.termination);
        file.attr_int(group.get(), "epochs", record.epochs);
        file.attr_int(group.get(), "best_epoch", record.best_epoch);
        file.attr_double(group.get(), "best_validation_loss", record.best_validation_loss);
        file.attr_int(group.get(), "clipped_steps", static_cast<std::int64_t>(record.clipped_steps));
        file.attr_int(group.get(), "total_steps", static_cast<std::int64_t>(record.total_steps));
        file.attr_double(group.get(), "seconds", record.seconds);
        file.write_doubles(group.get(), "train_loss", {record.train_loss.size()}, record.train_loss);
        file.write_doubles(group.get(), "validation_loss", {record.validation_loss.size()}, record.validation_loss);
        file.write_doubles(group.get(), "gradient_norm", {record.gradient_norm.size()}, record.gradient_norm);
        file.write_int64s(group.get(), "diagnostic_lags", record.diagnostic_lags);
        file.write_doubles(group.get(), "diagnostic_gradient_norms", {record.diagnostic_gradient_norms.size()},
                           record.diagnostic_gradient_norms);
      }
    }

    {
      const auto& p = results.provenance;
      H5Handle provenance = file.create_group(root, "provenance");
      file.attr_string(provenance.get(), "job_text", p.job_text);
      file.attr_string(provenance.get(), "job_path", p.job_path);
      file.attr_string(provenance.get(), "library_version", p.library_version);
      file.attr_string(provenance.get(), "git_commit", p.git_commit);
      file.attr_string(provenance.get(), "created", p.created);
      file.attr_double(provenance.get(), "wall_seconds", p.wall_seconds);
      file.attr_int(provenance.get(), "threads", p.threads);
      file.write_uint64s(provenance.get(), "seeds", p.seeds);
      std::vector<std::string> paths, sums;
      for (const auto& input : p.inputs) {
        paths.push_back(input.path);
        sums.push_back(input.sha256);
      }
      file.write_strings(provenance.get(), "input_files", paths);
      file.write_strings(provenance.get(), "input_sha256", sums);
    }
    file.close();
  });
}

RunResults read_results_hdf5(const std::filesystem::path& path) {
  H5File file = H5File::open(path);
  const hid_t root = file.root();
  if (!file.has_attr(root, "runnel_layout") || file.read_attr_string(root, "runnel_layout") != "results") {
    throw FormatError(path.string() + ": not a runnel results file (root attribute runnel_layout = \"results\" "
                      "is missing)");
  }
  const auto version = file.read_attr_int(root, "runnel_layout_version");
  if (version > results_format_version) {
    throw FormatError(path.string() + ": results layout version " + std::to_string(version) +
                      " is newer than this runnel reads (" + std::to_string(results_format_version) + ")");
  }
  RunResults results;
  results.title = file.read_attr_string(root, "title");
  results.summary = file.read_attr_string(root, "summary");
  results.mode = file.read_attr_string(root, "mode");
  results.target_variable = file.read_attr_string(root, "target_variable");
  results.target_units = file.read_attr_string(root, "target_units");
  results.target_standard_name = file.read_attr_string(root, "target_standard_name");
  results.step_seconds = file.read_attr_int(root, "step_seconds");
  results.test_period = file.read_attr_string(root, "test_period");
  results.leads = file.read_int64s(root, "leads");
  results.warnings = file.read_strings(root, "warnings");
  results.notes = file.read_strings(root, "notes");

  {
    H5Handle sites = file.open_group(root, "sites");
    const auto ids = file.read_strings(sites.get(), "id");
    const auto names = file.read_strings(sites.get(), "name");
    const auto groups = file.read_strings(sites.get(), "group");
    const auto latitude = file.read_doubles(sites.get(), "latitude");
    const auto longitude = file.read_doubles(sites.get(), "longitude");
    const auto elevation = file.read_doubles(sites.get(), "elevation");
    const auto mase_scale = file.exists(sites.get(), "mase_scale") ? file.read_doubles(sites.get(), "mase_scale")
                                                                   : std::vector<double>(ids.size(), NAN);
    if (names.size() != ids.size() || groups.size() != ids.size() || latitude.size() != ids.size() ||
        longitude.size() != ids.size() || elevation.size() != ids.size()) {
      throw FormatError(path.string() + ": the /sites datasets have different lengths");
    }
    H5Handle hindcasts = file.open_group(root, "hindcasts");
    for (std::size_t i = 0; i < ids.size(); ++i) {
      SiteResults site;
      site.site.id = ids[i];
      site.site.name = names[i];
      site.site.latitude = latitude[i];
      site.site.longitude = longitude[i];
      site.site.elevation = elevation[i];
      site.mase_scale = i < mase_scale.size() ? mase_scale[i] : NAN;
      H5Handle group = file.open_group(hindcasts.get(), groups[i]);
      site.issue_times = file.read_int64s(group.get(), "issue_time");
      site.observed = file.read_floats(group.get(), "observed");
      for (const auto& method : file.read_strings(group.get(), "methods")) {
        H5Handle m = file.open_group(group.get(), method);
        ForecastBlock block;
        block.method = method;
        block.mean = file.read_floats(m.get(), "mean");
        block.median = file.read_floats(m.get(), "median");
        block.quantile_levels = file.read_doubles(m.get(), "quantile_levels");
        block.quantiles = file.read_floats(m.get(), "quantiles");
        if (file.exists(m.get(), "members")) {
          std::vector<hsize_t> dims;
          block.members = file.read_floats(m.get(), "members", &dims);
          block.member_count = dims.size() == 3 ? dims[2] : 0;
        }
        site.methods.push_back(std::move(block));
      }
      results.sites.push_back(std::move(site));
    }
  }

  {
    H5Handle metrics = file.open_group(root, "metrics");
    const auto site = file.read_strings(metrics.get(), "site");
    const auto method = file.read_strings(metrics.get(), "method");
    const auto metric = file.read_strings(metrics.get(), "metric");
    const auto lead = file.read_int64s(metrics.get(), "lead");
    const auto value = file.read_doubles(metrics.get(), "value");
    const auto ci_low = file.read_doubles(metrics.get(), "ci_low");
    const auto ci_high = file.read_doubles(metrics.get(), "ci_high");
    const auto used = file.read_uint64s(metrics.get(), "used");
    const auto skipped = file.read_uint64s(metrics.get(), "skipped");
    const std::size_t n = site.size();
    if (method.size() != n || metric.size() != n || lead.size() != n || value.size() != n || ci_low.size() != n ||
        ci_high.size() != n || used.size() != n || skipped.size() != n) {
      throw FormatError(path.string() + ": the /metrics datasets have different lengths");
    }
    for (std::size_t i = 0; i < n; ++i) {
      results.metrics.push_back({site[i], method[i], lead[i], metric[i], value[i], used[i], skipped[i], ci_low[i],
                                 ci_high[i]});
    }
  }

  {
    H5Handle training = file.open_group(root, "training");
    for (const auto& name : file.children(training.get())) {
      H5Handle group = file.open_group(training.get(), name);
      TrainingRecord r;
      r.model = file.read_attr_string(group.get(), "model");
      r.member = static_cast<std::uint32_t>(file.read_attr_int(group.get(), "member"));
      r.seed = file.read_attr_uint64(group.get(), "seed");
      r.termination = file.read_attr_string(group.get(), "termination");
      r.epochs = static_cast<std::uint32_t>(file.read_attr_int(group.get(), "epochs"));
      r.best_epoch = static_cast<std::uint32_t>(file.read_attr_int(group.get(), "best_epoch"));
      r.best_validation_loss = file.read_attr_double(group.get(), "best_validation_loss");
      r.clipped_steps = static_cast<std::uint64_t>(file.read_attr_int(group.get(), "clipped_steps"));
      r.total_steps = static_cast<std::uint64_t>(file.read_attr_int(group.get(), "total_steps"));
      r.seconds = file.read_attr_double(group.get(), "seconds");
      r.train_loss = file.read_doubles(group.get(), "train_loss");
      r.validation_loss = file.read_doubles(group.get(), "validation_loss");
      r.gradient_norm = file.read_doubles(group.get(), "gradient_norm");
      r.diagnostic_lags = file.read_int64s(group.get(), "diagnostic_lags");
      r.diagnostic_gradient_norms = file.read_doubles(group.get(), "diagnostic_gradient_norms");
      results.training.push_back(std::move(r));
    }
  }

  {
    H5Handle provenance = file.open_group(root, "provenance");
    auto& p = results.provenance;
    p.job_text = file.read_attr_string(provenance.get(), "job_text");
    p.job_path = file.read_attr_string(provenance.get(), "job_path");
    p.library_version = file.read_attr_string(provenance.get(), "library_version");
    p.git_commit = file.read_attr_string(provenance.get(), "git_commit");
    p.created = file.read_attr_string(provenance.get(), "created");
    p.wall_seconds = file.read_attr_double(provenance.get(), "wall_seconds");
    p.threads = static_cast<int>(file.read_attr_int(provenance.get(), "threads"));
    p.seeds = file.read_uint64s(provenance.get(), "seeds");
    const auto paths = file.read_strings(provenance.get(), "input_files");
    const auto sums = file.read_strings(provenance.get(), "input_sha256");
    for (std::size_t i = 0; i < paths.size() && i < sums.size(); ++i) p.inputs.push_back({paths[i], sums[i]});
  }
  results.validate();
  return results;
}

}  // namespace libseq::io
