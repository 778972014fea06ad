#include "libseq/pipeline/score.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "libseq/error.hpp"
#include "libseq/metrics/scorecard.hpp"

namespace libseq::pipeline {

namespace {

std::string interval_suffix(double coverage) {
  char buffer[16];
  std::snprintf(buffer, sizeof buffer, "_%g", std::round(coverage * 1000) / 10);
  std::string s = buffer;
  std::replace(s.begin(), s.end(), '.', 'p');
  return s;
}

bool is_interval_metric(metrics::Metric m) {
  return m == metrics::Metric::interval_score || m == metrics::Metric::coverage || m == metrics::Metric::mean_width;
}

void add_rows(const metrics::Scorecard& card, bool interval_only, double coverage, std::vector<io::MetricRow>& rows) {
  for (const auto& record : card.records()) {
    for (const auto& [metric, value] : record.values) {
      if (interval_only != is_interval_metric(metric)) continue;
      io::MetricRow row;
      row.site = record.site;
      row.method = record.method;
      row.lead = record.lead;
      row.metric = metrics::to_string(metric) + (interval_only ? interval_suffix(coverage) : "");
      row.value = value.value;
      row.used = value.counts.used;
      row.skipped = value.counts.skipped();
      auto ci = record.intervals.find(metric);
      if (ci != record.intervals.end()) {
        row.ci_low = ci->second.lower;
        row.ci_high = ci->second.upper;
      }
      rows.push_back(row);
    }
  }
}

}  // namespace

std::vector<io::MetricRow> score_hindcasts(const io::RunResults& results, const ScoringOptions& job) {
  std::vector<metrics::ScoreInput> inputs;
  const std::size_t leads = results.leads.size();
  for (std::size_t s = 0; s < results.sites.size(); ++s) {
    const auto& site = results.sites[s];
    const std::size_t n = site.issue_times.size();
    for (const auto& block : site.methods) {
      for (std::size_t k = 0; k < leads; ++k) {
        metrics::ScoreInput in;
        in.site = site.site.id;
        in.method = block.method;
        in.lead = results.leads[k];
        auto& c = in.cases;
        c.form = block.quantile_levels.empty() ? metrics::PredictiveForm::none : metrics::PredictiveForm::quantiles;
        c.levels = block.quantile_levels;
        for (std::size_t i = 0; i < n; ++i) {
          c.observed.push_back(site.observed[i * leads + k]);
          c.point.push_back(block.mean[i * leads + k]);
          for (std::size_t q = 0; q < block.quantile_levels.size(); ++q) {
            c.quantiles.push_back(block.quantiles[(i * leads + k) * block.quantile_levels.size() + q]);
          }
          if (std::isfinite(site.mase_scale)) c.mase_scales.push_back(site.mase_scale);
        }
        if (c.mase_scales.size() != c.observed.size()) c.mase_scales.clear();
        inputs.push_back(std::move(in));
      }
    }
  }
  metrics::ScoreOptions options;
  for (const auto& name : job.metrics) options.metrics.push_back(metrics::parse_metric(name, "scoring.metrics"));
  if (job.bootstrap_resamples > 0) {
    metrics::BootstrapOptions b;
    b.resamples = job.bootstrap_resamples;
    b.block_length = std::max<std::size_t>(1, job.bootstrap_block);
    b.seed = job.seed;
    options.bootstrap = b;
  }
  std::vector<io::MetricRow> rows;
  for (std::size_t i = 0; i < job.intervals.size(); ++i) {
    options.interval_coverage = job.intervals[i];
    // MASE needs the same scale for every case of a pooled set; pooling over sites mixes scales, which the
    // scorecard refuses, so pooled-over-sites records drop MASE.
    const bool first = i == 0;
    for (auto scorer : {&metrics::score_per_site_and_lead, &metrics::score_per_site}) {
      const auto card = scorer(inputs, options);
      if (first) add_rows(card, false, 0, rows);
      add_rows(card, true, job.intervals[i], rows);
    }
    std::vector<metrics::ScoreInput> without_mase = inputs;
    for (auto& in : without_mase) in.cases.mase_scales.clear();
    for (auto scorer : {&metrics::score_per_lead, &metrics::score_pooled}) {
      const auto card = scorer(without_mase, options);
      if (first) add_rows(card, false, 0, rows);
      add_rows(card, true, job.intervals[i], rows);
    }
  }
  return rows;
}

io::RunResults rescore(const io::RunResults& results, const std::optional<data::Period>& period,
                       const ScoringOptions& options) {
  for (double c : options.intervals) {
    for (double level : {(1 - c) / 2, (1 + c) / 2}) {
      for (const auto& site : results.sites) {
        for (const auto& block : site.methods) {
          const bool present = std::any_of(block.quantile_levels.begin(), block.quantile_levels.end(),
                                           [&](double q) { return std::abs(q - level) < 1e-9; });
          if (!present) {
            throw ConfigError("--interval " + std::to_string(c) + ": method '" + block.method + "' at site '" +
                              site.site.id + "' has no stored quantile at level " + std::to_string(level) +
                              "; re-score with intervals whose bounds are among the stored levels");
          }
        }
      }
    }
  }
  io::RunResults out = results;
  if (period) {
    const std::size_t leads = results.leads.size();
    std::size_t kept_total = 0;
    for (auto& site : out.sites) {
      std::vector<std::size_t> keep;
      for (std::size_t i = 0; i < site.issue_times.size(); ++i) {
        if (period->contains(site.issue_times[i])) keep.push_back(i);
      }
      kept_total += keep.size();
      auto filter = [&](auto& values, std::size_t width) {
        std::remove_reference_t<decltype(values)> kept;
        for (std::size_t i : keep) {
          kept.insert(kept.end(), values.begin() + static_cast<std::ptrdiff_t>(i * width),
                      values.begin() + static_cast<std::ptrdiff_t>((i + 1) * width));
        }
        values = std::move(kept);
      };
      filter(site.observed, leads);
      for (auto& block : site.methods) {
        filter(block.mean, leads);
        filter(block.median, leads);
        filter(block.quantiles, leads * block.quantile_levels.size());
        filter(block.members, leads * block.member_count);
      }
      filter(site.issue_times, 1);
    }
    if (kept_total == 0) {
      throw ConfigError("--period " + period->to_string() + ": no issue time of the results lies in it (they cover " +
                        results.test_period + ")");
    }
    out.test_period = period->to_string();
  }
  out.metrics = score_hindcasts(out, options);
  out.validate();
  return out;
}

}  // namespace libseq::pipeline
