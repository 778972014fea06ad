// GeoJSON station table (RFC 7946): one Point feature per site with each method's metrics pooled over leads.
#include <cmath>
#include <cstdio>
#include <map>
#include <sstream>

#include "libseq/caution.hpp"
#include "libseq/io/json_text.hpp"
#include "libseq/io/results.hpp"

namespace libseq::io {


void write_station_geojson(const std::filesystem::path& path, const RunResults& results) {
  // Pooled-over-leads metrics by site, then "<method>_<metric>" property names.
  std::map<std::string, std::map<std::string, double>> by_site;
  for (const auto& row : results.metrics) {
    if (row.lead != -1 || row.site == "*") continue;
    by_site[row.site][row.method + "_" + row.metric] = row.value;
  }
  std::ostringstream out;
  out << "{\n\"type\": \"FeatureCollection\",\n";
  // Foreign members (RFC 7946 section 6.1) carry the caution and what the numbers are.
  out << "\"name\": " << json_string(results.title.empty() ? "runnel stations" : results.title) << ",\n";
  out << "\"caution\": " << json_string(caution_text()) << ",\n";
  out << "\"runnel_metrics\": " << json_string("metrics pooled over all lead times in the test period " +
                                                 results.test_period + "; target " + results.target_variable + " (" +
                                                 results.target_units + ")")
      << ",\n";
  out << "\"features\": [";
  bool first_feature = true;
  for (const auto& s : results.sites) {
    if (!std::isfinite(s.site.latitude) || !std::isfinite(s.site.longitude)) continue;  // no point without a place
    out << (first_feature ? "\n" : ",\n");
    first_feature = false;
    out << "{\"type\": \"Feature\", \"geometry\": {\"type\": \"Point\", \"coordinates\": ["
        << json_number(s.site.longitude) << ", " << json_number(s.site.latitude);
    if (std::isfinite(s.site.elevation)) out << ", " << json_number(s.site.elevation);
    out << "]}, \"properties\": {\"site_id\": " << json_string(s.site.id)
        << ", \"name\": " << json_string(s.site.name) << ", \"elevation_m\": " << json_number(s.site.elevation);
    auto it = by_site.find(s.site.id);
    if (it != by_site.end()) {
      for (const auto& [key, value] : it->second) out << ", " << json_string(key) << ": " << json_number(value);
    }
    out << "}}";
  }
  out << "\n]\n}\n";
  write_text_atomically(path, out.str());
}

}  // namespace libseq::io
