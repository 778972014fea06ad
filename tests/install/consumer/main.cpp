// A program outside the runnel tree that uses the installed library exactly as a downstream project would:
// headers from <prefix>/include, the static library and its dependencies through find_package(libseq CONFIG).
// It prints facts that the install test (run_consumer.cmake) compares with what the library must return.

#include <cstdio>
#include <vector>

#include "libseq/data/panel.hpp"
#include "libseq/error.hpp"
#include "libseq/version.hpp"

int main() {
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
  return 0;
}
