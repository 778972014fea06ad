// CF-1.8 timeSeries NetCDF-4 results with ACDD-1.3 discovery attributes (docs/output-format.md).
#include <netcdf.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <set>

#include "libseq/caution.hpp"
#include "libseq/error.hpp"
#include "libseq/io/results.hpp"
#include "libseq/version.hpp"

namespace libseq::io {

namespace {

class NcWriter {
 public:
  explicit NcWriter(std::filesystem::path path) : path_(std::move(path)) {
    check(nc_create(path_.c_str(), NC_NETCDF4 | NC_CLOBBER, &id_), "creating the file");
  }
  ~NcWriter() {
    if (id_ >= 0) nc_close(id_);
  }
  NcWriter(const NcWriter&) = delete;
  NcWriter& operator=(const NcWriter&) = delete;

  void check(int status, const std::string& what) const {
    if (status != NC_NOERR) throw IoError(path_.string() + ": " + what + ": " + nc_strerror(status));
  }
  int dim(const std::string& name, std::size_t length) {
    int d = -1;
    check(nc_def_dim(id_, name.c_str(), length, &d), "defining dimension '" + name + "'");
    return d;
  }
  int var(const std::string& name, nc_type type, std::vector<int> dims) {
    int v = -1;
    check(nc_def_var(id_, name.c_str(), type, static_cast<int>(dims.size()), dims.data(), &v),
          "defining variable '" + name + "'");
    if (dims.size() >= 2) check(nc_def_var_deflate(id_, v, 1, 1, 4), "compressing variable '" + name + "'");
    return v;
  }
  void text(int var, const std::string& name, const std::string& value) {
    check(nc_put_att_text(id_, var, name.c_str(), value.size(), value.c_str()), "writing attribute '" + name + "'");
  }
  void number(int var, const std::string& name, double value) {
    check(nc_put_att_double(id_, var, name.c_str(), NC_DOUBLE, 1, &value), "writing attribute '" + name + "'");
  }
  void fill_float(int var) {
    const float fill = NC_FILL_FLOAT;
    check(nc_def_var_fill(id_, var, 0, &fill), "setting _FillValue");
  }
  void end_definitions() { check(nc_enddef(id_), "finishing the header"); }
  int id() const { return id_; }
  void close() {
    const int id = id_;
    id_ = -1;
    check(nc_close(id), "closing the file");
  }

 private:
  std::filesystem::path path_;
  int id_ = -1;
};

std::string safe_name(const std::string& method) {
  std::string out;
  for (char c : method) out += std::isalnum(static_cast<unsigned char>(c)) ? c : '_';
  return out.empty() ? "method" : out;
}

}  // namespace

void write_results_netcdf(const std::filesystem::path& path, const RunResults& results) {
  results.validate();
  // The union of issue times over all sites gives the time axis; a site lacking a time holds fill values there.
  std::set<data::UtcSeconds> time_set;
  for (const auto& s : results.sites) time_set.insert(s.issue_times.begin(), s.issue_times.end());
  const std::vector<data::UtcSeconds> times(time_set.begin(), time_set.end());
  std::map<data::UtcSeconds, std::size_t> time_index;
  for (std::size_t i = 0; i < times.size(); ++i) time_index[times[i]] = i;

  // Methods in first-seen order, with their quantile levels (taken from the first site that has them).
  std::vector<const ForecastBlock*> methods;
  for (const auto& s : results.sites) {
    for (const auto& block : s.methods) {
      const bool seen = std::any_of(methods.begin(), methods.end(),
                                    [&](const ForecastBlock* m) { return m->method == block.method; });
      if (!seen) methods.push_back(&block);
    }
  }

  const std::size_t station_count = results.sites.size();
  const std::size_t leads = results.leads.size();
  write_atomically(path, [&](const std::filesystem::path& temporary) {
    NcWriter nc(temporary);
    const int station_dim = nc.dim("station", station_count);
    const int time_dim = nc.dim("time", times.size());
    const int lead_dim = nc.dim("lead", leads);

    const int time_var = nc.var("time", NC_DOUBLE, {time_dim});
    nc.text(time_var, "units", "seconds since 1970-01-01 00:00:00");
    nc.text(time_var, "calendar", "standard");
    nc.text(time_var, "axis", "T");
    const bool simulation = results.mode == "simulation";
    nc.text(time_var, "standard_name", simulation ? "time" : "forecast_reference_time");
    nc.text(time_var, "long_name", simulation ? "simulated time" : "issue time of the forecast");

    const int lead_var = nc.var("lead", NC_DOUBLE, {lead_dim});
    nc.text(lead_var, "units", "hours");
    nc.text(lead_var, "standard_name", "forecast_period");
    nc.text(lead_var, "long_name", "lead time after the issue time");

    const int id_var = nc.var("station_id", NC_STRING, {station_dim});
    nc.text(id_var, "cf_role", "timeseries_id");
    nc.text(id_var, "long_name", "station identifier");
    const int name_var = nc.var("station_name", NC_STRING, {station_dim});
    nc.text(name_var, "long_name", "station name");
    const int lat_var = nc.var("lat", NC_DOUBLE, {station_dim});
    nc.text(lat_var, "standard_name", "latitude");
    nc.text(lat_var, "units", "degrees_north");
    const int lon_var = nc.var("lon", NC_DOUBLE, {station_dim});
    nc.text(lon_var, "standard_name", "longitude");
    nc.text(lon_var, "units", "degrees_east");
    const int alt_var = nc.var("alt", NC_DOUBLE, {station_dim});
    nc.text(alt_var, "standard_name", "altitude");
    nc.text(alt_var, "units", "m");
    nc.text(alt_var, "positive", "up");
    nc.text(alt_var, "long_name", "elevation of the station above sea level");
    for (int v : {lat_var, lon_var, alt_var}) nc.number(v, "_FillValue", NC_FILL_DOUBLE);

    const std::string coordinates = "time lead lat lon alt station_id";
    auto data_var = [&](const std::string& name, std::vector<int> dims, const std::string& long_name) {
      const int v = nc.var(name, NC_FLOAT, std::move(dims));
      nc.fill_float(v);
      nc.text(v, "units", results.target_units);
      nc.text(v, "long_name", long_name);
      nc.text(v, "coordinates", coordinates);
      return v;
    };
    const int observed_var = data_var("observed", {station_dim, time_dim, lead_dim}, "observed " + results.target_variable);
    if (!results.target_standard_name.empty()) nc.text(observed_var, "standard_name", results.target_standard_name);

    struct MethodVars {
      int mean, median, quantiles, levels;
    };
    std::vector<MethodVars> method_vars;
    for (const ForecastBlock* m : methods) {
      const std::string base = safe_name(m->method);
      MethodVars mv{};
      mv.mean = data_var(base + "_mean", {station_dim, time_dim, lead_dim},
                         m->method + " forecast mean of " + results.target_variable);
      mv.median = data_var(base + "_median", {station_dim, time_dim, lead_dim},
                           m->method + " forecast median of " + results.target_variable);
      const int q_dim = nc.dim(base + "_quantile", m->quantile_levels.size());
      mv.levels = nc.var(base + "_quantile", NC_DOUBLE, {q_dim});
      nc.text(mv.levels, "long_name", "probability level of the " + m->method + " forecast quantiles");
      nc.text(mv.levels, "units", "1");
      mv.quantiles = data_var(base + "_quantiles", {station_dim, time_dim, lead_dim, q_dim},
                              m->method + " forecast quantiles of " + results.target_variable);
      method_vars.push_back(mv);
    }

    // Global attributes: CF and ACDD-1.3 discovery metadata.
    nc.text(NC_GLOBAL, "Conventions", "CF-1.8, ACDD-1.3");
    nc.text(NC_GLOBAL, "featureType", "timeSeries");
    nc.text(NC_GLOBAL, "title", results.title);
    nc.text(NC_GLOBAL, "summary", results.summary);
    nc.text(NC_GLOBAL, "history", results.provenance.created + " written by runnel " + version() + " (" +
                                      git_commit() + ")");
    nc.text(NC_GLOBAL, "source", "runnel " + version());
    nc.text(NC_GLOBAL, "date_created", results.provenance.created);
    nc.text(NC_GLOBAL, "comment", caution_text());
    nc.text(NC_GLOBAL, "caution", caution_text());
    nc.text(NC_GLOBAL, "runnel_mode", results.mode);
    nc.text(NC_GLOBAL, "runnel_test_period", results.test_period);
    nc.text(NC_GLOBAL, "runnel_results_format_version", std::to_string(results_format_version));
    if (!times.empty()) {
      nc.text(NC_GLOBAL, "time_coverage_start", data::format_iso8601(times.front()));
      nc.text(NC_GLOBAL, "time_coverage_end", data::format_iso8601(times.back()));
    }
    double lat_min = INFINITY, lat_max = -INFINITY, lon_min = INFINITY, lon_max = -INFINITY;
    for (const auto& s : results.sites) {
      if (std::isfinite(s.site.latitude)) {
        lat_min = std::min(lat_min, s.site.latitude);
        lat_max = std::max(lat_max, s.site.latitude);
      }
      if (std::isfinite(s.site.longitude)) {
        lon_min = std::min(lon_min, s.site.longitude);
        lon_max = std::max(lon_max, s.site.longitude);
      }
    }
    if (std::isfinite(lat_min)) {
      nc.number(NC_GLOBAL, "geospatial_lat_min", lat_min);
      nc.number(NC_GLOBAL, "geospatial_lat_max", lat_max);
      nc.number(NC_GLOBAL, "geospatial_lon_min", lon_min);
      nc.number(NC_GLOBAL, "geospatial_lon_max", lon_max);
    }
    nc.end_definitions();

    std::vector<double> time_values(times.begin(), times.end());
    nc.check(nc_put_var_double(nc.id(), time_var, time_values.data()), "writing 'time'");
    std::vector<double> lead_hours;
    for (auto l : results.leads) lead_hours.push_back(static_cast<double>(l * results.step_seconds) / 3600.0);
    nc.check(nc_put_var_double(nc.id(), lead_var, lead_hours.data()), "writing 'lead'");
    std::vector<const char*> ids, names;
    std::vector<double> lat, lon, alt;
    auto or_fill = [](double v) { return std::isfinite(v) ? v : NC_FILL_DOUBLE; };
    for (const auto& s : results.sites) {
      ids.push_back(s.site.id.c_str());
      names.push_back(s.site.name.c_str());
      lat.push_back(or_fill(s.site.latitude));
      lon.push_back(or_fill(s.site.longitude));
      alt.push_back(or_fill(s.site.elevation));
    }
    if (station_count > 0) {
      nc.check(nc_put_var_string(nc.id(), id_var, ids.data()), "writing 'station_id'");
      nc.check(nc_put_var_string(nc.id(), name_var, names.data()), "writing 'station_name'");
      nc.check(nc_put_var_double(nc.id(), lat_var, lat.data()), "writing 'lat'");
      nc.check(nc_put_var_double(nc.id(), lon_var, lon.data()), "writing 'lon'");
      nc.check(nc_put_var_double(nc.id(), alt_var, alt.data()), "writing 'alt'");
    }
    for (std::size_t m = 0; m < methods.size(); ++m) {
      nc.check(nc_put_var_double(nc.id(), method_vars[m].levels, methods[m]->quantile_levels.data()),
               "writing quantile levels of '" + methods[m]->method + "'");
    }

    // Values, one station at a time (memory: one station's block).
    auto to_file = [](float v) { return std::isfinite(v) ? v : static_cast<float>(NC_FILL_FLOAT); };
    auto put_block = [&](int var, std::size_t station, const std::vector<float>& values, const SiteResults& site,
                         std::size_t width, const std::string& what, bool is_quantiles = false) {
      // One station's (time, lead[, quantile]) block, placed on the union time axis.
      const std::size_t row_width = leads * width;
      std::vector<float> block(times.size() * row_width, static_cast<float>(NC_FILL_FLOAT));
      for (std::size_t i = 0; i < site.issue_times.size(); ++i) {
        const std::size_t row = time_index.at(site.issue_times[i]);
        for (std::size_t k = 0; k < row_width; ++k) block[row * row_width + k] = to_file(values[i * row_width + k]);
      }
      std::vector<std::size_t> start{station, 0, 0}, count{1, times.size(), leads};
      if (is_quantiles) {
        start.push_back(0);
        count.push_back(width);
      }
      nc.check(nc_put_vara_float(nc.id(), var, start.data(), count.data(), block.data()), "writing '" + what + "'");
    };
    for (std::size_t s = 0; s < station_count; ++s) {
      const auto& site = results.sites[s];
      if (times.empty()) break;
      put_block(observed_var, s, site.observed, site, 1, "observed");
      for (std::size_t m = 0; m < methods.size(); ++m) {
        const auto it = std::find_if(site.methods.begin(), site.methods.end(),
                                     [&](const ForecastBlock& b) { return b.method == methods[m]->method; });
        if (it == site.methods.end()) continue;
        if (it->quantile_levels != methods[m]->quantile_levels) {
          throw DataError("results: method '" + it->method + "' has other quantile levels at site '" + site.site.id +
                          "' than at the first site; the NetCDF layout needs one set per method");
        }
        put_block(method_vars[m].mean, s, it->mean, site, 1, it->method + " mean");
        put_block(method_vars[m].median, s, it->median, site, 1, it->method + " median");
        if (!it->quantile_levels.empty()) {
          put_block(method_vars[m].quantiles, s, it->quantiles, site, it->quantile_levels.size(),
                    it->method + " quantiles", true);
        }
      }
    }
    nc.close();
  });
}

}  // namespace libseq::io
