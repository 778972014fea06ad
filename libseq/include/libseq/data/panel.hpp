#pragma once
/// @file panel.hpp
/// The in-memory data model every reader produces and every later stage consumes: sites × time × variables,
/// float storage, NaN for missing. Nothing downstream of a Panel knows which file format it came from.

#include <cmath>
#include <cstddef>
#include <limits>
#include <map>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/data/time_axis.hpp"

namespace libseq::data {

/// Value used for a missing observation everywhere in libseq.
inline constexpr float missing_value = std::numeric_limits<float>::quiet_NaN();

/// Metadata of one site (gauge, weather station, feeder, zone).
struct SiteInfo {
  std::string id;          ///< Unique identifier (CF `cf_role = "timeseries_id"`); required.
  std::string name;        ///< Human-readable name; may be empty.
  double latitude = std::numeric_limits<double>::quiet_NaN();   ///< degrees_north, WGS 84; NaN when unknown.
  double longitude = std::numeric_limits<double>::quiet_NaN();  ///< degrees_east, WGS 84; NaN when unknown.
  double elevation = std::numeric_limits<double>::quiet_NaN();  ///< metres above sea level; NaN when unknown.
  /// Static attributes (catchment area, mean slope, customer count...), by name; units are the file's.
  std::map<std::string, double> attributes;
};

/// Metadata of one variable, kept as written in the source file.
struct VariableInfo {
  std::string name;           ///< Variable name in the source (e.g. "discharge").
  std::string units;          ///< Units string as written (e.g. "m3 s-1"); empty when the file gives none.
  std::string standard_name;  ///< CF standard_name; empty when absent.
  std::string long_name;      ///< CF long_name; empty when absent.
};

/// Sites × time × variables of float values on one regular UTC time axis, NaN for missing.
///
/// Storage is one contiguous block, site-major then time then variable: the record of one site is contiguous,
/// so a training window of a site is a contiguous slice. Not thread-safe for concurrent writes to one site;
/// distinct sites may be filled from distinct threads.
class Panel {
 public:
  Panel() = default;
  /// Allocates sites × axis.length() × variables values, all missing.
  Panel(TimeAxis axis, std::vector<SiteInfo> sites, std::vector<VariableInfo> variables);

  const TimeAxis& axis() const { return axis_; }
  const std::vector<SiteInfo>& sites() const { return sites_; }
  const std::vector<VariableInfo>& variables() const { return variables_; }
  std::vector<SiteInfo>& sites() { return sites_; }
  std::vector<VariableInfo>& variables() { return variables_; }

  std::size_t site_count() const { return sites_.size(); }
  std::size_t time_count() const { return axis_.length(); }
  std::size_t variable_count() const { return variables_.size(); }

  /// Value at (site, time step, variable); not range-checked.
  float& at(std::size_t site, std::size_t time, std::size_t variable) {
    return values_[(site * time_count() + time) * variable_count() + variable];
  }
  float at(std::size_t site, std::size_t time, std::size_t variable) const {
    return values_[(site * time_count() + time) * variable_count() + variable];
  }

  /// All values of one site, time-major then variable (time_count() × variable_count()).
  std::span<float> site_values(std::size_t site);
  std::span<const float> site_values(std::size_t site) const;

  /// Copy of one site's series of one variable (time_count() values).
  std::vector<float> series(std::size_t site, std::size_t variable) const;

  /// Writes one site's series of one variable. @throws libseq::DataError when the length differs from time_count().
  void set_series(std::size_t site, std::size_t variable, std::span<const float> values);

  /// Index of a variable by name, then by standard_name; empty when absent.
  std::optional<std::size_t> find_variable(std::string_view name_or_standard_name) const;

  /// Index of a site by id; empty when absent.
  std::optional<std::size_t> find_site(std::string_view id) const;

  /// Index of a variable as find_variable, or @throws libseq::DataError listing the variables present;
  /// `source` names the file or context for the message.
  std::size_t require_variable(std::string_view name_or_standard_name, std::string_view source) const;

  /// Fraction of missing values (NaN) of one site and variable, in [0, 1]; 1 for an empty axis.
  double missing_fraction(std::size_t site, std::size_t variable) const;

  /// Where the values came from (file paths, for provenance and messages).
  const std::vector<std::string>& sources() const { return sources_; }
  void add_source(std::string path) { sources_.push_back(std::move(path)); }

  /// Drops the sites whose flag is true, keeping the order of the others.
  void remove_sites(const std::vector<bool>& drop);

 private:
  TimeAxis axis_;
  std::vector<SiteInfo> sites_;
  std::vector<VariableInfo> variables_;
  std::vector<float> values_;
  std::vector<std::string> sources_;
};

}  // namespace libseq::data
