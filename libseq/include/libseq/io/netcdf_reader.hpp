#pragma once
/// @file netcdf_reader.hpp
/// Reader of CF-conventions NetCDF files (classic, 64-bit offset and NetCDF-4) holding station time series.
/// The accepted layouts, attributes and calendars are described in docs/input-netcdf.md.

#include <filesystem>

#include "libseq/io/read_options.hpp"

namespace libseq::io {

/// Reads station time series from a CF NetCDF file into a Panel.
///
/// Layouts: CF discrete sampling geometry `featureType = "timeSeries"` in the orthogonal multidimensional form
/// (`(station, time)` or `(time, station)`), the incomplete multidimensional form (`time(station, obs)`), the
/// contiguous ragged array form (a count variable with `sample_dimension`), and single-station files with no station
/// dimension. Station ids come from the variable with `cf_role = "timeseries_id"`; latitude, longitude and
/// elevation from CF coordinate variables; other numeric variables on the station dimension become static
/// attributes. Missing data follow CF section 2.5.1: `_FillValue`, `missing_value` and `valid_min`/`valid_max`/
/// `valid_range` (compared on packed values), then `scale_factor`/`add_offset` unpacking in double. Times are
/// decoded with the file's calendar (see libseq/data/calendar.hpp) onto one regular UTC axis.
///
/// Values are read site by site straight into the Panel's storage, so peak memory is the Panel plus one site's
/// series; `options.sites` reads only the listed sites. Sites whose requested values are all missing are dropped
/// and reported in `ReadResult::warnings`. `options.target_units` are applied with data::convert_units.
///
/// Thread-safety: the NetCDF-C library is not thread-safe; do not call this concurrently from several threads.
///
/// @throws libseq::IoError for a file that does not exist or cannot be read (the path and the NetCDF error text).
/// @throws libseq::FormatError for a file that is not NetCDF, a layout or dimension that is not one of the above,
///         unknown time units or calendar, or a 360_day calendar.
/// @throws libseq::DataError for a missing variable or site (listing those present), time values that are not
///         strictly increasing on a regular step, ±Inf values, or a units pair that cannot be converted.
ReadResult read_netcdf(const std::filesystem::path& path, const ReadOptions& options = {});

}  // namespace libseq::io
