#include "libseq/baselines/ridge_arx.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include "baselines/common_impl.hpp"
#include "libseq/error.hpp"

namespace libseq::baselines {

void RidgeArxOptions::validate() const {
  std::string problems;
  auto add = [&](const std::string& p) { problems += (problems.empty() ? "" : "; ") + p; };
  if (target_lags == 0) add("ridge_arx.target_lags = 0: expected at least 1 lag of the target");
  if (max_lead == 0) add("ridge_arx.max_lead = 0: expected at least 1 lead");
  if (penalties.empty()) add("ridge_arx.penalties is empty: expected at least one penalty");
  for (double p : penalties) {
    if (!(p >= 0.0) || !std::isfinite(p)) add("ridge_arx.penalties holds " + std::to_string(p) + ": expected finite >= 0");
  }
  if (!problems.empty()) throw ConfigError(problems);
}

namespace {

std::size_t feature_count(const RidgeArxOptions& o, std::size_t inputs) {
  return o.target_lags + inputs * o.input_lags + (o.use_target_step_inputs ? inputs : 0);
}

std::size_t longest_lag(const RidgeArxOptions& o, std::size_t inputs) {
  return std::max(o.target_lags, inputs ? o.input_lags : std::size_t{0});
}

// Features of issue t for lead h in the documented order; false when one is missing or out of the series.
bool features_at(const RidgeArxOptions& o, const SeriesSet& s, std::size_t t, std::size_t h, double* f) {
  if (t + 1 < longest_lag(o, s.inputs.size())) return false;
  std::size_t k = 0;
  for (std::size_t lag = 0; lag < o.target_lags; ++lag) f[k++] = s.target[t - lag];
  for (const auto& x : s.inputs) {
    for (std::size_t lag = 0; lag < o.input_lags; ++lag) f[k++] = x[t - lag];
  }
  if (o.use_target_step_inputs) {
    if (t + h >= s.length()) return false;
    for (const auto& x : s.inputs) f[k++] = x[t + h];
  }
  for (std::size_t j = 0; j < k; ++j) {
    if (std::isnan(f[j])) return false;
  }
  return true;
}

struct Rows {
  Eigen::MatrixXd x;
  Eigen::VectorXd y;
};

// Rows of issues t with t and t + h inside `range` and every feature and the target observed.
Rows collect_rows(const RidgeArxOptions& o, const SeriesSet& s, IndexRange range, std::size_t h) {
  const std::size_t p = feature_count(o, s.inputs.size());
  std::vector<double> buf(p), xs, ys;
  for (std::size_t t = range.begin; t + h < range.end; ++t) {
    if (!features_at(o, s, t, h, buf.data()) || std::isnan(s.target[t + h])) continue;
    xs.insert(xs.end(), buf.begin(), buf.end());
    ys.push_back(s.target[t + h]);
  }
  Rows r;
  const auto n = static_cast<Eigen::Index>(ys.size());
  r.x = Eigen::Map<Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(xs.data(), n,
                                                                                         static_cast<Eigen::Index>(p));
  r.y = Eigen::Map<Eigen::VectorXd>(ys.data(), n);
  return r;
}

// Ridge on standardised features with an unpenalised intercept (Hoerl & Kennard 1970, Technometrics 12:55; the
// intercept is removed by centring, cf. Hastie, Tibshirani & Friedman 2009, Elements of Statistical Learning
// §3.4.1, eq. 3.44): β_z = (ZᵀZ + λI)⁻¹ Zᵀ(y − ȳ), then back to original units: slope_k = β_z,k / sd_k,
// intercept = ȳ − Σ slope_k mean_k. Features with zero spread get slope 0.
RidgeLeadModel solve(const Rows& rows, double penalty) {
  const Eigen::Index n = rows.x.rows();
  const Eigen::Index p = rows.x.cols();
  const Eigen::RowVectorXd mean = rows.x.colwise().mean();
  Eigen::MatrixXd z = rows.x.rowwise() - mean;
  Eigen::VectorXd sd = (z.array().square().colwise().sum() / static_cast<double>(n)).sqrt().transpose();
  for (Eigen::Index k = 0; k < p; ++k) {
    z.col(k) = sd(k) > 0.0 ? Eigen::VectorXd(z.col(k) / sd(k)) : Eigen::VectorXd::Zero(n);
  }
  const double y_mean = rows.y.mean();
  Eigen::MatrixXd gram = z.transpose() * z;
  gram.diagonal().array() += penalty;
  const Eigen::VectorXd beta = gram.ldlt().solve(z.transpose() * (rows.y.array() - y_mean).matrix());
  RidgeLeadModel m;
  m.penalty = penalty;
  m.training_rows = static_cast<std::size_t>(n);
  m.slopes.resize(static_cast<std::size_t>(p));
  m.intercept = y_mean;
  for (Eigen::Index k = 0; k < p; ++k) {
    const double slope = sd(k) > 0.0 ? beta(k) / sd(k) : 0.0;
    m.slopes[static_cast<std::size_t>(k)] = slope;
    m.intercept -= slope * mean(k);
  }
  return m;
}

double predict(const RidgeLeadModel& m, const double* f) {
  double y = m.intercept;
  for (std::size_t k = 0; k < m.slopes.size(); ++k) y += m.slopes[k] * f[k];
  return y;
}

}  // namespace

RidgeArx::RidgeArx(RidgeArxOptions options) : options_(std::move(options)) { options_.validate(); }

void RidgeArx::fit(const SeriesSet& series, IndexRange fit_range, IndexRange validation_range) {
  series.check(name());
  detail::require_range(name(), "fit range", fit_range, series.length());
  if (options_.penalties.size() > 1) {
    if (validation_range.empty()) {
      throw ConfigError("ridge_arx.penalties has " + std::to_string(options_.penalties.size()) +
                        " values but the validation range is empty: expected a validation range to choose one");
    }
    detail::require_range(name(), "validation range", validation_range, series.length());
  }
  input_count_ = series.inputs.size();
  const std::size_t p = feature_count(options_, input_count_);
  models_.clear();
  for (std::size_t h = 1; h <= options_.max_lead; ++h) {
    const Rows train = collect_rows(options_, series, fit_range, h);
    if (static_cast<std::size_t>(train.y.size()) < p + 1) {
      throw DataError("ridge_arx: lead " + std::to_string(h) + " has " + std::to_string(train.y.size()) +
                      " complete rows in fit range " + detail::range_text(fit_range) + ", expected at least " +
                      std::to_string(p + 1));
    }
    if (options_.penalties.size() == 1) {
      models_.push_back(solve(train, options_.penalties.front()));
      models_.back().validation_mse = std::nan("");
      continue;
    }
    const Rows valid = collect_rows(options_, series, validation_range, h);
    if (valid.y.size() == 0) {
      throw DataError("ridge_arx: lead " + std::to_string(h) + " has no complete row in validation range " +
                      detail::range_text(validation_range));
    }
    RidgeLeadModel best;
    best.validation_mse = std::numeric_limits<double>::infinity();
    for (double penalty : options_.penalties) {
      RidgeLeadModel m = solve(train, penalty);
      double sse = 0.0;
      for (Eigen::Index r = 0; r < valid.y.size(); ++r) {
        const Eigen::VectorXd row = valid.x.row(r).transpose();
        const double e = valid.y(r) - predict(m, row.data());
        sse += e * e;
      }
      m.validation_mse = sse / static_cast<double>(valid.y.size());
      // Strictly smaller keeps the first (smallest) penalty of equal-scoring ones.
      if (m.validation_mse < best.validation_mse) best = std::move(m);
    }
    models_.push_back(std::move(best));
  }
}

std::size_t RidgeArx::first_issue() const { return longest_lag(options_, input_count_) - 1; }

PointForecasts RidgeArx::forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                                  std::size_t horizon) const {
  if (models_.empty()) throw DataError("ridge_arx: forecast called before fit");
  if (horizon > options_.max_lead) {
    throw ConfigError("ridge_arx: horizon " + std::to_string(horizon) + " exceeds ridge_arx.max_lead = " +
                      std::to_string(options_.max_lead) + " the models were fitted for");
  }
  if (series.inputs.size() != input_count_) {
    throw DataError("ridge_arx: forecast given " + std::to_string(series.inputs.size()) +
                    " input series, fitted with " + std::to_string(input_count_));
  }
  series.check(name());
  detail::require_issues(name(), issues, first_issue(), series.length());
  auto out = detail::make_points(issues, horizon);
  std::vector<double> f(feature_count(options_, input_count_));
  for (std::size_t i = 0; i < issues.size(); ++i) {
    for (std::size_t h = 1; h <= horizon; ++h) {
      if (features_at(options_, series, issues[i], h, f.data())) out.value(i, h - 1) = predict(models_[h - 1], f.data());
    }
  }
  return out;
}

const RidgeLeadModel& RidgeArx::lead_model(std::size_t lead) const {
  if (lead == 0 || lead > models_.size()) {
    throw DataError("ridge_arx: no fitted model for lead " + std::to_string(lead) + " (fitted leads 1.." +
                    std::to_string(models_.size()) + ")");
  }
  return models_[lead - 1];
}

}  // namespace libseq::baselines
