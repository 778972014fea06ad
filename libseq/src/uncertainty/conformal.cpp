#include "libseq/uncertainty/conformal.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "libseq/error.hpp"

namespace libseq::uncertainty {

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();
constexpr double nan_value = std::numeric_limits<double>::quiet_NaN();

std::string number(double x) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.17g", x);
  return buffer;
}

bool open_unit(double x) { return x > 0.0 && x < 1.0; }

void check_miscoverage(double miscoverage, const char* key) {
  if (!open_unit(miscoverage)) {
    throw ConfigError(std::string(key) + " = " + number(miscoverage) + ": expected a level in (0, 1)");
  }
}

// ceil of a product with a relative guard: (n + 1)(1 - α) is often an integer in exact arithmetic (n = 99,
// α = 0.1) and must not be rounded up past it.
std::size_t guarded_ceil(double x) {
  if (x <= 0.0) return 0;
  return static_cast<std::size_t>(std::ceil(x - 1e-9 * std::max(1.0, x)));
}

// k-th smallest (1-based) of finite values, +inf when k > count, -inf when k == 0.
double kth_smallest(std::vector<double> values, std::size_t k) {
  if (k == 0) return -infinity;
  if (k > values.size()) return infinity;
  auto nth = values.begin() + static_cast<std::ptrdiff_t>(k - 1);
  std::nth_element(values.begin(), nth, values.end());
  return *nth;
}

}  // namespace

std::string to_string(ConformalScore score) {
  switch (score) {
    case ConformalScore::absolute_residual:
      return "absolute_residual";
    case ConformalScore::quantile_pair:
      return "quantile_pair";
  }
  return "unknown";
}

ConformalScore parse_conformal_score(std::string_view text, std::string_view key) {
  for (auto score : {ConformalScore::absolute_residual, ConformalScore::quantile_pair}) {
    if (text == to_string(score)) return score;
  }
  throw ConfigError(std::string(key) + " = '" + std::string(text) +
                    "': expected one of absolute_residual, quantile_pair");
}

std::size_t conformal_rank(std::size_t n, double miscoverage) {
  check_miscoverage(miscoverage, "conformal miscoverage");
  // Lei et al. (2018), Sect. 2.2: the ceil((n + 1)(1 - α))-th smallest residual.
  return guarded_ceil(static_cast<double>(n + 1) * (1.0 - miscoverage));
}

double conformal_quantile(std::span<const double> scores, double miscoverage) {
  std::vector<double> finite;
  finite.reserve(scores.size());
  for (double s : scores) {
    if (!std::isnan(s)) finite.push_back(s);
  }
  const std::size_t rank = conformal_rank(finite.size(), miscoverage);
  return kth_smallest(std::move(finite), rank);
}

double absolute_residual_score(double point, double observed) { return std::abs(observed - point); }

double quantile_pair_score(double lower, double upper, double observed) {
  return std::max(lower - observed, observed - upper);
}

void ConformalOptions::validate() const {
  std::string problems;
  if (!open_unit(miscoverage)) {
    problems += "\n  conformal.miscoverage = " + number(miscoverage) + ": expected a level in (0, 1)";
  }
  if (score != ConformalScore::absolute_residual && score != ConformalScore::quantile_pair) {
    problems += "\n  conformal.score = " + std::to_string(static_cast<int>(score)) +
                ": expected absolute_residual or quantile_pair";
  }
  if (!problems.empty()) throw ConfigError("invalid conformal options:" + problems);
}

Calibrator Calibrator::fit(const CalibrationSet& data, const ConformalOptions& options) {
  options.validate();
  const std::size_t n = data.observed.size();
  const bool pair = options.score == ConformalScore::quantile_pair;
  auto require = [&](std::size_t size, const char* name, bool needed) {
    if (size == n) return true;
    if (size == 0 && !needed) return false;
    throw DataError(std::string("conformal calibration (") + to_string(options.score) + "): '" + name + "' has " +
                    std::to_string(size) + " values, expected " + std::to_string(n) + " (one per observation)" +
                    (needed ? "" : " or none"));
  };
  if (!pair) require(data.point.size(), "point", true);
  const bool has_interval = require(data.lower.size(), "lower", pair) & require(data.upper.size(), "upper", pair);
  if (data.lower.size() != data.upper.size()) {
    throw DataError("conformal calibration: 'lower' has " + std::to_string(data.lower.size()) +
                    " values but 'upper' has " + std::to_string(data.upper.size()) + "; expected the same count");
  }
  const bool has_leads = require(data.lead.size(), "lead", false);

  std::size_t lead_count = 1;
  if (options.per_lead && has_leads) {
    for (std::size_t lead : data.lead) lead_count = std::max(lead_count, lead + 1);
  }
  std::vector<std::vector<double>> scores(lead_count);
  std::vector<std::size_t> raw_covered(lead_count, 0);
  for (std::size_t i = 0; i < n; ++i) {
    const double y = data.observed[i];
    double score = nan_value;
    if (pair) {
      score = quantile_pair_score(data.lower[i], data.upper[i], y);
    } else {
      score = absolute_residual_score(data.point[i], y);
    }
    if (!std::isfinite(score)) continue;  // missing observation or forecast
    const std::size_t slot = (options.per_lead && has_leads) ? data.lead[i] : 0;
    scores[slot].push_back(score);
    if (has_interval && data.lower[i] <= y && y <= data.upper[i]) ++raw_covered[slot];
  }

  CalibratorState state;
  state.options = options;
  for (std::size_t slot = 0; slot < lead_count; ++slot) {
    LeadCalibration entry;
    entry.lead = slot;
    entry.count = scores[slot].size();
    entry.rank = conformal_rank(entry.count, options.miscoverage);
    entry.score_quantile = kth_smallest(scores[slot], entry.rank);
    if (entry.count > 0) {
      const auto count = static_cast<double>(entry.count);
      if (has_interval) entry.coverage_before = static_cast<double>(raw_covered[slot]) / count;
      // y lies in the calibrated interval exactly when its score is <= Q (both score forms, Romano et al. 2019).
      const auto inside =
          std::count_if(scores[slot].begin(), scores[slot].end(), [&](double s) { return s <= entry.score_quantile; });
      entry.coverage_after = static_cast<double>(inside) / count;
    }
    state.leads.push_back(entry);
  }
  return Calibrator(std::move(state));
}

Calibrator Calibrator::from_state(CalibratorState state) {
  state.options.validate();
  if (state.leads.empty() || (!state.options.per_lead && state.leads.size() != 1)) {
    throw DataError("calibrator state: " + std::to_string(state.leads.size()) + " lead entries, expected " +
                    (state.options.per_lead ? "at least 1" : "exactly 1 (pooled over leads)"));
  }
  for (std::size_t i = 0; i < state.leads.size(); ++i) {
    const auto& e = state.leads[i];
    const std::string where = "calibrator state: lead entry " + std::to_string(i);
    if (e.lead != i) throw DataError(where + " has lead " + std::to_string(e.lead) + ", expected " + std::to_string(i));
    if (e.rank != conformal_rank(e.count, state.options.miscoverage)) {
      throw DataError(where + " has rank " + std::to_string(e.rank) + ", expected ceil((n + 1)(1 - alpha)) = " +
                      std::to_string(conformal_rank(e.count, state.options.miscoverage)) +
                      " for n = " + std::to_string(e.count));
    }
    if (std::isnan(e.score_quantile) || (e.rank > e.count) != (e.score_quantile == infinity)) {
      throw DataError(where + " has score quantile " + number(e.score_quantile) +
                      ", expected +inf exactly when the rank exceeds the count");
    }
  }
  return Calibrator(std::move(state));
}

const LeadCalibration& Calibrator::entry(std::size_t lead) const {
  if (!state_.options.per_lead) return state_.leads.front();
  if (lead >= state_.leads.size()) {
    throw DataError("calibrator: lead " + std::to_string(lead) + " was not calibrated; leads 0.." +
                    std::to_string(state_.leads.size() - 1) + " were");
  }
  return state_.leads[lead];
}

Interval Calibrator::symmetric_interval(double point, std::size_t lead) const {
  if (state_.options.score != ConformalScore::absolute_residual) {
    throw DataError("calibrator: symmetric_interval needs an absolute_residual calibrator, this one is " +
                    to_string(state_.options.score));
  }
  const double q = entry(lead).score_quantile;
  if (q == infinity) return Interval{};
  return Interval{point - q, point + q};
}

Interval Calibrator::quantile_interval(double lower, double upper, std::size_t lead) const {
  if (state_.options.score != ConformalScore::quantile_pair) {
    throw DataError("calibrator: quantile_interval needs a quantile_pair calibrator, this one is " +
                    to_string(state_.options.score));
  }
  const double q = entry(lead).score_quantile;
  if (q == infinity) return Interval{};
  // Romano et al. (2019), Eq. 7: Q may be negative, which narrows an over-wide pair.
  return Interval{lower - q, upper + q};
}

std::string Calibrator::brief_report() const {
  std::string out = "split conformal (" + to_string(state_.options.score) + ", alpha " +
                    number(state_.options.miscoverage) + (state_.options.per_lead ? ", per lead" : ", pooled") + ")\n";
  for (const auto& e : state_.leads) {
    char line[256];
    std::snprintf(line, sizeof line, "  lead %zu: n %zu, rank %zu, Q %.6g, coverage before %.4f, after %.4f\n", e.lead,
                  e.count, e.rank, e.score_quantile, e.coverage_before, e.coverage_after);
    out += line;
  }
  return out;
}

void AdaptiveOptions::validate() const {
  std::string problems;
  if (!open_unit(miscoverage)) {
    problems += "\n  adaptive.miscoverage = " + number(miscoverage) + ": expected a level in (0, 1)";
  }
  if (!(step_size > 0.0 && step_size <= 1.0)) {
    problems += "\n  adaptive.step_size = " + number(step_size) + ": expected 0 < gamma <= 1";
  }
  if (!std::isnan(initial_miscoverage) && !open_unit(initial_miscoverage)) {
    problems += "\n  adaptive.initial_miscoverage = " + number(initial_miscoverage) +
                ": expected a level in (0, 1) or NaN for the target level";
  }
  if (score != ConformalScore::absolute_residual && score != ConformalScore::quantile_pair) {
    problems += "\n  adaptive.score = " + std::to_string(static_cast<int>(score)) +
                ": expected absolute_residual or quantile_pair";
  }
  if (!problems.empty()) throw ConfigError("invalid adaptive conformal options:" + problems);
}

AdaptiveConformal::AdaptiveConformal(const AdaptiveOptions& options, std::span<const double> calibration_scores)
    : options_(options) {
  options_.validate();
  alpha_ = std::isnan(options_.initial_miscoverage) ? options_.miscoverage : options_.initial_miscoverage;
  for (double s : calibration_scores) {
    if (std::isnan(s)) continue;
    scores_.push_back(s);
    if (options_.score_window > 0 && scores_.size() > options_.score_window) scores_.pop_front();
  }
}

double AdaptiveConformal::score_quantile() const {
  // Gibbs & Candès (2021), Sect. 2: Q of level 1 - α_t; α_t <= 0 gives the whole line, α_t >= 1 the empty set.
  if (alpha_ <= 0.0) return infinity;
  if (alpha_ >= 1.0) return -infinity;
  const std::size_t k =
      std::max<std::size_t>(1, guarded_ceil(static_cast<double>(scores_.size() + 1) * (1.0 - alpha_)));
  return kth_smallest(std::vector<double>(scores_.begin(), scores_.end()), k);
}

Interval AdaptiveConformal::symmetric_interval(double point) const {
  if (options_.score != ConformalScore::absolute_residual) {
    throw DataError("adaptive conformal: symmetric_interval needs score absolute_residual, this stream uses " +
                    to_string(options_.score));
  }
  const double q = score_quantile();
  if (q == infinity) return Interval{};
  if (q == -infinity) return Interval{infinity, -infinity};
  return Interval{point - q, point + q};
}

Interval AdaptiveConformal::quantile_interval(double lower, double upper) const {
  if (options_.score != ConformalScore::quantile_pair) {
    throw DataError("adaptive conformal: quantile_interval needs score quantile_pair, this stream uses " +
                    to_string(options_.score));
  }
  const double q = score_quantile();
  if (q == infinity) return Interval{};
  if (q == -infinity) return Interval{infinity, -infinity};
  return Interval{lower - q, upper + q};
}

void AdaptiveConformal::update(bool covered, double score) {
  const double err = covered ? 0.0 : 1.0;
  alpha_ += options_.step_size * (options_.miscoverage - err);  // Gibbs & Candès (2021), Eq. 2
  ++steps_;
  if (!covered) ++misses_;
  if (!std::isnan(score)) {
    scores_.push_back(score);
    if (options_.score_window > 0 && scores_.size() > options_.score_window) scores_.pop_front();
  }
}

Interval AdaptiveConformal::step_symmetric(double point, double observed) {
  const Interval issued = symmetric_interval(point);
  update(issued.contains(observed), absolute_residual_score(point, observed));
  return issued;
}

Interval AdaptiveConformal::step_quantile(double lower, double upper, double observed) {
  const Interval issued = quantile_interval(lower, upper);
  update(issued.contains(observed), quantile_pair_score(lower, upper, observed));
  return issued;
}

double AdaptiveConformal::observed_miscoverage() const {
  return steps_ == 0 ? nan_value : static_cast<double>(misses_) / static_cast<double>(steps_);
}

}  // namespace libseq::uncertainty
