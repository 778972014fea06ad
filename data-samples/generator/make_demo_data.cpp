// runnel_make_demo_data: writes the INVENTED demo scenario of the Serrain Uplands (a fictional region; every name,
// place and value is made up) into a directory:
//   catchments.nc   4 catchments, daily precipitation, air temperature and discharge, 2008-2022, CF-1.8 DSG
//   catchments.h5   the same catchments in the runnel HDF5 panel layout v1
//   feeders.nc      3 distribution feeders, hourly load and air temperature, 2022-2023, CF-1.8 DSG
//   feeder_north.csv  the north feeder as a runnel one-site CSV
// Usage: runnel_make_demo_data <output-dir> [--seed N]. Exit codes: 0 ok, 1 usage, 3 failed.
//
// The weather is a stochastic generator and the discharge comes from a small conceptual model written for this
// program (degree-day snow, soil bucket, two linear reservoirs, triangular routing). They are meant to look
// plausible to a hydrologist, not to reproduce any real basin. Random draws use std::mt19937_64, whose output
// sequence the C++ standard fixes, and transforms written here (the std distributions are implementation-defined),
// so a given seed gives the same files with any standard library (up to libm rounding of exp/sin/pow).

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include "demo_writers.hpp"
#include "libseq/data/panel.hpp"
#include "libseq/data/time_axis.hpp"
#include "libseq/error.hpp"
#include "libseq/version.hpp"

namespace {

namespace fs = std::filesystem;
using libseq::data::CivilTime;
using libseq::data::Panel;
using libseq::data::SiteInfo;
using libseq::data::TimeAxis;
using libseq::data::VariableInfo;

constexpr std::uint64_t default_seed = 20080101;
constexpr double two_pi = 2.0 * std::numbers::pi;

// --- Random numbers --------------------------------------------------------------------------------------------------

class Random {
 public:
  explicit Random(std::uint64_t seed) : engine_(seed) {}

  /// Uniform on (0, 1): 53 random bits, shifted half a step off zero.
  double uniform() { return (static_cast<double>(engine_() >> 11) + 0.5) * 0x1.0p-53; }

  bool chance(double probability) { return uniform() < probability; }

  /// Integer uniform on [low, high].
  int integer(int low, int high) {
    return low + static_cast<int>(std::floor(uniform() * static_cast<double>(high - low + 1)));
  }

  /// Standard normal by the Box-Muller transform (Box & Muller 1958, Ann. Math. Statist. 29, 610-611).
  double normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const double radius = std::sqrt(-2.0 * std::log(uniform()));
    const double angle = two_pi * uniform();
    spare_ = radius * std::sin(angle);
    has_spare_ = true;
    return radius * std::cos(angle);
  }

  /// Gamma(shape, scale) by Marsaglia & Tsang (2000, ACM TOMS 26(3), 363-372), with their boost
  /// Gamma(a) = Gamma(a + 1) * U^(1/a) for shape < 1.
  double gamma(double shape, double scale) {
    if (shape < 1.0) {
      return gamma(shape + 1.0, scale) * std::pow(uniform(), 1.0 / shape);
    }
    const double d = shape - 1.0 / 3.0;
    const double c = 1.0 / std::sqrt(9.0 * d);
    while (true) {
      double x = 0.0, v = 0.0;
      do {
        x = normal();
        v = 1.0 + c * x;
      } while (v <= 0.0);
      v = v * v * v;
      const double u = uniform();
      if (std::log(u) < 0.5 * x * x + d - d * v + d * std::log(v)) {
        return d * v * scale;
      }
    }
  }

 private:
  std::mt19937_64 engine_;
  double spare_ = 0.0;
  bool has_spare_ = false;
};

// --- Calendar helpers ------------------------------------------------------------------------------------------------

/// Day of the year, 1..366.
int day_of_year(const CivilTime& c) {
  return static_cast<int>(libseq::data::days_from_civil(c.year, c.month, c.day) -
                          libseq::data::days_from_civil(c.year, 1, 1)) +
         1;
}

/// Day of the week, 0 = Sunday .. 6 = Saturday (1970-01-01 was a Thursday).
int day_of_week(std::int64_t days_since_epoch) { return static_cast<int>(((days_since_epoch + 4) % 7 + 7) % 7); }

/// Seasonal phase: cos of the year angle, +1 at `peak_day` and -1 half a year later.
double seasonal(int doy, double peak_day) { return std::cos(two_pi * (doy - peak_day) / 365.25); }

/// Public holidays of the invented Serrain calendar (no substitute days when one falls on a weekend):
/// New Year (1 Jan), Founders' Day (14 Mar), Ferry Monday (last Monday of April), Lantern Friday (third Friday of
/// June), Harvest Monday (first Monday of October), Long Night (21 Dec), Year's End (31 Dec).
bool is_serrain_holiday(const CivilTime& c) {
  const int weekday = day_of_week(libseq::data::days_from_civil(c.year, c.month, c.day));
  if ((c.month == 1 && c.day == 1) || (c.month == 3 && c.day == 14) || (c.month == 12 && c.day == 21) ||
      (c.month == 12 && c.day == 31)) {
    return true;
  }
  if (c.month == 4 && weekday == 1 && c.day + 7 > 30) return true;
  if (c.month == 6 && weekday == 5 && c.day >= 15 && c.day <= 21) return true;
  if (c.month == 10 && weekday == 1 && c.day <= 7) return true;
  return false;
}

float round_to(double value, int decimals) {
  const double factor = std::pow(10.0, decimals);
  return static_cast<float>(std::nearbyint(value * factor) / factor);
}

// --- Catchments ------------------------------------------------------------------------------------------------------

struct CatchmentSpec {
  const char* id;
  const char* name;
  double latitude, longitude;
  double gauge_altitude_m;
  double area_km2;
  double mean_elevation_m;
  double relief_m;         ///< Spread of the elevation bands around the mean.
  double forest_fraction;  ///< 0..1
};

// Coordinates lie on open North Atlantic water on purpose, so no one mistakes these for real gauges.
const std::array<CatchmentSpec, 4> catchment_specs{{
    {"SRN-TAR01", "Tarnel at Quorrin", 47.812, -31.204, 612.0, 412.0, 1450.0, 900.0, 0.38},
    {"SRN-OSK02", "Osk at Hestlebrook", 47.655, -31.622, 188.0, 86.0, 620.0, 420.0, 0.55},
    {"SRN-VEL03", "Velmire at Amberhollow", 47.431, -30.978, 154.0, 1230.0, 980.0, 1100.0, 0.47},
    {"SRN-LAT04", "Lathe Beck at Vantry Mill", 47.963, -30.811, 1105.0, 38.0, 1720.0, 700.0, 0.21},
}};

/// Regional daily weather shared by all catchments (so that their records are correlated as neighbours' are).
struct RegionalDay {
  bool wet = false;
  double amount_mm = 0.0;    ///< Wet-day depth at the reference elevation before local scatter.
  double temperature = 0.0;  ///< Daily mean at 500 m, degC.
};

std::vector<RegionalDay> regional_weather(std::int64_t first_day, std::size_t days, Random& random) {
  std::vector<RegionalDay> weather(days);
  bool wet = false;
  double anomaly = 0.0;
  int storm_days_left = 0;
  double storm_depth = 0.0;
  for (std::size_t i = 0; i < days; ++i) {
    const CivilTime c = libseq::data::civil_from_days(first_day + static_cast<std::int64_t>(i));
    const int doy = day_of_year(c);
    const double winter = seasonal(doy, 15.0);  // +1 mid-January
    // Occurrence: first-order two-state Markov chain, wetter and more persistent in winter (maritime climate).
    const double p_wet_after_dry = 0.30 + 0.08 * winter;
    const double p_wet_after_wet = 0.66 + 0.07 * winter;
    wet = random.chance(wet ? p_wet_after_wet : p_wet_after_dry);
    // Amounts: gamma with shape below one (many light days, few heavy), mean 6-8 mm on wet days.
    double amount = wet ? random.gamma(0.8, (7.0 - 1.0 * winter) / 0.8) : 0.0;
    // Storms: rare multi-day heavy events, most frequent in autumn (peak late October).
    if (storm_days_left == 0 && random.chance(0.006 + 0.008 * std::max(0.0, seasonal(doy, 295.0)))) {
      storm_days_left = random.integer(1, 3);
      storm_depth = random.gamma(2.5, 14.0);
    }
    if (storm_days_left > 0) {
      wet = true;
      amount += storm_depth * random.uniform() + 0.5 * storm_depth;
      storm_depth *= 0.55;
      --storm_days_left;
    }
    // Temperature: annual cycle at 500 m (about -1 degC in January, 18 degC in July) plus AR(1) day-to-day anomaly;
    // wet summer days are cooler, wet winter days milder.
    anomaly = 0.75 * anomaly + 2.0 * random.normal();
    const double cycle = 8.5 - 9.5 * seasonal(doy, 20.0);
    const double wet_shift = wet ? 1.2 * winter - 1.5 * std::max(0.0, -winter) : 0.0;
    weather[i] = {wet, amount, cycle + anomaly + wet_shift};
  }
  return weather;
}

/// Parameters of the conceptual model for one catchment.
struct ModelParameters {
  double degree_day_mm = 3.5;      ///< Melt per degC above melt_threshold, mm/day/degC.
  double melt_threshold = 0.0;     ///< degC.
  double snow_threshold = 0.5;     ///< Centre of the 2-degC rain/snow transition, degC.
  double field_capacity_mm = 200;  ///< Soil store capacity, mm.
  double shape_beta = 2.5;         ///< Non-linearity of recharge.
  double et_limit_fraction = 0.7;  ///< Soil fill above which evaporation is at its potential rate.
  double fast_rate = 0.25;         ///< Fast reservoir outflow rate, 1/day.
  double slow_rate = 0.02;         ///< Slow reservoir outflow rate, 1/day.
  double quick_rate = 0.5;         ///< Rate of the extra fast outlet above quick_threshold_mm, 1/day.
  double quick_threshold_mm = 15;  ///< Fast storage above which the extra outlet runs (storm peaks), mm.
  double percolation_mm = 1.4;     ///< Maximum transfer fast -> slow, mm/day.
  int routing_days = 1;            ///< Base of the triangular routing weights, days.
};

ModelParameters parameters_for(const CatchmentSpec& spec) {
  ModelParameters p;
  // Forest shades snow and holds more soil water; small catchments drain faster; large ones route longer.
  p.degree_day_mm = 4.0 * (1.0 - 0.35 * spec.forest_fraction);
  p.field_capacity_mm = 140.0 + 160.0 * spec.forest_fraction;
  p.fast_rate = std::clamp(0.55 - 0.09 * std::log(spec.area_km2), 0.10, 0.40);
  p.slow_rate = 0.018 + 0.01 * (1.0 - spec.forest_fraction);
  p.routing_days = 1 + static_cast<int>(std::lround(spec.area_km2 / 400.0));
  return p;
}

struct CatchmentSeries {
  std::vector<double> precipitation;  ///< Catchment-average depth, mm/day.
  std::vector<double> temperature;    ///< Catchment-average daily mean, degC.
  std::vector<double> discharge;      ///< Daily mean at the gauge, m3/s.
};

/// Runs the catchment model day by day. Equations (all per day, storages in mm over the catchment area):
///  - five elevation bands at mean +- relief/2; band temperature by a lapse rate of -6.5 K/km (standard atmosphere),
///    band precipitation +5 % per 100 m (common practice, no source), rescaled so the bands average the catchment
///    value;
///  - rain/snow split linear over snow_threshold +- 1 degC; degree-day melt M = ddf * max(T - T_melt, 0), limited by
///    the store (the degree-day method, e.g. Hock 2003, J. Hydrol. 282, 104-115, from memory);
///  - soil bucket with recharge R = W * (SM / FC)^beta and evaporation E = PET * min(1, SM / (LP * FC)), the
///    HBV soil routine (Lindstrom et al. 1997, J. Hydrol. 201, 272-288, eqs. as remembered); PET is a made-up
///    temperature index 0.17 * max(T + 2, 0) mm/day (common practice in spirit, no source);
///  - fast store S_f and slow store S_s, linear outflows Q_f = k_f S_f and Q_s = k_s S_s, percolation
///    min(perc, S_f) from fast to slow, and an extra outlet Q_q = k_q max(S_f - L, 0) that makes storm peaks
///    (the upper-zone threshold outlet of HBV in the same paper, as remembered);
///  - triangular routing weights over routing_days, then Q [m3/s] = Q [mm/day] * area [km2] / 86.4.
CatchmentSeries run_catchment(const CatchmentSpec& spec, const std::vector<RegionalDay>& weather, Random& random) {
  const ModelParameters p = parameters_for(spec);
  constexpr int bands = 5;
  std::array<double, bands> band_offset{}, band_precip_factor{};
  double factor_sum = 0.0;
  for (int b = 0; b < bands; ++b) {
    band_offset[b] = spec.relief_m * (b - 2) / 4.0;
    band_precip_factor[b] = 1.0 + 0.0005 * band_offset[b];
    factor_sum += band_precip_factor[b];
  }
  for (double& f : band_precip_factor) f *= bands / factor_sum;

  // Orographic enhancement of the regional depth: +6 % per 100 m above 800 m (common practice, no source).
  const double orographic = std::max(0.6, 1.0 + 0.0006 * (spec.mean_elevation_m - 800.0));
  const double lapse = -0.0065;  // K per m

  std::array<double, bands> snow{};
  double soil = 0.6 * p.field_capacity_mm;
  double fast = 5.0, slow = 60.0;

  std::vector<double> weights(static_cast<std::size_t>(p.routing_days));
  {
    double sum = 0.0;
    for (int i = 0; i < p.routing_days; ++i) {
      weights[static_cast<std::size_t>(i)] = std::min(i + 1.0, p.routing_days - i + 0.0);
      sum += weights[static_cast<std::size_t>(i)];
    }
    for (double& w : weights) w /= sum;
  }
  std::vector<double> runoff_history(weights.size(), 0.0);

  CatchmentSeries out;
  out.precipitation.resize(weather.size());
  out.temperature.resize(weather.size());
  out.discharge.resize(weather.size());
  for (std::size_t day = 0; day < weather.size(); ++day) {
    const RegionalDay& w = weather[day];
    // Local scatter: a regional wet day is occasionally dry here and vice versa; depths vary +-30 % or so.
    double precipitation = 0.0;
    if (w.wet ? random.chance(0.93) : random.chance(0.05)) {
      const double depth = w.wet ? w.amount_mm : random.gamma(0.7, 1.5);
      precipitation = depth * orographic * std::exp(0.3 * random.normal() - 0.045);
    }
    const double temperature = w.temperature + lapse * (spec.mean_elevation_m - 500.0) + 0.4 * random.normal();

    double liquid = 0.0;
    for (int b = 0; b < bands; ++b) {
      const double t_band = temperature + lapse * band_offset[b];
      const double p_band = precipitation * band_precip_factor[b];
      const double snow_fraction = std::clamp((p.snow_threshold + 1.0 - t_band) / 2.0, 0.0, 1.0);
      snow[b] += p_band * snow_fraction;
      const double melt = std::min(snow[b], p.degree_day_mm * std::max(t_band - p.melt_threshold, 0.0));
      snow[b] -= melt;
      liquid += (p_band * (1.0 - snow_fraction) + melt) / bands;
    }

    const double pet = 0.17 * std::max(temperature + 2.0, 0.0) * (1.0 + 0.15 * spec.forest_fraction);
    double recharge = liquid * std::pow(soil / p.field_capacity_mm, p.shape_beta);
    soil += liquid - recharge;
    soil -= std::min(soil, pet * std::min(1.0, soil / (p.et_limit_fraction * p.field_capacity_mm)));
    if (soil > p.field_capacity_mm) {
      recharge += soil - p.field_capacity_mm;
      soil = p.field_capacity_mm;
    }

    fast += recharge;
    const double percolation = std::min(p.percolation_mm, fast);
    fast -= percolation;
    slow += percolation;
    const double fast_out = p.fast_rate * fast + p.quick_rate * std::max(fast - p.quick_threshold_mm, 0.0);
    const double slow_out = p.slow_rate * slow;
    fast -= fast_out;
    slow -= slow_out;

    // Triangular routing: today's runoff spreads over the next routing_days days.
    std::rotate(runoff_history.rbegin(), runoff_history.rbegin() + 1, runoff_history.rend());
    runoff_history[0] = fast_out + slow_out;
    double routed = 0.0;
    for (std::size_t i = 0; i < weights.size(); ++i) routed += weights[i] * runoff_history[i];

    // Gauging error: about 4 % multiplicative scatter (rating-curve uncertainty; common practice, no source).
    const double gauged = routed * spec.area_km2 / 86.4 * std::exp(0.04 * random.normal());
    out.precipitation[day] = precipitation;
    out.temperature[day] = temperature;
    out.discharge[day] = gauged;
  }
  return out;
}

/// Marks `length` consecutive steps from `start` missing in one site's variable (clamped to the axis).
void blank(Panel& panel, std::size_t site, std::size_t variable, std::size_t start, std::size_t length) {
  for (std::size_t t = start; t < std::min(start + length, panel.time_count()); ++t) {
    panel.at(site, t, variable) = libseq::data::missing_value;
  }
}

/// Single missing values at `single_rate` in every site and variable: what real records have.
void punch_single_gaps(Panel& panel, Random& random, double single_rate) {
  for (std::size_t s = 0; s < panel.site_count(); ++s) {
    for (std::size_t k = 0; k < panel.variable_count(); ++k) {
      for (std::size_t t = 0; t < panel.time_count(); ++t) {
        if (random.chance(single_rate)) blank(panel, s, k, t, 1);
      }
    }
  }
}

/// Between `fewest` and `most` outages of `shortest`..`longest` steps per site in one variable (a gauge or a meter
/// out of service), anywhere in the record.
void punch_outages(Panel& panel, Random& random, std::size_t variable, int fewest, int most, int shortest,
                   int longest) {
  for (std::size_t s = 0; s < panel.site_count(); ++s) {
    const int outages = random.integer(fewest, most);
    for (int g = 0; g < outages; ++g) {
      const auto start = static_cast<std::size_t>(random.integer(0, static_cast<int>(panel.time_count()) - 1));
      blank(panel, s, variable, start, static_cast<std::size_t>(random.integer(shortest, longest)));
    }
  }
}

Panel make_catchments(std::uint64_t seed) {
  Random random(seed);
  const std::int64_t first_day = libseq::data::days_from_civil(2008, 1, 1);
  const std::int64_t end_day = libseq::data::days_from_civil(2023, 1, 1);
  const std::size_t days = static_cast<std::size_t>(end_day - first_day);
  constexpr std::size_t spin_up_days = 730;  // two years so that stores start the record in balance

  const std::vector<RegionalDay> weather =
      regional_weather(first_day - static_cast<std::int64_t>(spin_up_days), days + spin_up_days, random);

  std::vector<SiteInfo> sites;
  for (const CatchmentSpec& spec : catchment_specs) {
    SiteInfo site;
    site.id = spec.id;
    site.name = spec.name;
    site.latitude = spec.latitude;
    site.longitude = spec.longitude;
    site.elevation = spec.gauge_altitude_m;
    site.attributes = {{"area_km2", spec.area_km2},
                       {"mean_elevation_m", spec.mean_elevation_m},
                       {"forest_fraction", spec.forest_fraction}};
    sites.push_back(site);
  }
  std::vector<VariableInfo> variables{
      {"precipitation", "mm day-1", "lwe_precipitation_rate", "catchment-average precipitation, daily total"},
      {"air_temperature", "degC", "air_temperature", "catchment-average air temperature, daily mean"},
      {"discharge", "m3 s-1", "water_volume_transport_in_river_channel", "river discharge at the gauge, daily mean"},
  };
  Panel panel(TimeAxis(first_day * 86400, 86400, days), sites, variables);
  for (std::size_t s = 0; s < catchment_specs.size(); ++s) {
    const CatchmentSeries series = run_catchment(catchment_specs[s], weather, random);
    for (std::size_t t = 0; t < days; ++t) {
      panel.at(s, t, 0) = round_to(series.precipitation[t + spin_up_days], 1);
      panel.at(s, t, 1) = round_to(series.temperature[t + spin_up_days], 1);
      panel.at(s, t, 2) = static_cast<float>(series.discharge[t + spin_up_days]);
    }
  }
  punch_single_gaps(panel, random, 0.002);
  punch_outages(panel, random, 2, 1, 2, 12, 75);  // discharge: gauge out of service for weeks
  punch_outages(panel, random, 1, 0, 1, 3, 10);   // temperature: logger failure for days
  return panel;
}

// --- Feeders ---------------------------------------------------------------------------------------------------------

enum class FeederKind { residential, commercial, industrial };

struct FeederSpec {
  const char* id;
  const char* name;
  double latitude, longitude, altitude_m;
  FeederKind kind;
  double base_mw;        ///< Load at profile 1.0 and no weather effect.
  double rated_mw;       ///< Static attribute: rated capacity.
  double customers;      ///< Static attribute: connected customers.
  double urban_heat;     ///< Temperature offset of the site, degC.
};

const std::array<FeederSpec, 3> feeder_specs{{
    {"QRN-N", "Quorrin North feeder", 47.829, -31.188, 540.0, FeederKind::residential, 6.0, 16.0, 5400, 0.3},
    {"HSB-H", "Hestlebrook Harbour feeder", 47.642, -31.655, 12.0, FeederKind::commercial, 4.5, 12.0, 820, 0.8},
    {"AMB-E", "Amberhollow East Works feeder", 47.440, -30.951, 160.0, FeederKind::industrial, 11.0, 22.0, 37,
     0.0},
}};

/// Hour-of-day load profiles (fraction of base) for working days, Saturdays, and Sundays/holidays.
/// Shapes are invented to carry the usual features (morning and evening residential peaks, office plateau,
/// two-shift industry); common practice, no source.
struct DayProfiles {
  std::array<double, 24> working, saturday, rest;
};

DayProfiles profiles_for(FeederKind kind) {
  switch (kind) {
    case FeederKind::residential:
      return {{0.55, 0.50, 0.47, 0.46, 0.47, 0.53, 0.70, 0.88, 0.86, 0.76, 0.72, 0.72,
               0.74, 0.72, 0.70, 0.72, 0.80, 0.95, 1.08, 1.12, 1.06, 0.94, 0.80, 0.65},
              {0.58, 0.52, 0.49, 0.47, 0.47, 0.50, 0.58, 0.70, 0.82, 0.88, 0.90, 0.90,
               0.88, 0.84, 0.80, 0.80, 0.86, 0.98, 1.08, 1.10, 1.04, 0.95, 0.84, 0.70},
              {0.60, 0.54, 0.50, 0.48, 0.47, 0.48, 0.54, 0.64, 0.78, 0.88, 0.92, 0.94,
               0.94, 0.88, 0.82, 0.80, 0.84, 0.96, 1.06, 1.08, 1.02, 0.92, 0.80, 0.66}};
    case FeederKind::commercial:
      return {{0.32, 0.30, 0.30, 0.30, 0.31, 0.36, 0.52, 0.78, 0.96, 1.02, 1.04, 1.05,
               1.02, 1.04, 1.05, 1.03, 0.98, 0.88, 0.68, 0.52, 0.44, 0.40, 0.36, 0.34},
              {0.32, 0.30, 0.30, 0.30, 0.30, 0.32, 0.38, 0.48, 0.62, 0.72, 0.76, 0.78,
               0.76, 0.72, 0.68, 0.62, 0.56, 0.50, 0.44, 0.40, 0.38, 0.36, 0.34, 0.33},
              {0.31, 0.30, 0.29, 0.29, 0.29, 0.30, 0.32, 0.36, 0.40, 0.44, 0.46, 0.47,
               0.47, 0.46, 0.45, 0.44, 0.42, 0.40, 0.38, 0.36, 0.35, 0.34, 0.33, 0.32}};
    case FeederKind::industrial:
      return {{0.52, 0.50, 0.50, 0.50, 0.52, 0.62, 0.96, 1.00, 1.02, 1.02, 1.01, 1.00,
               0.98, 1.00, 0.98, 0.97, 0.98, 0.98, 0.97, 0.96, 0.95, 0.92, 0.70, 0.56},
              {0.50, 0.48, 0.48, 0.48, 0.50, 0.56, 0.78, 0.82, 0.83, 0.83, 0.82, 0.80,
               0.74, 0.66, 0.58, 0.54, 0.52, 0.52, 0.51, 0.51, 0.50, 0.50, 0.50, 0.49},
              {0.44, 0.43, 0.43, 0.43, 0.43, 0.44, 0.45, 0.45, 0.46, 0.46, 0.46, 0.46,
               0.46, 0.46, 0.45, 0.45, 0.45, 0.45, 0.45, 0.45, 0.44, 0.44, 0.44, 0.44}};
  }
  return {};
}

/// Weather sensitivity per kind: heating below 14 degC (linear) and cooling above 21 degC (power 1.4) on the
/// smoothed temperature; invented coefficients of a plausible size (common practice, no source).
struct Sensitivity {
  double heating_per_degc;
  double cooling_coefficient;
};

Sensitivity sensitivity_for(FeederKind kind) {
  switch (kind) {
    case FeederKind::residential: return {0.020, 0.028};
    case FeederKind::commercial: return {0.010, 0.030};
    case FeederKind::industrial: return {0.003, 0.007};
  }
  return {0.0, 0.0};
}

/// Hourly regional temperature at sea level: annual cycle, a diurnal cycle peaking mid-afternoon with a larger
/// swing in summer, an hourly AR(1) synoptic anomaly, and two or three heat waves per summer.
std::vector<double> regional_hourly_temperature(std::int64_t first_day, std::size_t hours, Random& random) {
  std::vector<double> heat(hours, 0.0);
  const std::size_t days = hours / 24;
  for (int year = 2022; year <= 2023; ++year) {
    const int waves = random.integer(2, 3);
    for (int k = 0; k < waves; ++k) {
      const std::int64_t start_day = libseq::data::days_from_civil(year, 6, 10) + random.integer(0, 76) - first_day;
      const int length_days = random.integer(4, 9);
      const double amplitude = 3.5 + 2.5 * random.uniform();
      for (int h = 0; h < length_days * 24; ++h) {
        const std::int64_t index = start_day * 24 + h;
        if (index >= 0 && index < static_cast<std::int64_t>(hours)) {
          const double envelope = std::sin(std::numbers::pi * h / (length_days * 24.0));
          heat[static_cast<std::size_t>(index)] += amplitude * envelope * envelope;
        }
      }
    }
  }
  std::vector<double> temperature(hours);
  double anomaly = 3.0 * random.normal();
  // Hourly AR(1) with a decorrelation time of about two days; innovations scaled for a stationary sd of 3 degC.
  const double phi = std::exp(-1.0 / 48.0);
  const double innovation = 3.0 * std::sqrt(1.0 - phi * phi);
  for (std::size_t d = 0; d < days; ++d) {
    const CivilTime c = libseq::data::civil_from_days(first_day + static_cast<std::int64_t>(d));
    const double summer = -seasonal(day_of_year(c), 20.0);  // +1 in mid-July
    const double daily_mean = 11.0 + 9.0 * summer;
    const double swing = 4.0 + 1.5 * summer;
    for (int h = 0; h < 24; ++h) {
      const std::size_t i = d * 24 + static_cast<std::size_t>(h);
      anomaly = phi * anomaly + innovation * random.normal();
      temperature[i] = daily_mean + swing * std::cos(two_pi * (h - 15) / 24.0) + anomaly + heat[i];
    }
  }
  return temperature;
}

Panel make_feeders(std::uint64_t seed) {
  Random random(seed ^ 0x5EED5EEDull);
  const std::int64_t first_day = libseq::data::days_from_civil(2022, 1, 1);
  const std::int64_t end_day = libseq::data::days_from_civil(2024, 1, 1);
  const std::size_t hours = static_cast<std::size_t>(end_day - first_day) * 24;
  const std::vector<double> regional = regional_hourly_temperature(first_day, hours, random);

  std::vector<SiteInfo> sites;
  for (const FeederSpec& spec : feeder_specs) {
    SiteInfo site;
    site.id = spec.id;
    site.name = spec.name;
    site.latitude = spec.latitude;
    site.longitude = spec.longitude;
    site.elevation = spec.altitude_m;
    site.attributes = {{"rated_capacity_mw", spec.rated_mw}, {"customer_count", spec.customers}};
    sites.push_back(site);
  }
  // There is no CF standard name for electrical load, so `load` carries none (long_name and units only).
  std::vector<VariableInfo> variables{
      {"load", "MW", "", "active power delivered by the feeder, hourly mean"},
      {"air_temperature", "degC", "air_temperature", "air temperature near the feeder's substation, hourly mean"},
  };
  Panel panel(TimeAxis(first_day * 86400, 3600, hours), sites, variables);

  for (std::size_t s = 0; s < feeder_specs.size(); ++s) {
    const FeederSpec& spec = feeder_specs[s];
    const DayProfiles profiles = profiles_for(spec.kind);
    const Sensitivity sensitivity = sensitivity_for(spec.kind);
    double smoothed = regional[0];
    double noise = 0.0;
    for (std::size_t i = 0; i < hours; ++i) {
      const std::int64_t day = first_day + static_cast<std::int64_t>(i / 24);
      const int hour = static_cast<int>(i % 24);
      const CivilTime c = libseq::data::civil_from_days(day);
      const int weekday = day_of_week(day);
      const double temperature = regional[i] - 0.0065 * spec.altitude_m + spec.urban_heat + 0.3 * random.normal();
      // Buildings answer to the last several hours of weather: exponential smoothing, time constant 6 h.
      smoothed += (temperature - smoothed) / 6.0;

      const bool rest_day = weekday == 0 || is_serrain_holiday(c);
      const std::array<double, 24>& profile =
          rest_day ? profiles.rest : (weekday == 6 ? profiles.saturday : profiles.working);
      double shape = profile[static_cast<std::size_t>(hour)];
      // The east works close for maintenance in the second week of August.
      if (spec.kind == FeederKind::industrial && c.month == 8 && c.day >= 8 && c.day <= 14) shape = 0.22;
      const double heating = sensitivity.heating_per_degc * std::max(14.0 - smoothed, 0.0);
      // Cooling follows occupancy: it scales with the profile, so heat peaks land in the afternoon and evening.
      const double cooling = sensitivity.cooling_coefficient * std::pow(std::max(smoothed - 21.0, 0.0), 1.4) * shape;
      const double growth = 1.0 + 0.015 * static_cast<double>(i) / 8760.0;  // +1.5 % a year
      noise = 0.85 * noise + 0.02 * random.normal();
      const double load = spec.base_mw * growth * (shape * (1.0 + heating) + cooling) * (1.0 + noise);
      panel.at(s, i, 0) = round_to(load, 3);
      panel.at(s, i, 1) = round_to(temperature, 1);
    }
  }
  // Meter dropouts (single hours), a meter outage of one to three days per feeder, a thermometer outage or two.
  punch_single_gaps(panel, random, 0.001);
  punch_outages(panel, random, 0, 1, 1, 24, 72);
  punch_outages(panel, random, 1, 0, 2, 6, 48);
  return panel;
}

// --- Summary ---------------------------------------------------------------------------------------------------------

struct Stats {
  double mean = 0.0, max = -1e300;
  std::size_t count = 0, missing = 0;
};

Stats stats_of(const Panel& panel, std::size_t site, std::size_t variable) {
  Stats st;
  double sum = 0.0;
  for (std::size_t t = 0; t < panel.time_count(); ++t) {
    const float v = panel.at(site, t, variable);
    if (std::isfinite(v)) {
      sum += v;
      st.max = std::max(st.max, static_cast<double>(v));
      ++st.count;
    } else {
      ++st.missing;
    }
  }
  st.mean = st.count ? sum / static_cast<double>(st.count) : std::nan("");
  return st;
}

void print_summary(const Panel& catchments, const Panel& feeders) {
  std::printf("catchments: %zu sites x %zu days from %s\n", catchments.site_count(), catchments.time_count(),
              libseq::data::format_iso8601(catchments.axis().start()).c_str());
  for (std::size_t s = 0; s < catchments.site_count(); ++s) {
    const Stats p = stats_of(catchments, s, 0), t = stats_of(catchments, s, 1), q = stats_of(catchments, s, 2);
    const double area = catchments.sites()[s].attributes.at("area_km2");
    const double runoff_mm_year = q.mean * 86.4 / area * 365.25;
    std::printf("  %-10s P %6.0f mm/yr  T %5.1f degC  Q mean %7.2f max %8.2f m3/s  runoff %5.0f mm/yr (%.2f of P)"
                "  missing Q %zu\n",
                catchments.sites()[s].id.c_str(), p.mean * 365.25, t.mean, q.mean, q.max, runoff_mm_year,
                runoff_mm_year / (p.mean * 365.25), q.missing);
  }
  std::printf("feeders: %zu sites x %zu hours from %s\n", feeders.site_count(), feeders.time_count(),
              libseq::data::format_iso8601(feeders.axis().start()).c_str());
  for (std::size_t s = 0; s < feeders.site_count(); ++s) {
    const Stats l = stats_of(feeders, s, 0), t = stats_of(feeders, s, 1);
    std::printf("  %-6s load mean %6.2f max %6.2f MW  T mean %5.1f max %5.1f degC  missing load %zu\n",
                feeders.sites()[s].id.c_str(), l.mean, l.max, t.mean, t.max, l.missing);
  }
}

int usage(const char* program) {
  std::fprintf(stderr, "usage: %s <output-dir> [--seed N]\n  writes catchments.nc, catchments.h5, feeders.nc and "
                       "feeder_north.csv (invented demo data) into <output-dir>\n", program);
  return 1;
}

}  // namespace

int main(int argc, char** argv) {
  std::string output;
  std::uint64_t seed = default_seed;
  for (int i = 1; i < argc; ++i) {
    const std::string arg = argv[i];
    if (arg == "-h" || arg == "--help") {
      usage(argv[0]);
      return 0;
    }
    if (arg == "--seed" && i + 1 < argc) {
      const char* text = argv[++i];
      const auto [end, error] = std::from_chars(text, text + std::strlen(text), seed);
      if (error != std::errc() || *end != '\0') {
        std::fprintf(stderr, "%s: --seed expects a non-negative integer, got '%s'\n", argv[0], text);
        return 1;
      }
    } else if (output.empty() && !arg.starts_with("-")) {
      output = arg;
    } else {
      return usage(argv[0]);
    }
  }
  if (output.empty()) {
    return usage(argv[0]);
  }

  try {
    const fs::path dir(output);
    fs::create_directories(dir);
    // No commit hash here: regenerating from an unchanged generator should give unchanged files.
    const std::string history =
        "made by runnel_make_demo_data (libseq " + libseq::version() + ") with seed " + std::to_string(seed);

    Panel catchments = make_catchments(seed);
    // Pack discharge to int16 and keep the unpacked values in the panel, so that the NetCDF and HDF5 copies hold
    // exactly the same numbers (as float32).
    const runnel_demo::Int16Packing packing = runnel_demo::choose_int16_packing(catchments, 2);
    for (std::size_t s = 0; s < catchments.site_count(); ++s) {
      for (std::size_t t = 0; t < catchments.time_count(); ++t) {
        float& q = catchments.at(s, t, 2);
        q = packing.unpack(packing.pack(q));
      }
    }
    const std::vector<runnel_demo::StaticAttributeInfo> catchment_statics{
        {"area_km2", "km2", "catchment area upstream of the gauge"},
        {"mean_elevation_m", "m", "mean elevation of the catchment above sea level"},
        {"forest_fraction", "1", "fraction of the catchment area under forest"}};
    runnel_demo::CfLayout catchment_layout;
    catchment_layout.time_unit = "days";
    catchment_layout.time_unit_seconds = 86400;
    catchment_layout.title = "Serrain Uplands demo catchments (invented)";
    catchment_layout.summary =
        "Daily catchment-average precipitation and air temperature and daily mean discharge at four invented "
        "gauges, 2008-2022; weather from a stochastic generator, discharge from a conceptual snow/soil/reservoir "
        "model. See data-samples/README.md.";
    catchment_layout.history = history;
    catchment_layout.station_kind = "gauge";
    catchment_layout.altitude_long_name = "elevation of the gauge above sea level";
    catchment_layout.encodings = {{"time: mean", std::nullopt}, {"time: mean", std::nullopt}, {"time: mean", packing}};
    catchment_layout.statics = catchment_statics;
    runnel_demo::write_cf_timeseries(catchments, catchment_layout, dir / "catchments.nc");
    runnel_demo::write_panel_hdf5(catchments, catchment_statics, catchment_layout.title, history,
                                  dir / "catchments.h5");

    const Panel feeders = make_feeders(seed);
    runnel_demo::CfLayout feeder_layout;
    feeder_layout.time_unit = "hours";
    feeder_layout.time_unit_seconds = 3600;
    feeder_layout.title = "Serrain Uplands demo distribution feeders (invented)";
    feeder_layout.summary =
        "Hourly mean load and air temperature of three invented distribution feeders, 2022-2023, with daily and "
        "weekly cycles, an invented holiday calendar and heat-driven peaks. See data-samples/README.md.";
    feeder_layout.history = history;
    feeder_layout.station_kind = "feeder";
    feeder_layout.altitude_long_name = "elevation of the feeder's substation above sea level";
    feeder_layout.encodings = {{"time: mean", std::nullopt}, {"time: mean", std::nullopt}};
    feeder_layout.statics = {{"rated_capacity_mw", "MW", "rated capacity of the feeder"},
                             {"customer_count", "1", "number of connected customers"}};
    runnel_demo::write_cf_timeseries(feeders, feeder_layout, dir / "feeders.nc");
    runnel_demo::write_site_csv(feeders, 0, {3, 1}, dir / "feeder_north.csv");

    print_summary(catchments, feeders);
    std::printf("wrote catchments.nc, catchments.h5, feeders.nc, feeder_north.csv to %s\n", dir.string().c_str());
  } catch (const std::exception& error) {
    std::fprintf(stderr, "runnel_make_demo_data: %s\n", error.what());
    return 3;
  }
  return 0;
}
