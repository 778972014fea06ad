#include "libseq/data/panel.hpp"

#include <gtest/gtest.h>

#include "libseq/error.hpp"

namespace libseq::data {

namespace {
Panel small_panel() {
  std::vector<SiteInfo> sites{{"A1", "Upper", 1, 2, 3, {}}, {"B2", "Lower", 4, 5, 6, {}}};
  std::vector<VariableInfo> variables{{"q", "m3 s-1", "water_volume_transport_in_river_channel", "discharge"},
                                      {"pr", "mm day-1", "precipitation_amount", ""}};
  return Panel(TimeAxis(0, 86400, 4), sites, variables);
}
}  // namespace

TEST(Panel, StartsAllMissingAndStoresBySiteTimeVariable) {
  Panel panel = small_panel();
  EXPECT_DOUBLE_EQ(panel.missing_fraction(0, 0), 1.0);
  panel.at(1, 2, 1) = 7.5f;
  EXPECT_EQ(panel.site_values(1)[2 * 2 + 1], 7.5f);
  EXPECT_DOUBLE_EQ(panel.missing_fraction(1, 1), 0.75);
}

TEST(Panel, FindsVariablesByNameThenStandardName) {
  const Panel panel = small_panel();
  EXPECT_EQ(panel.find_variable("pr"), 1u);
  EXPECT_EQ(panel.find_variable("water_volume_transport_in_river_channel"), 0u);
  EXPECT_FALSE(panel.find_variable("tas").has_value());
}

TEST(Panel, MissingVariableMessageListsThePresentOnes) {
  const Panel panel = small_panel();
  try {
    panel.require_variable("tas", "demo.nc");
    FAIL() << "no exception";
  } catch (const DataError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("demo.nc"), std::string::npos);
    EXPECT_NE(message.find("'tas'"), std::string::npos);
    EXPECT_NE(message.find("q (water_volume_transport_in_river_channel), pr"), std::string::npos);
  }
}

TEST(Panel, RemovingSitesKeepsTheOthersValues) {
  Panel panel = small_panel();
  std::vector<float> series{1, 2, 3, 4};
  panel.set_series(1, 0, series);
  panel.remove_sites({true, false});
  ASSERT_EQ(panel.site_count(), 1u);
  EXPECT_EQ(panel.sites()[0].id, "B2");
  EXPECT_EQ(panel.series(0, 0), series);
  EXPECT_THROW(panel.set_series(0, 0, std::vector<float>{1, 2}), DataError);
}

}  // namespace libseq::data
