#include "libseq/pipeline/config_reader.hpp"

#include <gtest/gtest.h>

#include "libseq/error.hpp"

namespace libseq::pipeline {

TEST(ConfigReader, ReadsTypedValuesWithDefaults) {
  ConfigReader reader(R"(
[training]
epochs = 40
learning_rate = 0.002
shuffle = false
[inputs]
dynamic = ["precipitation", "air_temperature"]
)",
                      "job.toml");
  EXPECT_EQ(reader.integer("training", "epochs", 10, 1, 1000, "", "epochs"), 40);
  EXPECT_DOUBLE_EQ(reader.number("training", "learning_rate", 1e-3, 0, 1, "", "rate"), 0.002);
  EXPECT_FALSE(reader.flag("training", "shuffle", true, "shuffle"));
  EXPECT_EQ(reader.integer("training", "batch_size", 64, 1, 4096, "", "batch"), 64);
  EXPECT_EQ(reader.texts("inputs", "dynamic", {}, "forcings"),
            (std::vector<std::string>{"precipitation", "air_temperature"}));
  reader.check_unknown_keys();
  EXPECT_TRUE(reader.problems().empty());
}

TEST(ConfigReader, ReportsEveryProblemAtOnceNamingTheKey) {
  ConfigReader reader(R"(
[training]
epochs = "many"
learnig_rate = 0.01
batch_size = 0
[network]
cell = "lstn"
[netwrok]
hidden = 3
)",
                      "job.toml");
  reader.section("training", "");
  reader.section("network", "");
  reader.integer("training", "epochs", 10, 1, 1000, "", "");
  reader.number("training", "learning_rate", 1e-3, 0, 1, "", "");
  reader.integer("training", "batch_size", 64, 1, 4096, "", "");
  reader.choice("network", "cell", "lstm", {"elman", "lstm", "gru"}, "");
  reader.check_unknown_keys();
  const auto& problems = reader.problems();
  ASSERT_EQ(problems.size(), 5u);
  EXPECT_EQ(problems[0], "training.epochs: expected an integer, got a string");
  EXPECT_EQ(problems[1], "training.batch_size: 0 is outside [1, 4096]");
  EXPECT_EQ(problems[2], "network.cell: 'lstn' is not one of elman | lstm | gru (did you mean 'lstm'?)");
  EXPECT_EQ(problems[3], "job.toml: unknown section [netwrok] (did you mean [network]?)");
  EXPECT_EQ(problems[4], "training.learnig_rate: unknown key (did you mean 'learning_rate'?)");
  try {
    reader.throw_if_problems();
    FAIL();
  } catch (const ConfigError& e) {
    EXPECT_NE(std::string(e.what()).find("5 problem(s)"), std::string::npos);
  }
}

TEST(ConfigReader, SyntaxErrorsNameTheLine) {
  ConfigReader reader("[training]\nepochs = = 3\n", "bad.toml");
  ASSERT_EQ(reader.problems().size(), 1u);
  EXPECT_EQ(reader.problems()[0].rfind("bad.toml:2:", 0), 0u) << reader.problems()[0];
}

TEST(ConfigReader, SuggestsKeysFromOtherSections) {
  ConfigReader reader("[network]\nepochs = 3\n", "job.toml");
  reader.integer("training", "epochs", 10, 1, 1000, "", "");
  reader.integer("network", "hidden", 64, 1, 4096, "", "");
  reader.check_unknown_keys();
  ASSERT_EQ(reader.problems().size(), 1u);
  EXPECT_EQ(reader.problems()[0], "network.epochs: unknown key (it belongs in [training])");
}

TEST(ConfigReader, EditDistanceOfKnownPairs) {
  EXPECT_EQ(edit_distance("kitten", "sitting"), 3u);  // the textbook Levenshtein example (common practice)
  EXPECT_EQ(edit_distance("", "abc"), 3u);
  EXPECT_FALSE(closest_match("zzzzzz", {"lookback", "horizon"}).has_value());
}

}  // namespace libseq::pipeline
