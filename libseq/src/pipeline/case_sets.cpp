#include <algorithm>
#include <cmath>
#include <cstdio>

#include "case_sets_impl.hpp"
#include "libseq/error.hpp"
#include "libseq/uncertainty/conformal.hpp"

namespace libseq::pipeline::detail {

// Splits distributions of windows (ordered by site, then issue) into one CaseSet per site.
void split_by_site(std::span<const data::Window> windows, const CaseDistributions& dist,
                   const data::FeatureTable& table, const data::WindowOptions& options, std::size_t leads,
                   std::vector<CaseSet>& out) {
  const std::size_t levels = dist.levels.size();
  for (std::size_t i = 0; i < windows.size(); ++i) {
    CaseSet& set = out[windows[i].site];
    set.issues.push_back(windows[i].issue);
    for (std::size_t k = 0; k < leads; ++k) {
      const std::size_t c = i * leads + k;
      set.observed.push_back(table.observed_target(windows[i].site, target_step(options, windows[i].issue, k)));
      set.mean.push_back(dist.mean[c]);
      set.median.push_back(dist.median[c]);
      set.quantiles.insert(set.quantiles.end(), dist.quantiles.begin() + static_cast<std::ptrdiff_t>(c * levels),
                           dist.quantiles.begin() + static_cast<std::ptrdiff_t>((c + 1) * levels));
    }
  }
}

// Rounds a set to float precision: the precision results and checkpoints store, so that a resumed run (reading
// checkpoints) computes the final forecast and calibration from exactly the values an uninterrupted run uses.
void round_to_float(CaseSet& set) {
  for (auto* values : {&set.mean, &set.median, &set.quantiles}) {
    for (double& v : *values) v = static_cast<double>(static_cast<float>(v));
  }
}

// Calibrates every central interval of the `test` sets in place: CQR (Romano et al. 2019) on the interval bounds,
// fitted per lead on the pooled `calibration` sets; with CalibrationMethod::adaptive, then adaptive conformal
// inference (Gibbs & Candès 2021) through each site's test period in issue order, an outcome being used only once
// it is observed (lead steps after the issue). Returns false when there was nothing to calibrate on.
bool calibrate_sets(const JobConfig& job, const ScoreScale& scale, const std::vector<const CaseSet*>& calibration,
                    const std::vector<CaseSet*>& test, std::size_t leads, const std::string& what,
                    std::vector<std::string>& warnings, std::vector<std::string>& notes) {
  const std::size_t levels = job.quantiles.size();
  std::vector<double> observed;
  std::vector<std::size_t> lead_of_case;
  std::vector<const CaseSet*> cal_sets;
  for (const CaseSet* set : calibration) {
    if (set == nullptr) continue;
    cal_sets.push_back(set);
    for (std::size_t c = 0; c < set->observed.size(); ++c) {
      observed.push_back(scale.forward(set->observed[c]));
      lead_of_case.push_back(c % leads);
    }
  }
  std::vector<bool> seen_lead(leads, false);
  for (std::size_t c = 0; c < observed.size(); ++c)
    seen_lead[lead_of_case[c]] = seen_lead[lead_of_case[c]] || std::isfinite(observed[c]);
  if (std::find(seen_lead.begin(), seen_lead.end(), false) != seen_lead.end()) return false;
  const bool per_lead = calibrate_per_lead(job, observed, lead_of_case, leads);
  if (!per_lead && leads > 1 && job.calibration_leads == CalibrationLeads::automatic) {
    notes.push_back(what + ": intervals calibrated over all leads together (a lead has fewer than " +
                    std::to_string(job.calibration_min_cases) + " calibration cases; calibration.min_cases_per_lead)");
  }
  for (double coverage : job.intervals) {
    const std::size_t lo = level_position(job.quantiles, (1 - coverage) / 2);
    const std::size_t hi = level_position(job.quantiles, (1 + coverage) / 2);
    std::vector<double> lower, upper;
    for (const CaseSet* set : cal_sets) {
      for (std::size_t c = 0; c < set->observed.size(); ++c) {
        lower.push_back(scale.forward(set->quantiles[c * levels + lo]));
        upper.push_back(scale.forward(set->quantiles[c * levels + hi]));
      }
    }
    const auto calibrator = fit_interval_calibrator(observed, lower, upper, lead_of_case, coverage, per_lead);
    for (const auto& lead : calibrator.state().leads) {
      if (std::isinf(lead.score_quantile)) {
        char text[240];
        const std::string which = per_lead ? "lead " + std::to_string(lead.lead + 1) : "all leads pooled";
        std::snprintf(text, sizeof text,
                      "%s: the %g %% interval (%s) is unbounded: %zu calibration case(s) are too few for rank "
                      "%zu (split conformal needs n >= %zu); lengthen periods.calibration",
                      what.c_str(), coverage * 100, which.c_str(), lead.count, lead.rank, lead.rank);
        warnings.push_back(text);
      }
    }
    for (CaseSet* set : test) {
      if (job.calibration == CalibrationMethod::split_conformal) {
        for (std::size_t c = 0; c < set->observed.size(); ++c) {
          const auto interval = calibrator.quantile_interval(scale.forward(set->quantiles[c * levels + lo]),
                                                             scale.forward(set->quantiles[c * levels + hi]), c % leads);
          set->quantiles[c * levels + lo] = scale.inverse(interval.lower);
          set->quantiles[c * levels + hi] = scale.inverse(interval.upper);
        }
        continue;
      }
      // One adaptive stream per lead, or one over all leads when the calibration pools them; each stream starts
      // from its calibration scores and is updated with an outcome once it is observed.
      const std::size_t streams = per_lead ? leads : 1;
      for (std::size_t g = 0; g < streams; ++g) {
        const std::size_t first_lead = per_lead ? g : 0;
        const std::size_t end_lead = per_lead ? g + 1 : leads;
        std::vector<double> scores;
        for (std::size_t c = 0; c < observed.size(); ++c) {
          if (lead_of_case[c] < first_lead || lead_of_case[c] >= end_lead) continue;
          scores.push_back(uncertainty::quantile_pair_score(lower[c], upper[c], observed[c]));
        }
        uncertainty::AdaptiveOptions adaptive;
        adaptive.score = uncertainty::ConformalScore::quantile_pair;
        adaptive.miscoverage = 1 - coverage;
        adaptive.step_size = job.adaptive_step;
        uncertainty::AdaptiveConformal aci(adaptive, scores);
        struct Pending {
          std::size_t due;
          double lower, upper;                // raw bounds: the score
          double issued_lower, issued_upper;  // calibrated bounds: whether the outcome was covered
          double observed;
        };
        std::vector<Pending> pending;
        for (std::size_t row = 0; row < set->rows(); ++row) {
          const std::size_t issue = set->issues[row];
          std::erase_if(pending, [&](const Pending& p) {
            if (p.due > issue) return false;
            if (std::isfinite(p.observed)) {
              // Gibbs & Candès (2021), Eq. 2: err_t is whether the *issued* interval missed.
              aci.update(p.observed >= p.issued_lower && p.observed <= p.issued_upper,
                         uncertainty::quantile_pair_score(p.lower, p.upper, p.observed));
            }
            return true;
          });
          for (std::size_t k = first_lead; k < end_lead; ++k) {
            const std::size_t c = row * leads + k;
            const double raw_lo = scale.forward(set->quantiles[c * levels + lo]);
            const double raw_hi = scale.forward(set->quantiles[c * levels + hi]);
            const auto interval = aci.quantile_interval(raw_lo, raw_hi);
            set->quantiles[c * levels + lo] = scale.inverse(interval.lower);
            set->quantiles[c * levels + hi] = scale.inverse(interval.upper);
            const std::size_t due = job.windows.mode == data::WindowMode::forecast ? issue + 1 + k : issue;
            pending.push_back({due, raw_lo, raw_hi, interval.lower, interval.upper, scale.forward(set->observed[c])});
          }
        }
      }
    }
  }
  for (CaseSet* set : test) {
    order_calibrated_quantiles(set->quantiles, job.quantiles, job.intervals);
  }
  return true;
}

io::ForecastBlock block_from_set(const std::string& method, const CaseSet& set, const std::vector<double>& levels) {
  io::ForecastBlock b;
  b.method = method;
  b.quantile_levels = levels;
  b.mean.assign(set.mean.begin(), set.mean.end());
  b.median.assign(set.median.begin(), set.median.end());
  b.quantiles.assign(set.quantiles.begin(), set.quantiles.end());
  return b;
}

CaseSet set_from_block(const io::SiteResults& site, const io::ForecastBlock& block, const data::TimeAxis& axis) {
  CaseSet set;
  for (auto t : site.issue_times) set.issues.push_back(static_cast<std::size_t>(axis.index_of(t)));
  set.observed.assign(site.observed.begin(), site.observed.end());
  set.mean.assign(block.mean.begin(), block.mean.end());
  set.median.assign(block.median.begin(), block.median.end());
  set.quantiles.assign(block.quantiles.begin(), block.quantiles.end());
  return set;
}

// Per-case mean pinball loss over the levels of lead k (NaN where the target or a quantile is missing).
std::vector<double> pinball_losses(const CaseSet& set, const std::vector<double>& levels, std::size_t leads,
                                   std::size_t k) {
  std::vector<double> out;
  for (std::size_t c = k; c < set.observed.size(); c += leads) {
    const double y = set.observed[c];
    double sum = 0.0;
    for (std::size_t q = 0; q < levels.size(); ++q) {
      const double v = set.quantiles[c * levels.size() + q];
      sum += (y - v) * (levels[q] - (y < v ? 1.0 : 0.0));
    }
    out.push_back(std::isfinite(y) && std::isfinite(sum) ? sum / static_cast<double>(levels.size()) : NAN);
  }
  return out;
}

// Mean of the finite values; +inf when there is none.
double mean_finite(const std::vector<double>& values) {
  double total = 0.0;
  std::size_t count = 0;
  for (double v : values) {
    if (!std::isfinite(v)) continue;
    total += v;
    ++count;
  }
  return count ? total / static_cast<double>(count) : INFINITY;
}

// w · a + (1 − w) · b for lead k of every row (quantile averaging keeps the quantiles ordered).
void blend_lead(const CaseSet& a, const CaseSet& b, double w, std::size_t leads, std::size_t k, std::size_t levels,
                CaseSet& out) {
  for (std::size_t c = k; c < a.observed.size(); c += leads) {
    out.mean[c] = w * a.mean[c] + (1 - w) * b.mean[c];
    out.median[c] = w * a.median[c] + (1 - w) * b.median[c];
    for (std::size_t q = 0; q < levels; ++q) {
      out.quantiles[c * levels + q] = w * a.quantiles[c * levels + q] + (1 - w) * b.quantiles[c * levels + q];
    }
  }
}

FinalCombination combine_final(const JobConfig& job, const CaseSet& selection, const CaseSet& test,
                               const CaseSet& calibration,
                               const std::vector<std::pair<CaseSet, CaseSet>>& baseline_sets,
                               const std::vector<CaseSet>& baseline_tests,
                               const std::vector<std::string>& baseline_names,
                               const std::vector<std::int64_t>& lead_labels) {
  const std::size_t leads = lead_labels.size();
  const std::size_t level_count = job.quantiles.size();
  FinalCombination out{test, calibration, {}};
  for (std::size_t k = 0; k < leads; ++k) {
    // Candidates: the network alone, then every baseline with network weights 0, 0.1, ..., 0.9.
    struct Candidate {
      std::size_t baseline;
      double weight;
      std::vector<double> losses;
      double mean;
    };
    std::vector<Candidate> candidates;
    auto add = [&](std::size_t b, double w, const CaseSet& set) {
      auto losses = pinball_losses(set, job.quantiles, leads, k);
      const double mean = mean_finite(losses);
      candidates.push_back({b, w, std::move(losses), mean});
    };
    add(0, 1.0, selection);
    for (std::size_t b = 0; b < baseline_sets.size(); ++b) {
      CaseSet blended = selection;
      for (int step = 0; step < 10; ++step) {
        const double w = step / 10.0;
        blend_lead(selection, baseline_sets[b].first, w, leads, k, level_count, blended);
        add(b, w, blended);
      }
    }
    std::size_t best = 0;
    for (std::size_t i = 1; i < candidates.size(); ++i) {
      if (candidates[i].mean < candidates[best].mean) best = i;
    }
    // One-standard-error rule along the best candidate's partner baseline: the smallest network weight whose
    // loss exceeds the best by at most one standard error of the paired loss difference (lags up to the
    // forecasts' overlap, as Diebold & Mariano 1995).
    std::size_t partner = candidates[best].baseline;
    if (best == 0) {
      std::size_t best_blend = 1;
      for (std::size_t i = 2; i < candidates.size(); ++i) {
        if (candidates[i].mean < candidates[best_blend].mean) best_blend = i;
      }
      partner = candidates[best_blend].baseline;
    }
    const std::size_t overlap =
        job.windows.mode == data::WindowMode::forecast ? k / std::max<std::size_t>(1, job.windows.issue_every) : 0;
    std::size_t chosen = best;
    for (std::size_t i = 0; i < candidates.size(); ++i) {
      const auto& c = candidates[i];
      if (!std::isfinite(c.mean) || (i > 0 && c.baseline != partner)) continue;
      const double margin = difference_standard_error(c.losses, candidates[best].losses, overlap);
      if (!(c.mean - candidates[best].mean <= margin)) continue;
      const auto& current = candidates[chosen];
      if (c.weight < current.weight - 1e-9 || (std::abs(c.weight - current.weight) < 1e-9 && c.mean < current.mean)) {
        chosen = i;
      }
    }
    const std::size_t best_b = candidates[chosen].baseline;
    const double best_w = candidates[chosen].weight;
    blend_lead(test, baseline_tests[best_b], best_w, leads, k, level_count, out.test);
    blend_lead(calibration, baseline_sets[best_b].second, best_w, leads, k, level_count, out.calibration);
    char text[240];
    std::snprintf(text, sizeof text, "%slead %lld: %.1f network + %.1f %s", k ? "; " : "",
                  static_cast<long long>(lead_labels[k]), best_w, 1 - best_w, baseline_names[best_b].c_str());
    out.choice += text;
    if (chosen != best) {
      std::snprintf(text, sizeof text, " (lowest loss: %.1f network + %.1f %s)", candidates[best].weight,
                    1 - candidates[best].weight, baseline_names[candidates[best].baseline].c_str());
      out.choice += text;
    }
  }
  return out;
}

}  // namespace libseq::pipeline::detail
