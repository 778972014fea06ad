// Ridge ARX checks. Outside reference: numpy.linalg.solve of the ridge normal equations on standardised features
// (Debian python3-numpy), computed by validation/exp_smoothing/make_reference.py on a seeded synthetic problem and
// stored in validation/exp_smoothing/reference.txt (keys ridge.*). Pass rule: every coefficient within 1e-8.

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <vector>

#include "baselines/reference_file.hpp"
#include "libseq/baselines/intervals.hpp"
#include "libseq/baselines/ridge_arx.hpp"
#include "libseq/error.hpp"

namespace lb = libseq::baselines;

namespace {
struct Problem {
  std::vector<double> y, x0, x1, options;
};
Problem problem() {
  const auto ref = libseq::test::read_reference("validation/exp_smoothing/reference.txt");
  return {ref.at("ridge.target"), ref.at("ridge.input0"), ref.at("ridge.input1"), ref.at("ridge.options")};
}
}  // namespace

TEST(RidgeArx, CoefficientsMatchNumpyNormalEquations) {
  const auto ref = libseq::test::read_reference("validation/exp_smoothing/reference.txt");
  const auto p = problem();
  lb::RidgeArxOptions o;
  o.target_lags = static_cast<std::size_t>(p.options[0]);
  o.input_lags = static_cast<std::size_t>(p.options[1]);
  o.max_lead = static_cast<std::size_t>(p.options[2]);
  o.penalties = {p.options[3]};
  o.use_target_step_inputs = true;
  lb::RidgeArx model(o);
  lb::SeriesSet s{p.y, {p.x0, p.x1}, {}};
  model.fit(s, {static_cast<std::size_t>(p.options[4]), static_cast<std::size_t>(p.options[5])}, {});
  for (std::size_t lead = 1; lead <= o.max_lead; ++lead) {
    SCOPED_TRACE(lead);
    const auto& expected = ref.at("ridge.lead" + std::to_string(lead) + ".coefficients");
    const auto& m = model.lead_model(lead);
    ASSERT_EQ(m.slopes.size() + 1, expected.size());
    EXPECT_NEAR(m.intercept, expected[0], 1e-8);
    for (std::size_t k = 0; k < m.slopes.size(); ++k) EXPECT_NEAR(m.slopes[k], expected[k + 1], 1e-8);
  }
}

TEST(RidgeArx, PenaltyGridKeepsTheLeastValidationError) {
  // Consistency, no outside source: the chosen λ's validation MSE is the least of the single-λ fits.
  const auto p = problem();
  lb::SeriesSet s{p.y, {p.x0, p.x1}, {}};
  lb::RidgeArxOptions o;
  o.max_lead = 2;
  o.penalties = {0.0, 1.0, 30.0, 1000.0};
  lb::RidgeArx grid(o);
  grid.fit(s, {0, 40}, {40, 60});
  for (std::size_t lead = 1; lead <= 2; ++lead) {
    const auto& chosen = grid.lead_model(lead);
    for (double penalty : o.penalties) {
      auto single = o;
      single.penalties = {penalty, penalty};  // two equal values force the validation path
      lb::RidgeArx one(single);
      one.fit(s, {0, 40}, {40, 60});
      EXPECT_LE(chosen.validation_mse, one.lead_model(lead).validation_mse + 1e-12);
    }
  }
}

TEST(RidgeArx, ForecastUsesTheLeadModelOnTheIssueFeatures) {
  const auto p = problem();
  lb::SeriesSet s{p.y, {p.x0, p.x1}, {}};
  lb::RidgeArxOptions o;
  o.target_lags = 2;
  o.input_lags = 1;
  o.max_lead = 2;
  o.penalties = {0.5};
  lb::RidgeArx model(o);
  model.fit(s, {0, 45}, {});
  const std::vector<std::size_t> issues{50};
  const auto f = model.forecast(s, issues, 2);
  for (std::size_t lead = 1; lead <= 2; ++lead) {
    const auto& m = model.lead_model(lead);
    const double by_hand = m.intercept + m.slopes[0] * p.y[50] + m.slopes[1] * p.y[49] + m.slopes[2] * p.x0[50] +
                           m.slopes[3] * p.x1[50];
    EXPECT_NEAR(f.value(0, lead - 1), by_hand, 1e-12);
  }
  EXPECT_THROW(model.forecast(s, issues, 3), libseq::ConfigError);
  const std::vector<std::size_t> too_early{0};
  EXPECT_THROW(model.forecast(s, too_early, 1), libseq::DataError);
}

TEST(RidgeArx, GridWithoutValidationRangeIsAConfigError) {
  const auto p = problem();
  lb::SeriesSet s{p.y, {}, {}};
  lb::RidgeArx model(lb::RidgeArxOptions{});
  EXPECT_THROW(model.fit(s, {0, 50}, {}), libseq::ConfigError);
  lb::RidgeArxOptions bad;
  bad.target_lags = 0;
  bad.penalties = {-1.0};
  try {
    bad.validate();
    FAIL() << "validate accepted broken options";
  } catch (const libseq::ConfigError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("target_lags"), std::string::npos);
    EXPECT_NE(m.find("penalties"), std::string::npos);
  }
}
