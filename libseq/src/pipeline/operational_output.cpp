// Writers of an operational forecast: CSV (one row per site and lead) and CF NetCDF-4 through the results writer.
#include <chrono>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "libseq/caution.hpp"
#include "libseq/error.hpp"
#include "libseq/pipeline/operational.hpp"
#include "libseq/pipeline/run.hpp"
#include "libseq/version.hpp"

namespace libseq::pipeline {

namespace {

std::string value_text(double value) {
  if (std::isnan(value)) return "";
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.9g", value);
  return buffer;
}

std::string level_text(double level) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%g", level);
  return buffer;
}

}  // namespace

void write_forecast_csv(const std::filesystem::path& path, const ForecastResult& forecast) {
  std::ostringstream out;
  out << "# " << caution_text() << "\n";
  out << "# runnel " << version() << " forecast of " << forecast.target_variable << " [" << forecast.target_units
      << "] issued " << data::format_iso8601(forecast.issue_time) << " from " << forecast.bundle.string() << "; "
      << (forecast.calibrated ? "calibrated" : "uncalibrated") << " intervals\n";
  out << "site_id,issue_time,valid_time,lead,mean,median";
  for (double level : forecast.quantile_levels) out << ",q_" << level_text(level);
  out << "\n";
  const std::string issue = data::format_iso8601(forecast.issue_time);
  const std::size_t levels = forecast.quantile_levels.size();
  for (const auto& site : forecast.sites) {
    for (std::size_t k = 0; k < site.leads.size(); ++k) {
      out << site.site.id << "," << issue << "," << data::format_iso8601(site.valid_times[k]) << "," << site.leads[k]
          << "," << value_text(site.mean[k]) << "," << value_text(site.median[k]);
      for (std::size_t q = 0; q < levels; ++q) out << "," << value_text(site.quantiles[k * levels + q]);
      out << "\n";
    }
  }
  io::write_text_atomically(path, out.str());
}

void write_forecast_netcdf(const std::filesystem::path& path, const ForecastResult& forecast) {
  io::RunResults results;
  results.title = forecast.job_name + ": operational forecast";
  results.summary = "Forecast issued " + data::format_iso8601(forecast.issue_time) + " from the model bundle " +
                    forecast.bundle.filename().string() + " without retraining";
  results.mode = forecast.mode;
  results.target_variable = forecast.target_variable;
  results.target_units = forecast.target_units;
  results.target_standard_name = forecast.target_standard_name;
  results.step_seconds = forecast.step_seconds;
  if (!forecast.sites.empty()) results.leads = forecast.sites.front().leads;
  results.test_period = "issued " + data::format_iso8601(forecast.issue_time);
  results.warnings = forecast.warnings;
  results.provenance.library_version = version();
  results.provenance.git_commit = git_commit();
  results.provenance.created = data::format_iso8601(
      std::chrono::duration_cast<std::chrono::seconds>(std::chrono::system_clock::now().time_since_epoch()).count());
  const std::size_t leads = results.leads.size();
  for (const auto& site : forecast.sites) {
    io::SiteResults s;
    s.site = site.site;
    s.issue_times = {forecast.issue_time};
    s.observed.assign(leads, NAN);  // not known at issue time
    io::ForecastBlock block;
    block.method = network_method_name;
    block.quantile_levels = forecast.quantile_levels;
    block.mean.assign(site.mean.begin(), site.mean.end());
    block.median.assign(site.median.begin(), site.median.end());
    block.quantiles.assign(site.quantiles.begin(), site.quantiles.end());
    s.methods.push_back(std::move(block));
    results.sites.push_back(std::move(s));
  }
  if (results.leads.empty()) throw DataError(path.string() + ": the forecast has no site to write");
  results.validate();
  io::write_results_netcdf(path, results);
}

}  // namespace libseq::pipeline
