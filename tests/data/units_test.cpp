#include "libseq/data/units.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "libseq/error.hpp"

namespace libseq::data {
namespace {

// Conversion factors: 0 degC = 273.15 K (SI brochure, 9th ed., section 2.3.1); 1 ft = 0.3048 m exactly (1959
// international yard and pound agreement), so 1 ft3 s-1 = 28.316846592 L s-1; 1 kg m-2 of water = 1 mm (density
// 1000 kg m-3, common practice, no source). Tolerance: float rounding, 1e-6 relative.
TEST(Units, ConvertsWithinEachFamily) {
  std::vector<float> t = {273.15f, 300.0f, NAN};
  convert_units(t, "K", "degree_Celsius", "t");
  EXPECT_NEAR(t[0], 0.0f, 1e-5);
  EXPECT_NEAR(t[1], 26.85f, 1e-5);
  EXPECT_TRUE(std::isnan(t[2]));
  convert_units(t, "degC", "kelvin", "t");
  EXPECT_NEAR(t[1], 300.0f, 1e-4);

  std::vector<float> p = {86.4f};
  convert_units(p, "mm d-1", "kg m-2 s-1", "p");
  EXPECT_NEAR(p[0], 1.0e-3f, 1e-9);
  convert_units(p, "kg m-2 s-1", "mm/day", "p");
  EXPECT_NEAR(p[0], 86.4f, 86.4 * 1e-6);

  std::vector<float> q = {1.0f};
  convert_units(q, "ft3/s", "L s-1", "q");
  EXPECT_NEAR(q[0], 28.316846592f, 28.3 * 1e-6);
  convert_units(q, "l/s", "m^3 s-1", "q");
  EXPECT_NEAR(q[0], 0.028316846592f, 0.0283 * 1e-6);

  std::vector<float> w = {1.5f};
  convert_units(w, "MW", "kW", "w");
  EXPECT_FLOAT_EQ(w[0], 1500.0f);
}

TEST(Units, SameUnitsAfterNormalisationAreANoOp) {
  std::vector<float> v = {1.25f};
  convert_units(v, "furlong  fortnight-1", " furlong fortnight-1 ", "v");
  EXPECT_EQ(v[0], 1.25f);
  EXPECT_TRUE(can_convert("m3/s", "m^3 s-1"));
  EXPECT_EQ(normalise_units("m^3/s"), "m3 s-1");
}

TEST(Units, RefusesOtherPairsNamingWhatAndBothUnits) {
  EXPECT_FALSE(can_convert("K", "kW"));
  EXPECT_FALSE(can_convert("C", "K"));   // "C" is the coulomb in UDUNITS, not taken for Celsius
  EXPECT_FALSE(can_convert("mW", "kW"));  // milliwatt is not in the set
  std::vector<float> v = {1.0f};
  try {
    convert_units(v, "m3 s-1", "degC", "file d.nc, variable 'flow'");
    FAIL();
  } catch (const DataError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("d.nc"), std::string::npos);
    EXPECT_NE(message.find("'flow'"), std::string::npos);
    EXPECT_NE(message.find("'m3 s-1'"), std::string::npos);
    EXPECT_NE(message.find("'degC'"), std::string::npos);
    EXPECT_NE(message.find("ft3 s-1"), std::string::npos);
  }
  EXPECT_EQ(v[0], 1.0f);
}

}  // namespace
}  // namespace libseq::data
