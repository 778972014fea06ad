#include "libseq/pipeline/job.hpp"

#include <gtest/gtest.h>

#include <fstream>

#include "libseq/error.hpp"
#include "support/paths.hpp"

namespace libseq::pipeline {

namespace {
std::string problems_of(std::string_view text) {
  try {
    parse_job(text, "/jobs/job.toml");
  } catch (const ConfigError& e) {
    return e.what();
  }
  return "";
}
}  // namespace

TEST(Job, ExamplesParseAndResolvePathsAgainstTheJobFile) {
  for (const auto& kind : example_kinds()) {
    const JobConfig job = parse_job(example_job(kind), "/jobs/sub/job.toml");
    ASSERT_EQ(job.files.size(), 1u) << kind;
    EXPECT_EQ(job.files[0].parent_path(), "/jobs/sub/../data-samples") << kind;
    EXPECT_TRUE(job.periods.test.has_value());
    // Interval bounds are added to the reported quantiles.
    for (double c : job.intervals) {
      EXPECT_NE(std::find_if(job.quantiles.begin(), job.quantiles.end(),
                             [&](double q) { return std::abs(q - (1 + c) / 2) < 1e-9; }),
                job.quantiles.end());
    }
  }
  EXPECT_THROW(example_job("weather"), ConfigError);
}

TEST(Job, ReportsEveryProblemAtOnce) {
  const std::string message = problems_of(R"(
[data]
file = ["a.nc"]
[target]
variable = "q"
transform = "logarithm"
[windows]
lookback = 0
[periods]
fit = "2001-01-01..2000-01-01"
[network]
hiden = 3
)");
  EXPECT_NE(message.find("data.file: unknown key (did you mean 'files'?)"), std::string::npos) << message;
  EXPECT_NE(message.find("target.transform: 'logarithm' is not one of"), std::string::npos) << message;
  EXPECT_NE(message.find("windows.lookback: 0 is outside [1, 100000]"), std::string::npos) << message;
  EXPECT_NE(message.find("periods.fit: period"), std::string::npos) << message;
  EXPECT_NE(message.find("network.hiden: unknown key (did you mean 'hidden'?)"), std::string::npos) << message;
}

TEST(Job, CrossChecksNameTheirKeys) {
  const std::string message = problems_of(R"(
[data]
files = ["a.nc"]
[target]
variable = "q"
[periods]
fit = "2000-01-01..2000-12-31"
[ensemble]
mc_dropout_passes = 5
)");
  EXPECT_NE(message.find("periods.test: required"), std::string::npos) << message;
  EXPECT_NE(message.find("periods.calibration: required"), std::string::npos) << message;
  EXPECT_NE(message.find("ensemble.mc_dropout_passes: needs some dropout"), std::string::npos) << message;
}

// network.gate_bias = "chrono" sets chrono initialisation for memories as long as the window: lookback 40 + horizon
// 2 = 42 steps; with an Elman cell it is refused naming the key.
TEST(Job, ChronoGateBiasCoversTheWindowAndNeedsAGatedCell) {
  const std::string base = R"(
[data]
files = ["a.nc"]
[target]
variable = "q"
[windows]
lookback = 40
horizon = 2
[periods]
fit = "2000-01-01..2000-12-31"
calibration = "2001-01-01..2001-06-30"
test = "2001-07-01..2001-12-31"
)";
  const JobConfig standard = parse_job(base, "/jobs/job.toml");
  EXPECT_EQ(standard.network.chrono_steps, 0u);
  const JobConfig chrono = parse_job(base + "[network]\ncell = \"gru\"\ngate_bias = \"chrono\"\n", "/jobs/job.toml");
  EXPECT_EQ(chrono.network.chrono_steps, 42u);
  const std::string message = problems_of(base + "[network]\ncell = \"elman\"\ngate_bias = \"chrono\"\n");
  EXPECT_NE(message.find("network.gate_bias"), std::string::npos) << message;
}

// docs/config.md is generated from the parser; this fails when someone changes a key without regenerating it
// (`runnel init --reference > docs/config.md`).
TEST(Job, ConfigReferenceInDocsIsCurrent) {
  std::ifstream in(test::source_dir() / "docs" / "config.md");
  ASSERT_TRUE(in) << "docs/config.md is missing";
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_EQ(text, config_reference()) << "regenerate docs/config.md with: runnel init --reference > docs/config.md";
}

}  // namespace libseq::pipeline
