#pragma once
/// @file units.hpp
/// Conversion of values between a small, documented set of physical units (docs/input-netcdf.md, "Units"):
/// temperature K ↔ degC; precipitation mm day-1 ↔ kg m-2 s-1; discharge m3 s-1 ↔ L s-1 ↔ ft3 s-1; power MW ↔ kW.
/// Pure functions, thread-safe.

#include <span>
#include <string>
#include <string_view>

namespace libseq::data {

/// Canonical spelling of a units string when it is one of the accepted spellings (e.g. "m3/s", "m^3 s-1" and
/// "m3 s-1" all give "m3 s-1"; "degree_Celsius" gives "degC"); otherwise the text with surrounding blanks removed
/// and inner runs of blanks collapsed to one space.
std::string normalise_units(std::string_view units);

/// Whether convert_units can convert `from` to `to`: both in the same family of the accepted set, or equal after
/// normalise_units.
bool can_convert(std::string_view from, std::string_view to);

/// Converts `values` in place from units `from` to units `to`, computing in double and storing to float. NaN stays
/// NaN. Equal units after normalise_units leave the values untouched (even units outside the accepted set).
/// @throws libseq::DataError naming `what` (file and variable), the units found and the units asked for, and listing
///         the accepted units, when the pair cannot be converted.
void convert_units(std::span<float> values, std::string_view from, std::string_view to, std::string_view what);

/// The accepted units and their spellings, as one line for messages and documentation.
std::string accepted_units_summary();

}  // namespace libseq::data
