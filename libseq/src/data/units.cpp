#include "libseq/data/units.hpp"

#include <cctype>
#include <cmath>
#include <map>
#include <optional>

#include "libseq/error.hpp"

namespace libseq::data {

namespace {

// A unit as an affine map to its family's base unit: base = scale * value + offset.
struct UnitDef {
  const char* family;
  double scale;
  double offset;
};

// Base units: K, kg m-2 s-1, m3 s-1, W.
// 1 mm of water over 1 m2 weighs 1 kg (density 1000 kg m-3, common practice, no source), so 1 mm day-1 is
// 1/86400 kg m-2 s-1. The international foot is exactly 0.3048 m (international yard and pound agreement, 1959),
// so 1 ft3 = 0.3048^3 m3 = 0.028316846592 m3. 0 degC is 273.15 K by definition of the Celsius scale (SI brochure).
const std::map<std::string, UnitDef>& definitions() {
  static const std::map<std::string, UnitDef> table = {
      {"K", {"temperature", 1.0, 0.0}},
      {"degC", {"temperature", 1.0, 273.15}},
      {"kg m-2 s-1", {"precipitation flux", 1.0, 0.0}},
      {"mm day-1", {"precipitation flux", 1.0 / 86400.0, 0.0}},
      {"m3 s-1", {"volume flow", 1.0, 0.0}},
      {"L s-1", {"volume flow", 1.0e-3, 0.0}},
      {"ft3 s-1", {"volume flow", 0.3048 * 0.3048 * 0.3048, 0.0}},
      {"MW", {"power", 1.0e6, 0.0}},
      {"kW", {"power", 1.0e3, 0.0}},
  };
  return table;
}

// Accepted spellings → canonical names. Case matters ("mW" is milliwatt, refused); "C" alone is the coulomb in
// UDUNITS, so it is not taken for degrees Celsius.
const std::map<std::string, std::string>& spellings() {
  static const std::map<std::string, std::string> table = {
      {"K", "K"},
      {"kelvin", "K"},
      {"degC", "degC"},
      {"deg_C", "degC"},
      {"degree_Celsius", "degC"},
      {"degrees_Celsius", "degC"},
      {"Celsius", "degC"},
      {"celsius", "degC"},
      {"kg m-2 s-1", "kg m-2 s-1"},
      {"kg m^-2 s^-1", "kg m-2 s-1"},
      {"kg/m2/s", "kg m-2 s-1"},
      {"mm day-1", "mm day-1"},
      {"mm d-1", "mm day-1"},
      {"mm/day", "mm day-1"},
      {"mm/d", "mm day-1"},
      {"m3 s-1", "m3 s-1"},
      {"m3/s", "m3 s-1"},
      {"m^3 s-1", "m3 s-1"},
      {"m^3/s", "m3 s-1"},
      {"m^3 s^-1", "m3 s-1"},
      {"L s-1", "L s-1"},
      {"l s-1", "L s-1"},
      {"L/s", "L s-1"},
      {"l/s", "L s-1"},
      {"ft3 s-1", "ft3 s-1"},
      {"ft3/s", "ft3 s-1"},
      {"ft^3 s-1", "ft3 s-1"},
      {"ft^3/s", "ft3 s-1"},
      {"MW", "MW"},
      {"kW", "kW"},
  };
  return table;
}

std::string collapse_blanks(std::string_view text) {
  std::string out;
  bool pending_space = false;
  for (const char c : text) {
    if (std::isspace(static_cast<unsigned char>(c))) {
      pending_space = !out.empty();
      continue;
    }
    if (pending_space) out += ' ';
    pending_space = false;
    out += c;
  }
  return out;
}

std::optional<UnitDef> lookup(const std::string& canonical) {
  const auto found = definitions().find(canonical);
  if (found == definitions().end()) return std::nullopt;
  return found->second;
}

}  // namespace

std::string normalise_units(std::string_view units) {
  std::string text = collapse_blanks(units);
  const auto found = spellings().find(text);
  return found == spellings().end() ? text : found->second;
}

bool can_convert(std::string_view from, std::string_view to) {
  const std::string a = normalise_units(from);
  const std::string b = normalise_units(to);
  if (a == b) return true;
  const auto da = lookup(a);
  const auto db = lookup(b);
  return da && db && std::string_view(da->family) == db->family;
}

std::string accepted_units_summary() {
  return "temperature: K (kelvin), degC (deg_C, degree_Celsius, degrees_Celsius, Celsius, celsius); "
         "precipitation flux: mm day-1 (mm d-1, mm/day, mm/d), kg m-2 s-1 (kg m^-2 s^-1, kg/m2/s); "
         "volume flow: m3 s-1 (m3/s, m^3 s-1, m^3/s, m^3 s^-1), L s-1 (l s-1, L/s, l/s), "
         "ft3 s-1 (ft3/s, ft^3 s-1, ft^3/s); power: MW, kW";
}

void convert_units(std::span<float> values, std::string_view from, std::string_view to, std::string_view what) {
  const std::string a = normalise_units(from);
  const std::string b = normalise_units(to);
  if (a == b) return;
  const auto da = lookup(a);
  const auto db = lookup(b);
  if (!da || !db || std::string_view(da->family) != db->family) {
    throw DataError(std::string(what) + ": cannot convert units '" + std::string(from) + "' to '" +
                    std::string(to) + "'; accepted conversions are within one family of: " +
                    accepted_units_summary());
  }
  // value_to = (scale_from * value + offset_from - offset_to) / scale_to, in double.
  const double scale = da->scale / db->scale;
  const double shift = (da->offset - db->offset) / db->scale;
  for (float& v : values) v = static_cast<float>(scale * static_cast<double>(v) + shift);
}

}  // namespace libseq::data
