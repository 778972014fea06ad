#pragma once
/// @file demo_writers.hpp
/// Writers private to the demo-data generator: a Panel to a CF-1.8 discrete-sampling-geometry NetCDF-4 file, to the
/// runnel HDF5 panel layout v1, and one site to the runnel one-site CSV. They are not library API (the library's own
/// readers and writers live in libseq/io); they exist so that the generator can write its invented scenario with
/// nothing but the NetCDF-C and HDF5 C APIs. Every writer writes to a temporary name beside the target and renames
/// it into place, so an interrupted run leaves either the old file or the new one.

#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "libseq/data/panel.hpp"

namespace runnel_demo {

/// Linear int16 packing of a float variable (CF-1.8 section 8.1: unpacked = packed * scale_factor + add_offset).
/// The packed value -32767 is the _FillValue; valid packed values are -32766..32767.
struct Int16Packing {
  float scale_factor = 1.0f;  ///< Unpacked units per packed count.
  float add_offset = 0.0f;    ///< Unpacked value of packed 0.
  static constexpr std::int16_t fill_value = -32767;
  /// Packed count of a value (rounded to nearest, clamped to the valid range); NaN gives fill_value.
  std::int16_t pack(float value) const;
  /// Unpacked value of a count, computed in double and rounded to float; fill_value gives NaN.
  float unpack(std::int16_t packed) const;
};

/// Packing that spans the finite values of one Panel variable over all sites with about 65530 steps.
/// @throws libseq::DataError naming the variable when it holds no finite value.
Int16Packing choose_int16_packing(const libseq::data::Panel& panel, std::size_t variable);

/// How one Panel variable is encoded in the NetCDF file.
struct VariableEncoding {
  /// CF cell_methods, e.g. "time: mean"; empty writes none.
  std::string cell_methods;
  /// When set, store as int16 with this scale_factor/add_offset; otherwise float32.
  std::optional<Int16Packing> int16_packing;
};

/// Metadata of one static (per-site) attribute, written as a variable over the station dimension.
struct StaticAttributeInfo {
  std::string name;       ///< Key in SiteInfo::attributes and the variable name in the files.
  std::string units;      ///< UDUNITS string ("km2", "m", "1").
  std::string long_name;  ///< Human-readable description.
};

/// Everything about a CF time-series file that the Panel itself does not carry.
struct CfLayout {
  std::string time_unit = "days";            ///< "days" or "hours": the unit word of the time coordinate.
  std::int64_t time_unit_seconds = 86400;    ///< Seconds per time unit; the panel step must be a multiple.
  std::string title;                         ///< Global attribute title.
  std::string summary;                       ///< Global attribute summary.
  std::string history;                       ///< Global attribute history (program, version, seed).
  std::string station_kind;                  ///< Word used in long_names, e.g. "gauge" or "feeder".
  std::string altitude_long_name;            ///< long_name of the alt coordinate.
  std::vector<VariableEncoding> encodings;   ///< One per Panel variable, same order.
  std::vector<StaticAttributeInfo> statics;  ///< Static attributes to write, in this order.
};

/// Writes `panel` as a CF-1.8 DSG file (featureType timeSeries, orthogonal multidimensional (station, time)),
/// NetCDF-4 with deflate level 4 and shuffle. Missing values (NaN) become the variable's _FillValue.
/// @throws libseq::ConfigError when the layout does not match the panel; libseq::IoError naming `path` and the
/// NetCDF error when a call fails.
void write_cf_timeseries(const libseq::data::Panel& panel, const CfLayout& layout, const std::filesystem::path& path);

/// Writes `panel` in the runnel HDF5 panel layout v1 (root attributes runnel_layout = "panel",
/// runnel_layout_version = 1; /time, /sites/..., /sites/attributes/<name>, /variables/<name> float32 [site, time]).
/// @throws libseq::IoError naming `path` and the HDF5 object when a call fails.
/// `title` and `history` become root string attributes of the same names.
void write_panel_hdf5(const libseq::data::Panel& panel, const std::vector<StaticAttributeInfo>& statics,
                      const std::string& title, const std::string& history, const std::filesystem::path& path);

/// Writes one site of `panel` as the runnel one-site CSV: `# key: value` comment lines (site_id, name, latitude,
/// longitude, elevation, one `units <var>` per variable), a header `time,<var>,...`, rows with ISO 8601 UTC times;
/// an empty cell is a missing value. `decimals` gives the digits after the point per variable.
/// @throws libseq::IoError naming `path` when the file cannot be written.
void write_site_csv(const libseq::data::Panel& panel, std::size_t site, const std::vector<int>& decimals,
                    const std::filesystem::path& path);

}  // namespace runnel_demo
