// A program outside the runnel tree that uses the installed library exactly as a downstream project would:
// headers from <prefix>/include, the static library and its dependencies through find_package(libseq CONFIG).
// It prints facts that the install test (run_consumer.cmake) compares with what the library must return.
// Usage: libseq_consumer <catchments.nc> <catchments.h5>. Reading the demo samples through the installed static
// library checks that its link-only HDF5 and NetCDF dependencies reach the consumer's link line.

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <vector>

#include "libseq/data/panel.hpp"
#include "libseq/error.hpp"
#include "libseq/io/reader.hpp"
#include "libseq/version.hpp"

namespace {

/// Number of (site, time, variable) cells whose values differ between two panels of the same shape by more than a
/// few float32 ulps (relative 1e-6: the two readers may round the int16 unpacking differently), matching variables
/// by name (missing equals missing); -1 when the shapes or names differ.
long differing_cells(const libseq::data::Panel& a, const libseq::data::Panel& b) {
  if (a.site_count() != b.site_count() || a.time_count() != b.time_count() ||
      a.variable_count() != b.variable_count() || !(a.axis() == b.axis())) {
    return -1;
  }
  long differing = 0;
  for (std::size_t k = 0; k < a.variable_count(); ++k) {
    const auto other = b.find_variable(a.variables()[k].name);
    if (!other) return -1;
    for (std::size_t s = 0; s < a.site_count(); ++s) {
      if (a.sites()[s].id != b.sites()[s].id) return -1;
      for (std::size_t t = 0; t < a.time_count(); ++t) {
        const float x = a.at(s, t, k), y = b.at(s, t, *other);
        const bool same = std::isnan(x) ? std::isnan(y) : std::abs(x - y) <= 1e-6f * std::max(1.0f, std::abs(x));
        if (!same) ++differing;
      }
    }
  }
  return differing;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 3) {
    std::fprintf(stderr, "usage: %s <catchments.nc> <catchments.h5>\n", argv[0]);
    return 1;
  }
  using namespace libseq::data;
  const TimeAxis axis(to_utc_seconds(CivilTime{2022, 1, 1, 0, 0, 0}), 3600, 4);
  Panel panel(axis, {SiteInfo{"QRN-N", "Quorrin North feeder (invented)", 47.829, -31.188, 540.0, {}}},
              {VariableInfo{"load", "MW", "", "feeder load"}});
  const std::vector<float> load{4.5f, 4.25f, missing_value, 5.0f};
  panel.set_series(0, 0, load);

  // The error hierarchy must cross the library boundary: a missing variable is a DataError, also an Error.
  const char* caught = "none";
  try {
    panel.require_variable("discharge", "consumer panel");
  } catch (const libseq::DataError&) {
    caught = "DataError";
  } catch (const libseq::Error&) {
    caught = "Error";
  }

  std::printf("libseq version %s\n", libseq::version().c_str());
  std::printf("panel sites=%zu times=%zu variables=%zu\n", panel.site_count(), panel.time_count(),
              panel.variable_count());
  std::printf("axis %s .. %s step %s\n", format_iso8601(axis.start()).c_str(), format_iso8601(axis.end()).c_str(),
              axis.describe_step().c_str());
  std::printf("load[3]=%.2f missing_fraction=%.2f\n", panel.at(0, 3, 0), panel.missing_fraction(0, 0));
  std::printf("missing variable throws %s\n", caught);

  try {
    const libseq::io::ReadResult netcdf = libseq::io::read_panel(argv[1]);
    const libseq::io::ReadResult hdf5 = libseq::io::read_panel(argv[2]);
    const Panel& p = netcdf.panel;
    std::printf("netcdf sites=%zu times=%zu variables=%zu step %s from %s\n", p.site_count(), p.time_count(),
                p.variable_count(), p.axis().describe_step().c_str(), format_iso8601(p.axis().start()).c_str());
    std::printf("netcdf and hdf5 differing cells=%ld\n", differing_cells(p, hdf5.panel));
  } catch (const libseq::Error& error) {
    std::fprintf(stderr, "reading the demo samples failed: %s\n", error.what());
    return 3;
  }
  return 0;
}
