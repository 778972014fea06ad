#include "libseq/uncertainty/mixture.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "libseq/error.hpp"
#include "support/paths.hpp"

namespace libseq::uncertainty {
namespace {

struct ReferenceCase {
  std::string kind;
  std::string name;
  std::map<std::string, std::vector<double>> fields;
  const std::vector<double>& at(const std::string& key) const {
    auto it = fields.find(key);
    if (it == fields.end()) throw std::runtime_error("reference case " + name + " has no field " + key);
    return it->second;
  }
};

// Reads validation/mixture_quantiles/reference.txt (format in that folder's README).
std::vector<ReferenceCase> read_reference() {
  const auto path = libseq::test::source_dir() / "validation" / "mixture_quantiles" / "reference.txt";
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path.string());
  std::vector<ReferenceCase> cases;
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::istringstream words(line);
    std::string key;
    words >> key;
    if (key == "case") {
      cases.emplace_back();
      words >> cases.back().kind >> cases.back().name;
    } else if (key != "end") {
      std::vector<double> values;
      for (std::string w; words >> w;) values.push_back(std::stod(w));
      cases.back().fields[key] = values;
    }
  }
  return cases;
}

// validation/mixture_quantiles/README.md: every value within 1e-8 max(1, |reference|).
void expect_close(double actual, double expected, const std::string& what) {
  EXPECT_NEAR(actual, expected, 1e-8 * std::max(1.0, std::abs(expected))) << what;
}

std::size_t count_kind(const std::vector<ReferenceCase>& cases, const std::string& kind) {
  std::size_t n = 0;
  for (const auto& c : cases) n += c.kind == kind ? 1 : 0;
  return n;
}

// Reference: scipy.optimize.brentq on the mixture CDF (scipy.stats.norm.cdf), validation/mixture_quantiles.
TEST(MixtureReference, GaussianMixtureQuantilesMatchScipyBrentq) {
  const auto cases = read_reference();
  ASSERT_GE(count_kind(cases, "gaussian"), 5u);
  for (const auto& c : cases) {
    if (c.kind != "gaussian") continue;
    MixtureOptions options;
    options.levels = c.at("levels");
    const auto s = mix_gaussian(c.at("means"), c.at("variances"), options);
    for (std::size_t i = 0; i < options.levels.size(); ++i) {
      expect_close(s.quantiles[i], c.at("quantiles")[i], c.name + " level " + std::to_string(options.levels[i]));
    }
    expect_close(s.median, c.at("quantiles")[5], c.name + " median");  // levels[5] is 0.5
    expect_close(s.mean, c.at("mean")[0], c.name + " mean");
    expect_close(s.variance, c.at("variance")[0], c.name + " variance");
    EXPECT_EQ(s.members_used, c.at("means").size());
  }
}

// Reference: numpy.quantile(method="linear") = Hyndman & Fan (1996) type 7; numpy.mean, numpy.var(ddof=0).
TEST(MixtureReference, PointQuantilesMatchNumpyLinearMethod) {
  const auto cases = read_reference();
  ASSERT_GE(count_kind(cases, "points"), 5u);
  for (const auto& c : cases) {
    if (c.kind != "points") continue;
    MixtureOptions options;
    options.levels = c.at("levels");
    const auto s = mix_points(c.at("values"), options);
    for (std::size_t i = 0; i < options.levels.size(); ++i) {
      expect_close(s.quantiles[i], c.at("quantiles")[i], c.name + " level " + std::to_string(options.levels[i]));
    }
    expect_close(s.median, c.at("median")[0], c.name + " median");
    expect_close(s.mean, c.at("mean")[0], c.name + " mean");
    expect_close(s.variance, c.at("variance")[0], c.name + " variance");
  }
}

// Reference: scipy.optimize.brentq on the average of numpy.interp member CDFs; moments by scipy.integrate.quad.
TEST(MixtureReference, QuantileSetMixtureMatchesScipyOnInterpolatedCdfs) {
  const auto cases = read_reference();
  ASSERT_GE(count_kind(cases, "quantile_set"), 3u);
  for (const auto& c : cases) {
    if (c.kind != "quantile_set") continue;
    MixtureOptions options;
    options.levels = c.at("levels");
    const auto s = mix_quantile_sets(c.at("member_levels"), c.at("values"), options);
    for (std::size_t i = 0; i < options.levels.size(); ++i) {
      expect_close(s.quantiles[i], c.at("quantiles")[i], c.name + " level " + std::to_string(options.levels[i]));
    }
    expect_close(s.mean, c.at("mean")[0], c.name + " mean");
    expect_close(s.variance, c.at("variance")[0], c.name + " variance");
  }
}

// The batch entry point must give exactly the single-case results, whatever the thread count (OMP_NUM_THREADS=2).
TEST(Mixture, BatchOverCasesEqualsSingleCaseResults) {
  MemberForecasts f;
  f.kind = MemberKind::gaussian;
  f.case_count = 300;
  f.member_count = 4;
  for (std::size_t c = 0; c < f.case_count; ++c) {
    for (std::size_t m = 0; m < f.member_count; ++m) {
      f.means.push_back(std::sin(0.1 * static_cast<double>(c)) * 10.0 + static_cast<double>(m));
      f.variances.push_back(0.5 + 0.25 * static_cast<double>((c + m) % 5));
    }
  }
  MixtureOptions options;
  options.keep_member_values = true;
  const auto table = mix(f, options);
  ASSERT_EQ(table.quantiles.size(), f.case_count * options.levels.size());
  for (std::size_t c = 0; c < f.case_count; c += 37) {
    const std::span<const double> means(f.means), variances(f.variances);
    const auto s = mix_gaussian(means.subspan(c * 4, 4), variances.subspan(c * 4, 4), options);
    EXPECT_EQ(table.mean[c], s.mean);
    EXPECT_EQ(table.median[c], s.median);
    for (std::size_t i = 0; i < options.levels.size(); ++i) {
      EXPECT_EQ(table.quantiles[c * options.levels.size() + i], s.quantiles[i]);
    }
    EXPECT_EQ(table.member_values[c * 4 + 3], f.means[c * 4 + 3]);
  }
}

// Crossing quantiles are repaired by sorting (documented in mixture.hpp): a member given out of order must give the
// same mixture as the same member sorted.
TEST(Mixture, CrossingQuantilesAreSortedBeforeMixing) {
  const std::vector<double> levels = {0.1, 0.5, 0.9};
  const std::vector<double> crossed = {3.0, 1.0, 2.0, 0.0, 5.0, 4.0};
  const std::vector<double> sorted = {1.0, 2.0, 3.0, 0.0, 4.0, 5.0};
  MixtureOptions options;
  const auto a = mix_quantile_sets(levels, crossed, options);
  const auto b = mix_quantile_sets(levels, sorted, options);
  for (std::size_t i = 0; i < options.levels.size(); ++i) EXPECT_DOUBLE_EQ(a.quantiles[i], b.quantiles[i]);
  EXPECT_DOUBLE_EQ(a.mean, b.mean);
}

// A single member's own quantiles come back at its own levels under both tail rules; outside its levels the
// point-mass tail returns the outermost quantile (definition in mixture.hpp).
TEST(Mixture, SingleQuantileSetMemberReturnsItsOwnQuantiles) {
  const std::vector<double> levels = {0.1, 0.5, 0.9};
  const std::vector<double> values = {2.0, 5.0, 6.0};
  for (auto tail : {QuantileTail::linear, QuantileTail::point_mass}) {
    MixtureOptions options;
    options.quantile_tail = tail;
    options.levels = {0.1, 0.3, 0.5, 0.9, 0.02, 0.99};
    const auto s = mix_quantile_sets(levels, values, options);
    EXPECT_DOUBLE_EQ(s.quantiles[0], 2.0);
    EXPECT_DOUBLE_EQ(s.quantiles[1], 3.5);  // halfway between 0.1 and 0.5 in level
    EXPECT_DOUBLE_EQ(s.quantiles[2], 5.0);
    EXPECT_DOUBLE_EQ(s.quantiles[3], 6.0);
    if (tail == QuantileTail::point_mass) {
      EXPECT_DOUBLE_EQ(s.quantiles[4], 2.0);
      EXPECT_DOUBLE_EQ(s.quantiles[5], 6.0);
    } else {
      // Lower tail slope 3 per 0.4 of level: 2 - 0.08 * 7.5 = 1.4; upper: 6 + 0.09 * 2.5 = 6.225.
      EXPECT_NEAR(s.quantiles[4], 1.4, 1e-12);
      EXPECT_NEAR(s.quantiles[5], 6.225, 1e-12);
    }
  }
}

// Zero variance is a point mass: a mixture of two point masses at 0 and 10 has median 0 (inf{x: F(x) >= 0.5}) and
// its 0.75 quantile at 10; the uniform-weights CDF is a step of 1/2.
TEST(Mixture, ZeroVarianceMembersArePointMasses) {
  MixtureOptions options;
  options.levels = {0.25, 0.75};
  const auto s = mix_gaussian(std::vector<double>{0.0, 10.0}, std::vector<double>{0.0, 0.0}, options);
  EXPECT_DOUBLE_EQ(s.median, 0.0);
  EXPECT_DOUBLE_EQ(s.quantiles[0], 0.0);
  EXPECT_DOUBLE_EQ(s.quantiles[1], 10.0);
  EXPECT_DOUBLE_EQ(s.variance, 25.0);
}

TEST(Mixture, DivergedMembersAreLeftOutAndCounted) {
  MixtureOptions options;
  options.keep_member_values = true;
  const double nan = std::nan("");
  const auto s = mix_points(std::vector<double>{1.0, nan, 3.0}, options);
  EXPECT_EQ(s.members_used, 2u);
  EXPECT_DOUBLE_EQ(s.mean, 2.0);
  EXPECT_TRUE(std::isnan(s.member_values[1]));
  const auto none = mix_gaussian(std::vector<double>{nan}, std::vector<double>{1.0}, options);
  EXPECT_EQ(none.members_used, 0u);
  EXPECT_TRUE(std::isnan(none.median));
}

TEST(Mixture, OptionsReportEveryBrokenRule) {
  MixtureOptions options;
  options.levels = {0.5, 1.0, -0.1};
  options.relative_tolerance = 0.5;
  try {
    options.validate();
    FAIL() << "no exception";
  } catch (const ConfigError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("mixture.levels[1] = 1"), std::string::npos) << message;
    EXPECT_NE(message.find("mixture.levels[2] = -0.1"), std::string::npos) << message;
    EXPECT_NE(message.find("mixture.relative_tolerance = 0.5"), std::string::npos) << message;
  }
  EXPECT_EQ(parse_member_kind("quantiles"), MemberKind::quantiles);
  EXPECT_EQ(parse_quantile_tail(to_string(QuantileTail::point_mass)), QuantileTail::point_mass);
  EXPECT_THROW(parse_member_kind("ensemble"), ConfigError);
}

TEST(Mixture, RejectsMisshapenInputsNamingTheField) {
  MemberForecasts f;
  f.kind = MemberKind::quantiles;
  f.case_count = 2;
  f.member_count = 3;
  f.levels = {0.1, 0.9};
  f.values.assign(11, 0.0);
  try {
    f.validate();
    FAIL() << "no exception";
  } catch (const DataError& e) {
    EXPECT_NE(std::string(e.what()).find("'values' has 11 values, expected 12"), std::string::npos) << e.what();
  }
  EXPECT_THROW(mix_gaussian(std::vector<double>{0.0}, std::vector<double>{-1.0}, MixtureOptions{}), DataError);
  EXPECT_THROW(mix_quantile_sets(std::vector<double>{0.5, 0.4}, std::vector<double>{1, 2}, MixtureOptions{}),
               DataError);
}

}  // namespace
}  // namespace libseq::uncertainty
