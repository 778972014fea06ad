#include "libseq/uncertainty/resample.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <numeric>
#include <set>
#include <vector>

#include "libseq/error.hpp"

namespace libseq::uncertainty {
namespace {

double mean_of(const std::vector<double>& x) {
  return std::accumulate(x.begin(), x.end(), 0.0) / static_cast<double>(x.size());
}

double standard_error(const std::vector<double>& x) {
  const double m = mean_of(x);
  double ss = 0.0;
  for (double v : x) ss += (v - m) * (v - m);
  return std::sqrt(ss / static_cast<double>(x.size() - 1) / static_cast<double>(x.size()));
}

TEST(Resample, SameSeedGivesSameDrawsAndOtherSeedsDiffer) {
  for (auto scheme : {ResampleScheme::moving_block, ResampleScheme::stationary, ResampleScheme::sites}) {
    std::vector<std::size_t> window_site(600);
    for (std::size_t i = 0; i < window_site.size(); ++i) window_site[i] = i / 50;  // 12 sites of 50 windows
    ResampleOptions options;
    options.scheme = scheme;
    options.seed = 42;
    const auto a = resample_windows(window_site, 12, options, 3);
    const auto b = resample_windows(window_site, 12, options, 3);
    const auto c = resample_windows(window_site, 12, options, 4);
    options.seed = 43;
    const auto d = resample_windows(window_site, 12, options, 3);
    EXPECT_EQ(a.indices, b.indices) << to_string(scheme);
    EXPECT_NE(a.indices, c.indices) << to_string(scheme) << ": members must differ";
    EXPECT_NE(a.indices, d.indices) << to_string(scheme) << ": seeds must differ";
  }
}

// Künsch (1989): ceil(n / b) blocks of b consecutive windows starting in [0, n - b], the last one cut to fit.
TEST(Resample, MovingBlocksAreConsecutiveRunsOfTheBlockLength) {
  const std::size_t n = 103, b = 10;
  const auto r = moving_block_bootstrap(n, b, 7);
  ASSERT_EQ(r.indices.size(), n);
  ASSERT_EQ(r.block_lengths.size(), 11u);  // ceil(103 / 10)
  for (std::size_t block = 0; block * b < n; ++block) {
    const std::size_t first = block * b;
    const std::size_t last = std::min(first + b, n);
    EXPECT_LE(r.indices[first], n - b);
    for (std::size_t i = first + 1; i < last; ++i) EXPECT_EQ(r.indices[i], r.indices[i - 1] + 1) << "position " << i;
  }
  EXPECT_EQ(std::accumulate(r.multiplicity.begin(), r.multiplicity.end(), std::size_t{0}), n);
  EXPECT_THROW(moving_block_bootstrap(n, 0, 1), ConfigError);
  EXPECT_THROW(moving_block_bootstrap(n, n + 1, 1), ConfigError);
}

// With b = 1 the moving-block bootstrap is Efron's i.i.d. bootstrap, whose expected share of distinct windows is
// 1 - (1 - 1/n)^n (elementary probability; the 0.632 of Efron & Tibshirani 1993, from memory). R = 400 draws;
// tolerance 4 standard errors of the mean share, estimated from the draws.
TEST(Resample, BlockLengthOneDrawsTheIidShareOfDistinctWindows) {
  const std::size_t n = 500, draws = 400;
  std::vector<double> share;
  for (std::size_t r = 0; r < draws; ++r) {
    const auto s = moving_block_bootstrap(n, 1, member_seed(11, r));
    share.push_back(static_cast<double>(std::count_if(s.multiplicity.begin(), s.multiplicity.end(),
                                                      [](std::uint32_t m) { return m > 0; })) /
                    static_cast<double>(n));
  }
  const double expected = 1.0 - std::pow(1.0 - 1.0 / static_cast<double>(n), static_cast<double>(n));
  EXPECT_NEAR(mean_of(share), expected, 4.0 * standard_error(share));
}

// Expected multiplicity under the moving-block bootstrap with n = k b: window i is covered by
// min(i + 1, b, n - i, n - b + 1) of the n - b + 1 equally likely blocks and k blocks are drawn, so the ends are
// under-weighted (the edge effect of the moving-block bootstrap; Künsch 1989, Lahiri 2003 Sect. 2.5, from memory).
// R = 4000 draws; each checked window within 4 standard errors (estimated from the draws).
TEST(Resample, MovingBlockMultiplicityShowsTheKnownEdgeEffect) {
  const std::size_t n = 60, b = 6, draws = 4000;
  std::vector<std::vector<double>> mult(n);
  for (std::size_t r = 0; r < draws; ++r) {
    const auto s = moving_block_bootstrap(n, b, member_seed(5, r));
    for (std::size_t i = 0; i < n; ++i) mult[i].push_back(s.multiplicity[i]);
  }
  const double k = static_cast<double>(n / b), starts = static_cast<double>(n - b + 1);
  for (std::size_t i : {std::size_t{0}, std::size_t{1}, std::size_t{3}, std::size_t{5}, std::size_t{30},
                        std::size_t{57}, std::size_t{59}}) {
    const double covering = static_cast<double>(std::min({i + 1, b, n - i, n - b + 1}));
    EXPECT_NEAR(mean_of(mult[i]), k * covering / starts, 4.0 * standard_error(mult[i])) << "window " << i;
  }
}

// Politis & Romano (1994): block lengths are geometric with mean b. Over 200 draws of n = 2000 windows and b = 8
// there are about 50 000 blocks; the standard error of their mean is sqrt((1 - p) / p^2 / N) with p = 1/b (about
// 0.033); tolerance 4 standard errors.
TEST(Resample, StationaryBootstrapMeanBlockLengthIsTheOption) {
  const std::size_t n = 2000;
  const double b = 8.0, p = 1.0 / b;
  std::vector<double> lengths;
  for (std::size_t r = 0; r < 200; ++r) {
    const auto s = stationary_bootstrap(n, b, member_seed(9, r));
    ASSERT_EQ(s.indices.size(), n);
    // Each block is a consecutive run modulo n (circular wrap).
    std::size_t position = 0;
    for (std::size_t len : s.block_lengths) {
      const std::size_t take = std::min(len, n - position);
      for (std::size_t j = 1; j < take; ++j) {
        ASSERT_EQ(s.indices[position + j], (s.indices[position + j - 1] + 1) % n);
      }
      position += take;
    }
    ASSERT_EQ(position, n);
    lengths.insert(lengths.end(), s.block_lengths.begin(), s.block_lengths.end());
  }
  const double se = std::sqrt((1.0 - p) / (p * p) / static_cast<double>(lengths.size()));
  EXPECT_NEAR(mean_of(lengths), b, 4.0 * se) << lengths.size() << " blocks";
}

// The stationary bootstrap's circular wrap makes every window equally likely (Politis & Romano 1994, Sect. 2: the
// resampled series is stationary given the data; from memory), unlike the moving-block edge effect above. Expected
// multiplicity 1 at the ends too; R = 4000 draws; tolerance 4 standard errors.
TEST(Resample, StationaryBootstrapWeighsEndWindowsLikeTheRest) {
  const std::size_t n = 60, draws = 4000;
  std::vector<double> first, last;
  bool wrapped = false;
  for (std::size_t r = 0; r < draws; ++r) {
    const auto s = stationary_bootstrap(n, 6.0, member_seed(13, r));
    first.push_back(s.multiplicity[0]);
    last.push_back(s.multiplicity[n - 1]);
    for (std::size_t i = 1; i < n; ++i) wrapped = wrapped || (s.indices[i - 1] == n - 1 && s.indices[i] == 0);
  }
  EXPECT_TRUE(wrapped) << "no block ever wrapped from the last window to the first";
  EXPECT_NEAR(mean_of(first), 1.0, 4.0 * standard_error(first));
  EXPECT_NEAR(mean_of(last), 1.0, 4.0 * standard_error(last));
  EXPECT_THROW(stationary_bootstrap(n, 0.5, 1), ConfigError);
}

TEST(Resample, SiteBootstrapTakesAllWindowsOfEachDrawnSite) {
  std::vector<std::size_t> window_site;
  for (std::size_t s = 0; s < 7; ++s) window_site.insert(window_site.end(), 5 + s, s);  // site s has 5 + s windows
  const auto r = site_bootstrap(window_site, 7, 123);
  std::vector<std::size_t> draws_of_site(7, 0);
  for (std::size_t i = 0; i < window_site.size(); ++i) {
    // Every window of a site has the site's multiplicity (the number of times the site was drawn).
    const std::size_t s = window_site[i];
    if (i > 0 && window_site[i - 1] == s) {
      EXPECT_EQ(r.multiplicity[i], r.multiplicity[i - 1]);
    } else {
      draws_of_site[s] = r.multiplicity[i];
    }
  }
  EXPECT_EQ(std::accumulate(draws_of_site.begin(), draws_of_site.end(), std::size_t{0}), 7u);  // 7 sites drawn
  std::size_t expected_windows = 0;
  for (std::size_t s = 0; s < 7; ++s) expected_windows += draws_of_site[s] * (5 + s);
  EXPECT_EQ(r.indices.size(), expected_windows);
  EXPECT_THROW(site_bootstrap(std::vector<std::size_t>{0, 9}, 3, 1), DataError);
}

TEST(Resample, BlockSchemesStayWithinEachSite) {
  std::vector<std::size_t> window_site;
  for (std::size_t i = 0; i < 90; ++i) window_site.push_back(i % 3);  // interleaved sites, each in time order
  ResampleOptions options;
  options.scheme = ResampleScheme::moving_block;
  options.block_length = 4;
  const auto r = resample_windows(window_site, 3, options, 0);
  ASSERT_EQ(r.indices.size(), 90u);
  // Sites are resampled one after another: 30 draws of site 0, then site 1, then site 2, blocks of 4 windows that
  // are consecutive in the site's own time order (3 positions apart in this interleaved list).
  for (std::size_t k = 0; k < 90; ++k) {
    EXPECT_EQ(window_site[r.indices[k]], k / 30) << "draw " << k;
    if (k % 30 % 4 != 0) {
      EXPECT_EQ(r.indices[k], r.indices[k - 1] + 3) << "draw " << k;
    }
  }
}

// Rule documented in resample.hpp: max(lookback, ceil(n^(1/3))), capped at n.
TEST(Resample, DefaultBlockLengthRule) {
  EXPECT_EQ(default_block_length(1000, 5), 10u);
  EXPECT_EQ(default_block_length(1001, 5), 11u);
  EXPECT_EQ(default_block_length(27, 1), 3u);
  EXPECT_EQ(default_block_length(20000, 30), 30u);
  EXPECT_EQ(default_block_length(3, 10), 3u);
}

TEST(Resample, OptionsAndSchemeNamesAreChecked) {
  ResampleOptions options;
  options.lookback_steps = 0;
  try {
    options.validate();
    FAIL() << "no exception";
  } catch (const ConfigError& e) {
    EXPECT_NE(std::string(e.what()).find("resample.lookback_steps = 0"), std::string::npos) << e.what();
  }
  for (auto scheme :
       {ResampleScheme::none, ResampleScheme::moving_block, ResampleScheme::stationary, ResampleScheme::sites}) {
    EXPECT_EQ(parse_resample_scheme(to_string(scheme)), scheme);
  }
  try {
    parse_resample_scheme("bagging", "ensemble.resample");
    FAIL() << "no exception";
  } catch (const ConfigError& e) {
    EXPECT_NE(std::string(e.what()).find("ensemble.resample = 'bagging'"), std::string::npos) << e.what();
  }
}

}  // namespace
}  // namespace libseq::uncertainty
