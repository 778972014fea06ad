#pragma once
/// @file conformal.hpp
/// Conformal calibration of forecast intervals on a calibration period:
///  - split conformal with absolute-residual scores |y - ŷ| and symmetric intervals ŷ ± Q (Lei et al. 2018);
///  - conformalized quantile regression, scores max(q_lo - y, y - q_hi), intervals [q_lo - Q, q_hi + Q]
///    (Romano, Patterson & Candès 2019);
///  - one calibrator per lead time, or one pooled over leads;
///  - adaptive conformal inference for forecasts issued one after another (Gibbs & Candès 2021), which moves the
///    working miscoverage level α_t after every outcome: α_{t+1} = α_t + γ (α - err_t).
/// Q is the k-th smallest of n calibration scores with k = ceil((n + 1)(1 - α)). When k > n no finite Q has the
/// guarantee: Q is +infinity and the interval is (-infinity, +infinity); it is reported as such, never clipped.
/// The guarantee assumes calibration and test cases are exchangeable; docs/methods-uncertainty.md says what serial
/// dependence and drift do to it.

#include <cstddef>
#include <deque>
#include <limits>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace libseq::uncertainty {

/// Nonconformity score of a calibration case.
enum class ConformalScore {
  absolute_residual,  ///< |y - ŷ| around a point forecast; symmetric intervals.
  quantile_pair,      ///< CQR: max(q_lo - y, y - q_hi) around a lower/upper quantile pair.
};

/// "absolute_residual", "quantile_pair".
std::string to_string(ConformalScore score);
/// Inverse of to_string. @throws libseq::ConfigError naming `key`, the text and the accepted names.
ConformalScore parse_conformal_score(std::string_view text, std::string_view key = "conformal.score");

/// A closed interval [lower, upper]. Infinite bounds are allowed; lower > upper is the empty interval (lower = +inf,
/// upper = -inf when produced by an adaptive calibrator whose working level reached 1).
struct Interval {
  double lower = -std::numeric_limits<double>::infinity();
  double upper = std::numeric_limits<double>::infinity();
  /// Whether lower <= y <= upper (false for NaN).
  bool contains(double y) const { return lower <= y && y <= upper; }
  /// Whether the interval is the whole real line.
  bool unbounded() const {
    return lower == -std::numeric_limits<double>::infinity() && upper == std::numeric_limits<double>::infinity();
  }
};

/// ceil((n + 1)(1 - miscoverage)): the rank of the calibration score used as Q (Lei et al. 2018, Sect. 2.2).
/// May exceed n (then Q = +inf). Computed with a small guard so that an exact product (e.g. n = 99, α = 0.1 gives
/// 90) is not pushed up by rounding. @throws libseq::ConfigError when miscoverage is not in (0, 1).
std::size_t conformal_rank(std::size_t n, double miscoverage);

/// The conformal score quantile: the conformal_rank(n, miscoverage)-th smallest of `scores` (NaN scores left out),
/// or +infinity when that rank exceeds n. @throws libseq::ConfigError when miscoverage is not in (0, 1).
double conformal_quantile(std::span<const double> scores, double miscoverage);

/// |observed - point|.
double absolute_residual_score(double point, double observed);
/// max(lower - observed, observed - upper) (Romano et al. 2019, Eq. 6): negative inside the interval.
double quantile_pair_score(double lower, double upper, double observed);

/// Options of split-conformal calibration.
struct ConformalOptions {
  /// Score and interval shape.
  ConformalScore score = ConformalScore::absolute_residual;
  /// Target miscoverage α in (0, 1): intervals aim at coverage 1 - α.
  double miscoverage = 0.1;
  /// One calibrator per lead time (true) or one pooled over all leads. Per lead is right when errors grow with
  /// lead, which is the usual case; it needs enough calibration cases per lead (k <= n needs n >= 1/α - 1).
  bool per_lead = true;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// Calibration cases. All spans index the same cases; NaN in `observed` or in a forecast leaves a case out.
/// Non-owning: the spans must outlive the call to Calibrator::fit only.
struct CalibrationSet {
  std::span<const double> observed = {};  ///< Observations y.
  std::span<const double> point = {};     ///< absolute_residual: point forecasts ŷ.
  /// quantile_pair: the lower and upper quantile forecasts (required). absolute_residual: optionally the model's
  /// own raw interval, used only to report coverage before calibration (empty spans: reported as NaN).
  std::span<const double> lower = {};
  std::span<const double> upper = {};
  /// Lead index of each case (0-based). Empty: every case is lead 0.
  std::span<const std::size_t> lead = {};
};

/// What a calibrator learned for one lead (or for all leads when pooled).
struct LeadCalibration {
  std::size_t lead = 0;         ///< Lead index (0 when pooled).
  std::size_t count = 0;        ///< n: calibration cases used.
  std::size_t rank = 0;         ///< k = ceil((n + 1)(1 - α)).
  double score_quantile = 0.0;  ///< Q; +infinity when k > n.
  /// Coverage on the calibration cases of the raw interval ([q_lo, q_hi], or the optional raw interval for
  /// absolute residuals); NaN when there is none or n = 0.
  double coverage_before = std::numeric_limits<double>::quiet_NaN();
  /// Coverage on the calibration cases of the calibrated interval (in-sample: at least k/n by construction, so an
  /// optimistic figure; held-out coverage is the honest one). NaN when n = 0.
  double coverage_after = std::numeric_limits<double>::quiet_NaN();
};

/// Everything a calibrator needs to be rebuilt, as plain numbers for a model bundle.
struct CalibratorState {
  ConformalOptions options;
  /// Per lead (index = lead) when options.per_lead, otherwise exactly one entry.
  std::vector<LeadCalibration> leads;
};

/// A fitted split-conformal calibrator. Immutable after construction; thread-safe to use from many threads.
class Calibrator {
 public:
  /// Fits on the calibration cases. Leads 0..max(lead) each get an entry; a lead with no usable case gets n = 0 and
  /// Q = +inf (unbounded intervals) rather than an error, so that a short record does not stop a run.
  /// @throws libseq::ConfigError from options.validate(); libseq::DataError when span lengths differ or the score
  ///         needs spans that are empty.
  static Calibrator fit(const CalibrationSet& data, const ConformalOptions& options);

  /// Rebuilds a calibrator from saved numbers. @throws libseq::ConfigError on invalid options;
  /// libseq::DataError when the lead entries do not match options.per_lead or hold impossible numbers.
  static Calibrator from_state(CalibratorState state);

  /// The saved form.
  const CalibratorState& state() const { return state_; }

  /// ŷ ± Q of `lead`. @throws libseq::DataError when the calibrator is not absolute_residual or the lead was not
  /// calibrated (per-lead calibrators only).
  Interval symmetric_interval(double point, std::size_t lead) const;

  /// [q_lo - Q, q_hi + Q] of `lead`. @throws libseq::DataError when the calibrator is not quantile_pair or the lead
  /// was not calibrated.
  Interval quantile_interval(double lower, double upper, std::size_t lead) const;

  /// One line per lead: n, k, Q, coverage before and after.
  std::string brief_report() const;

 private:
  explicit Calibrator(CalibratorState state) : state_(std::move(state)) {}
  const LeadCalibration& entry(std::size_t lead) const;
  CalibratorState state_;
};

/// Options of adaptive conformal inference.
struct AdaptiveOptions {
  /// Score and interval shape.
  ConformalScore score = ConformalScore::absolute_residual;
  /// Target long-run miscoverage α in (0, 1).
  double miscoverage = 0.1;
  /// Step size γ > 0 (at most 1). Larger adapts faster to a shift but makes α_t, and the interval width, jumpier;
  /// Gibbs & Candès (2021) use 0.005 in their experiments (from memory).
  double step_size = 0.005;
  /// Starting level α_1 in (0, 1); NaN (default) starts at `miscoverage`.
  double initial_miscoverage = std::numeric_limits<double>::quiet_NaN();
  /// Scores kept for the quantile: 0 keeps every score seen (calibration + online); w > 0 keeps the w most recent,
  /// which tracks drift at the price of a noisier Q.
  std::size_t score_window = 0;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// Adaptive conformal inference (Gibbs & Candès 2021, Sect. 2) for one forecast stream (one site and lead).
/// The interval at step t uses Q_t, the conformal quantile at level α_t of the stored scores: Q_t = +inf when
/// α_t <= 0 or the rank exceeds the score count, and Q_t = -inf (the empty interval) when α_t >= 1. These two
/// conventions keep α_t within [-γ, 1 + γ], which gives the long-run bound of their Proposition 4.1.
/// For lead h > 1 the outcome of an interval is known h steps after issue; call update() when it arrives.
/// Not thread-safe; one object per stream.
class AdaptiveConformal {
 public:
  /// Starts from calibration scores (may be empty: intervals are then unbounded until scores arrive).
  /// @throws libseq::ConfigError from options.validate().
  AdaptiveConformal(const AdaptiveOptions& options, std::span<const double> calibration_scores);

  /// The working miscoverage level α_t.
  double current_miscoverage() const { return alpha_; }
  /// Q_t (see the class comment).
  double score_quantile() const;
  /// ŷ ± Q_t. @throws libseq::DataError when the score is not absolute_residual.
  Interval symmetric_interval(double point) const;
  /// [q_lo - Q_t, q_hi + Q_t]. @throws libseq::DataError when the score is not quantile_pair.
  Interval quantile_interval(double lower, double upper) const;

  /// Records the outcome of an issued interval: err = 0 if covered else 1, α ← α + γ (α* − err)
  /// (Gibbs & Candès 2021, Eq. 2), and stores `score` (NaN: not stored).
  void update(bool covered, double score);

  /// Issue ŷ ± Q_t, observe y, update; returns the issued interval. For lead-1 streams and back-tests.
  Interval step_symmetric(double point, double observed);
  /// Issue [q_lo - Q_t, q_hi + Q_t], observe y, update; returns the issued interval.
  Interval step_quantile(double lower, double upper, double observed);

  /// Outcomes recorded so far.
  std::size_t steps() const { return steps_; }
  /// Outcomes that were not covered.
  std::size_t misses() const { return misses_; }
  /// misses() / steps(); NaN before the first outcome.
  double observed_miscoverage() const;
  /// The options in force.
  const AdaptiveOptions& options() const { return options_; }

 private:
  AdaptiveOptions options_;
  double alpha_ = 0.1;
  std::deque<double> scores_;
  std::size_t steps_ = 0;
  std::size_t misses_ = 0;
};

}  // namespace libseq::uncertainty
