#include "libseq/pipeline/report.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <numeric>
#include <set>
#include <sstream>

#include "libseq/caution.hpp"
#include "libseq/data/time_axis.hpp"
#include "libseq/error.hpp"
#include "libseq/metrics/probabilistic.hpp"
#include "pipeline/report_assets_impl.hpp"
#include "pipeline/report_charts_impl.hpp"

namespace libseq::pipeline {

using detail::escape_html;
using detail::format_number;
using detail::Point;
using detail::SvgChart;

void ReportOptions::validate() const {
  std::ostringstream problems;
  if (max_points_per_series < 10) {
    problems << "\n  report.max_points_per_series = " << max_points_per_series << ": expected an integer >= 10";
  }
  if (max_chart_leads < 1) problems << "\n  report.max_chart_leads = " << max_chart_leads << ": expected >= 1";
  if (pit_bins < 1 || pit_bins > 100) {
    problems << "\n  report.pit_bins = " << pit_bins << ": expected an integer in 1..100";
  }
  if (network_method.empty()) problems << "\n  report.network_method = \"\": expected a method name";
  const std::set<std::int64_t> distinct(chart_leads.begin(), chart_leads.end());
  if (distinct.size() != chart_leads.size()) problems << "\n  report.chart_leads: expected each lead at most once";
  if (!problems.str().empty()) throw ConfigError("invalid report options:" + problems.str());
}

double quantile_set_pit(std::span<const double> levels, std::span<const float> quantiles, double observed) {
  const std::size_t q = levels.size();
  if (q == 0 || quantiles.size() != q || !std::isfinite(observed)) return std::numeric_limits<double>::quiet_NaN();
  // The same PIT as the scorecard's (metrics::pit_quantiles), so the report and results.h5 agree.
  const std::vector<double> values(quantiles.begin(), quantiles.end());
  const double y[1] = {observed};
  return metrics::pit_quantiles(y, levels, values).at(0);
}

QuantileCalibration quantile_calibration(std::span<const double> levels, std::span<const float> quantiles,
                                         std::span<const float> observed, std::size_t bins) {
  if (bins == 0) throw ConfigError("quantile_calibration: bins = 0: expected at least 1 bin");
  const std::size_t q = levels.size();
  const std::size_t n = observed.size();
  if (quantiles.size() != n * q) {
    throw DataError("quantile_calibration: " + std::to_string(quantiles.size()) + " quantile values for " +
                    std::to_string(n) + " cases of " + std::to_string(q) + " levels: expected cases x levels");
  }
  QuantileCalibration result;
  result.pit_counts.assign(bins, 0);
  result.reliability.resize(q);
  std::vector<std::size_t> below(q, 0);
  for (std::size_t j = 0; j < q; ++j) result.reliability[j].nominal = levels[j];
  for (std::size_t i = 0; i < n; ++i) {
    const auto set = quantiles.subspan(i * q, q);
    const double pit = quantile_set_pit(levels, set, observed[i]);
    if (!std::isfinite(pit)) continue;
    ++result.cases;
    const auto bin = std::min(bins - 1, static_cast<std::size_t>(pit * static_cast<double>(bins)));
    ++result.pit_counts[bin];
    std::vector<float> sorted(set.begin(), set.end());
    std::sort(sorted.begin(), sorted.end());
    for (std::size_t j = 0; j < q; ++j) below[j] += observed[i] <= sorted[j] ? 1 : 0;
  }
  for (std::size_t j = 0; j < q; ++j) {
    result.reliability[j].cases = result.cases;
    if (result.cases > 0) result.reliability[j].observed = static_cast<double>(below[j]) / result.cases;
  }
  return result;
}

namespace {

const char* const observed_colour = "#1d2733";
const char* const network_colour = "#0f7c86";
const char* const baseline_colours[] = {"#c2761b", "#7b4f9d", "#5b8c2a", "#b23a3a", "#3d6fb6", "#8c6d46", "#a0527a"};

std::string lower_ascii(std::string text) {
  for (char& c : text) {
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  }
  return text;
}

// HTML ids may hold any character but whitespace; the fragment of a link to them is percent-encoded.
std::string site_anchor(const std::string& id) {
  std::string out = "site-";
  for (char c : id) out += (c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f') ? '_' : c;
  return out;
}

std::string percent_encode(const std::string& text) {
  std::string out;
  for (unsigned char c : text) {
    if (std::isalnum(c) || c == '-' || c == '_' || c == '.' || c == '~') {
      out += static_cast<char>(c);
    } else {
      char buffer[4];
      std::snprintf(buffer, sizeof buffer, "%%%02X", c);
      out += buffer;
    }
  }
  return out;
}

std::string describe_seconds(double seconds) {
  char buffer[64];
  if (seconds >= 86400 && std::fmod(seconds, 86400) == 0) {
    std::snprintf(buffer, sizeof buffer, "%g day%s", seconds / 86400, seconds == 86400 ? "" : "s");
  } else if (seconds >= 3600 && std::fmod(seconds, 3600) == 0) {
    std::snprintf(buffer, sizeof buffer, "%g hour%s", seconds / 3600, seconds == 3600 ? "" : "s");
  } else if (seconds >= 60 && std::fmod(seconds, 60) == 0) {
    std::snprintf(buffer, sizeof buffer, "%g min", seconds / 60);
  } else {
    std::snprintf(buffer, sizeof buffer, "%g s", seconds);
  }
  return buffer;
}

std::string lead_text(const io::RunResults& results, std::int64_t lead) {
  if (lead == 0) return "lead 0 (simulation)";
  return "lead " + std::to_string(lead) + " (" + describe_seconds(static_cast<double>(lead * results.step_seconds)) +
         ")";
}

std::string units_suffix(const io::RunResults& results) {
  return results.target_units.empty() ? "" : " [" + results.target_units + "]";
}

// Which way a metric improves. From the definitions of the scores (common practice, no source).
enum class Better { higher, lower, one, zero, none };

Better orientation(const std::string& metric) {
  static const std::map<std::string, Better> known = {
      {"nse", Better::higher},          {"kge", Better::higher},      {"kge_r", Better::higher},
      {"kge_prime", Better::higher},    {"kge_alpha", Better::one},   {"kge_beta", Better::one},
      {"kge_prime_gamma", Better::one}, {"pbias", Better::zero},      {"rmse", Better::lower},
      {"mae", Better::lower},           {"mape", Better::lower},      {"mase", Better::lower},
      {"crps", Better::lower},          {"crps_fair", Better::lower}, {"pinball", Better::lower},
      {"interval_score", Better::lower}};
  const auto it = known.find(metric);
  if (it != known.end()) return it->second;
  if (metric.size() > 6 && metric.ends_with("_skill")) return Better::higher;
  // Coverage is best at its nominal level, which the metric rows do not carry, and a mean width is only better
  // together with adequate coverage: neither gets a "best" mark.
  return Better::none;
}

// Distance from the best value (smaller is better), or NaN when the metric has no ordering.
double badness(const std::string& metric, double value) {
  if (!std::isfinite(value)) return std::numeric_limits<double>::quiet_NaN();
  switch (orientation(metric)) {
    case Better::higher:
      return -value;
    case Better::lower:
      return value;
    case Better::one:
      return std::abs(value - 1);
    case Better::zero:
      return std::abs(value);
    case Better::none:
      break;
  }
  return std::numeric_limits<double>::quiet_NaN();
}

std::string metric_heading(const std::string& metric) {
  static const std::map<std::string, std::string> names = {{"nse", "NSE"},
                                                           {"kge", "KGE"},
                                                           {"mape", "MAPE"},
                                                           {"crps", "CRPS"},
                                                           {"coverage", "coverage"},
                                                           {"mean_width", "mean width"},
                                                           {"rmse", "RMSE"},
                                                           {"mae", "MAE"},
                                                           {"mase", "MASE"},
                                                           {"pbias", "PBIAS"},
                                                           {"crps_fair", "fair CRPS"},
                                                           {"interval_score", "interval score"}};
  const auto it = names.find(metric);
  return it != names.end() ? it->second : metric;
}

// Metric columns in a stable order: the headline scores first, then the rest alphabetically.
std::vector<std::string> order_metrics(const std::set<std::string>& present) {
  static const std::vector<std::string> headline = {"nse", "kge", "mape", "crps", "coverage", "mean_width"};
  std::vector<std::string> out;
  for (const auto& m : headline) {
    if (present.count(m)) out.push_back(m);
  }
  for (const auto& m : present) {
    if (std::find(headline.begin(), headline.end(), m) == headline.end()) out.push_back(m);
  }
  return out;
}

// A table of methods × metrics with the best value per column marked.
std::string metric_table_body(const std::vector<std::string>& methods, const std::vector<std::string>& columns,
                              const std::map<std::pair<std::string, std::string>, const io::MetricRow*>& rows,
                              const std::string& first_cell_html, std::size_t first_cell_rows) {
  std::map<std::string, double> best;
  for (const auto& column : columns) {
    double b = std::numeric_limits<double>::quiet_NaN();
    for (const auto& method : methods) {
      const auto it = rows.find({method, column});
      if (it == rows.end()) continue;
      const double d = badness(column, it->second->value);
      if (std::isfinite(d) && !(d >= b)) b = d;
    }
    best[column] = b;
  }
  std::string html;
  bool first = true;
  for (const auto& method : methods) {
    html += "<tr>";
    if (first && !first_cell_html.empty()) {
      html += "<th scope=\"rowgroup\" rowspan=\"" + std::to_string(first_cell_rows) + "\">" + first_cell_html + "</th>";
    }
    first = false;
    html += "<td class=\"method\">" + escape_html(method) + "</td>";
    for (const auto& column : columns) {
      const auto it = rows.find({method, column});
      if (it == rows.end()) {
        html += "<td></td>";
        continue;
      }
      const io::MetricRow& row = *it->second;
      const double d = badness(column, row.value);
      const bool is_best = std::isfinite(d) && d == best[column];
      std::string title = std::to_string(row.used) + " cases used, " + std::to_string(row.skipped) + " skipped";
      if (std::isfinite(row.ci_low) && std::isfinite(row.ci_high)) {
        title += "; bootstrap interval " + format_number(row.ci_low) + " to " + format_number(row.ci_high);
      }
      html += std::string("<td class=\"num") + (is_best ? " best" : "") + "\" title=\"" + escape_html(title) + "\">" +
              format_number(row.value) + "</td>";
    }
    html += "</tr>\n";
  }
  return html;
}

struct Range {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  void add(double v) {
    if (!std::isfinite(v)) return;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  // Padded range for a linear axis; [0, 1] when nothing finite was seen.
  std::pair<double, double> padded() const {
    if (!(hi >= lo)) return {0, 1};
    if (hi == lo) {
      const double pad = std::max(std::abs(lo) * 0.05, 0.5);
      return {lo - pad, hi + pad};
    }
    const double pad = (hi - lo) * 0.05;
    return {lo - pad, hi + pad};
  }
};

// Central intervals of a quantile set: level pairs (τ_j, τ_k) with τ_j + τ_k = 1, widest first.
std::vector<std::pair<std::size_t, std::size_t>> central_pairs(const std::vector<double>& levels) {
  std::vector<std::pair<std::size_t, std::size_t>> pairs;
  for (std::size_t j = 0; j < levels.size(); ++j) {
    for (std::size_t k = levels.size(); k-- > j + 1;) {
      if (std::abs(levels[j] + levels[k] - 1.0) < 1e-6) pairs.emplace_back(j, k);
    }
  }
  std::sort(pairs.begin(), pairs.end(), [&](const auto& a, const auto& b) {
    return levels[a.second] - levels[a.first] > levels[b.second] - levels[b.first];
  });
  return pairs;
}

std::string percent_text(double fraction) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%g%%", std::round(fraction * 1000) / 10);
  return buffer;
}

class ReportWriter {
 public:
  ReportWriter(const io::RunResults& results, const ReportOptions& options) : r_(results), o_(options) {}

  std::string render() {
    resolve_leads();
    std::string title = o_.title.empty() ? r_.title : o_.title;
    if (title.empty()) title = "runnel results";
    html_ +=
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
        "<meta name=\"generator\" content=\"runnel " +
        escape_html(r_.provenance.library_version) +
        "\">\n"
        "<title>" +
        escape_html(title) + "</title>\n<style>\n" + detail::report_css() +
        "</style>\n</head>\n"
        "<body>\n";
    header(title);
    index();
    across_sites_training();
    html_ += "<main id=\"sites\">\n";
    for (std::size_t s = 0; s < r_.sites.size(); ++s) site_section(s);
    html_ += "</main>\n";
    html_ += "<footer>Written by runnel " + escape_html(r_.provenance.library_version) + " from the results of " +
             escape_html(r_.provenance.created) +
             ". Charts are drawn from the stored hindcasts; see docs/report.md "
             "for how each is computed.</footer>\n";
    html_ += "<script>\n" + detail::report_script() + "</script>\n</body>\n</html>\n";
    return std::move(html_);
  }

 private:
  void resolve_leads() {
    const auto& leads = r_.leads;
    if (!o_.chart_leads.empty()) {
      for (std::int64_t lead : o_.chart_leads) {
        const auto it = std::find(leads.begin(), leads.end(), lead);
        if (it == leads.end()) {
          std::string known;
          for (auto l : leads) known += (known.empty() ? "" : ", ") + std::to_string(l);
          throw DataError("report.chart_leads: lead " + std::to_string(lead) + " is not among the leads of the " +
                          "results (" + known + ")");
        }
        chart_lead_indices_.push_back(static_cast<std::size_t>(it - leads.begin()));
      }
      return;
    }
    const std::size_t count = std::min(o_.max_chart_leads, leads.size());
    std::set<std::size_t> chosen;
    if (count == 1) {
      chosen.insert(0);
    } else {
      for (std::size_t k = 0; k < count; ++k) chosen.insert(k * (leads.size() - 1) / (count - 1));
    }
    chart_lead_indices_.assign(chosen.begin(), chosen.end());
  }

  void header(const std::string& title) {
    const auto& p = r_.provenance;
    html_ += "<header>\n<h1>" + escape_html(title) + "</h1>\n";
    if (!r_.summary.empty()) html_ += "<p class=\"summary\">" + escape_html(r_.summary) + "</p>\n";
    html_ += "<p class=\"caution\" role=\"note\">" + escape_html(caution_text()) + "</p>\n";
    html_ += "<dl class=\"facts\">\n";
    auto fact = [&](const std::string& key, const std::string& value) {
      if (!value.empty()) html_ += "<dt>" + escape_html(key) + "</dt><dd>" + escape_html(value) + "</dd>\n";
    };
    std::string target = r_.target_variable;
    if (!r_.target_standard_name.empty() && r_.target_standard_name != r_.target_variable) {
      target += " (" + r_.target_standard_name + ")";
    }
    fact("target", target);
    fact("units", r_.target_units);
    fact("mode", r_.mode);
    fact("time step", describe_seconds(static_cast<double>(r_.step_seconds)));
    std::string leads;
    for (auto l : r_.leads) leads += (leads.empty() ? "" : ", ") + std::to_string(l);
    fact("leads (steps)", leads);
    fact("test period", r_.test_period);
    fact("sites", std::to_string(r_.sites.size()));
    std::set<std::string> methods;
    for (const auto& s : r_.sites) {
      for (const auto& m : s.methods) methods.insert(m.method);
    }
    std::string method_list;
    for (const auto& m : methods) method_list += (method_list.empty() ? "" : ", ") + m;
    fact("methods", method_list);
    html_ += "</dl>\n";

    html_ += "<details class=\"provenance\"><summary>Provenance</summary>\n<dl class=\"facts\">\n";
    fact("runnel version", p.library_version);
    fact("commit", p.git_commit);
    fact("results created", p.created);
    char wall[64];
    std::snprintf(wall, sizeof wall, "%.1f s", p.wall_seconds);
    fact("wall time", wall);
    fact("threads", std::to_string(p.threads));
    fact("job file", p.job_path);
    std::string seeds;
    for (auto s : p.seeds) seeds += (seeds.empty() ? "" : ", ") + std::to_string(s);
    fact("seeds", seeds);
    html_ += "</dl>\n";
    if (!p.inputs.empty()) {
      html_ +=
          "<table class=\"inputs\"><caption>Input files</caption><thead><tr><th>path</th><th>SHA-256</th></tr>"
          "</thead><tbody>\n";
      for (const auto& f : p.inputs) {
        html_ += "<tr><td>" + escape_html(f.path) + "</td><td class=\"hash\">" + escape_html(f.sha256) + "</td></tr>\n";
      }
      html_ += "</tbody></table>\n";
    }
    if (!p.job_text.empty()) {
      html_ += "<details><summary>Job file as run</summary><pre>" + escape_html(p.job_text) + "</pre></details>\n";
    }
    html_ += "</details>\n";
    if (!r_.warnings.empty()) {
      html_ += "<section class=\"warnings\"><h2>Warnings</h2><ul>\n";
      for (const auto& w : r_.warnings) html_ += "<li>" + escape_html(w) + "</li>\n";
      html_ += "</ul></section>\n";
    }
    html_ += "</header>\n";
  }

  // Pooled-over-leads rows of one site, by (method, metric).
  std::map<std::pair<std::string, std::string>, const io::MetricRow*> rows_of(const std::string& site,
                                                                              std::int64_t lead) const {
    std::map<std::pair<std::string, std::string>, const io::MetricRow*> rows;
    for (const auto& row : r_.metrics) {
      if (row.site == site && row.lead == lead) rows[{row.method, row.metric}] = &row;
    }
    return rows;
  }

  std::vector<std::string> method_order(
      const io::SiteResults& site,
      const std::map<std::pair<std::string, std::string>, const io::MetricRow*>& rows) const {
    std::vector<std::string> out;
    auto add = [&](const std::string& m) {
      if (std::find(out.begin(), out.end(), m) == out.end()) out.push_back(m);
    };
    for (const auto& m : site.methods) {
      if (m.method == o_.network_method) add(m.method);
    }
    for (const auto& m : site.methods) add(m.method);
    for (const auto& [key, row] : rows) add(key.first);
    return out;
  }

  void index() {
    static const std::set<std::string> summary_metrics = {"nse", "kge", "mape", "crps", "coverage", "mean_width"};
    std::set<std::string> present;
    for (const auto& row : r_.metrics) {
      if (row.lead == -1 && summary_metrics.count(row.metric)) present.insert(row.metric);
    }
    const auto columns = order_metrics(present);
    html_ +=
        "<nav id=\"site-index\" aria-label=\"Sites\">\n<h2>Sites</h2>\n<p class=\"filter\"><label>Find a site "
        "<input type=\"search\" id=\"runnel-filter\" placeholder=\"id or name\" autocomplete=\"off\"></label> "
        "<span id=\"runnel-filter-count\">" +
        std::to_string(r_.sites.size()) + " sites</span></p>\n";
    html_ +=
        "<table class=\"index\"><caption>Scores pooled over all leads; the best value of each column within a "
        "site is marked. Coverage and mean width are not ranked (their best depends on the nominal level)."
        "</caption>\n<thead><tr><th>site</th><th>method</th>";
    for (const auto& c : columns) html_ += "<th>" + escape_html(metric_heading(c)) + "</th>";
    html_ += "</tr></thead>\n";
    for (const auto& site : r_.sites) {
      const auto rows = rows_of(site.site.id, -1);
      auto methods = method_order(site, rows);
      if (methods.empty()) methods.push_back("\u2013");
      std::string label =
          "<a href=\"#" + percent_encode(site_anchor(site.site.id)) + "\">" + escape_html(site.site.id) + "</a>";
      if (!site.site.name.empty()) label += "<br><span class=\"name\">" + escape_html(site.site.name) + "</span>";
      html_ += "<tbody data-key=\"" + escape_html(lower_ascii(site.site.id + " " + site.site.name)) + "\">\n";
      html_ += metric_table_body(methods, columns, rows, label, methods.size());
      html_ += "</tbody>\n";
    }
    html_ += "</table>\n</nav>\n";
  }

  std::vector<const io::TrainingRecord*> training_of(const std::string& model) const {
    std::vector<const io::TrainingRecord*> out;
    for (const auto& t : r_.training) {
      if (t.model == model) out.push_back(&t);
    }
    return out;
  }

  void across_sites_training() {
    const auto records = training_of("*");
    if (records.empty()) return;
    html_ += "<section id=\"training-across-sites\" class=\"training\">\n<h2>Training of the model across sites</h2>\n";
    training_block(records, "model across sites");
    html_ += "</section>\n";
  }

  void training_block(const std::vector<const io::TrainingRecord*>& records, const std::string& what) {
    html_ +=
        "<table class=\"members\"><thead><tr><th>member</th><th>seed</th><th>ended by</th><th>epochs</th>"
        "<th>best epoch</th><th>best validation loss</th><th>clipped steps</th><th>time</th></tr></thead>"
        "<tbody>\n";
    for (const auto* t : records) {
      char seconds[32];
      std::snprintf(seconds, sizeof seconds, "%.1f s", t->seconds);
      html_ += "<tr><td class=\"num\">" + std::to_string(t->member) + "</td><td class=\"num\">" +
               std::to_string(t->seed) + "</td><td>" + escape_html(t->termination) + "</td><td class=\"num\">" +
               std::to_string(t->epochs) + "</td><td class=\"num\">" + std::to_string(t->best_epoch) +
               "</td><td class=\"num\">" + format_number(t->best_validation_loss) + "</td><td class=\"num\">" +
               std::to_string(t->clipped_steps) + " of " + std::to_string(t->total_steps) + "</td><td class=\"num\">" +
               seconds + "</td></tr>\n";
    }
    html_ += "</tbody></table>\n<div class=\"pair\">\n";

    // Loss per epoch. A log axis when every loss is positive, since losses fall by orders of magnitude early on.
    Range loss_range, epoch_range;
    bool all_positive = true;
    std::size_t curves = 0;
    for (const auto* t : records) {
      for (double v : t->train_loss) {
        loss_range.add(v);
        all_positive = all_positive && (!std::isfinite(v) || v > 0);
      }
      for (double v : t->validation_loss) {
        loss_range.add(v);
        all_positive = all_positive && (!std::isfinite(v) || v > 0);
      }
      epoch_range.add(1);
      epoch_range.add(static_cast<double>(std::max(t->train_loss.size(), t->validation_loss.size())));
      curves += t->train_loss.empty() ? 0 : 1;
    }
    if (curves > 0) {
      detail::ChartFrame frame;
      frame.title = "Loss per epoch, " + what + " (" + std::to_string(records.size()) +
                    (records.size() == 1 ? " member)" : " members)");
      frame.x_label = "epoch";
      frame.y_label = "loss";
      frame.width = 560;
      frame.height = 280;
      frame.x_min = epoch_range.lo;
      frame.x_max = std::max(epoch_range.hi, epoch_range.lo + 1);
      frame.y_log = all_positive && loss_range.hi >= loss_range.lo;
      if (frame.y_log) {
        frame.y_min = std::pow(10.0, std::floor(std::log10(loss_range.lo)));
        frame.y_max = std::pow(10.0, std::ceil(std::log10(loss_range.hi)));
        if (frame.y_max <= frame.y_min) frame.y_max = frame.y_min * 10;
      } else {
        std::tie(frame.y_min, frame.y_max) = loss_range.padded();
      }
      SvgChart chart(frame);
      bool first_train = true, first_validation = true;
      for (const auto* t : records) {
        auto curve = [](const std::vector<double>& values) {
          std::vector<Point> points;
          for (std::size_t e = 0; e < values.size(); ++e) points.push_back({static_cast<double>(e + 1), values[e]});
          return points;
        };
        if (!t->train_loss.empty()) {
          chart.add_line(curve(t->train_loss), network_colour, first_train ? "training loss" : "", false, 0.75);
          first_train = false;
        }
        const bool has_validation = std::any_of(t->validation_loss.begin(), t->validation_loss.end(),
                                                [](double v) { return std::isfinite(v); });
        if (has_validation) {
          chart.add_line(curve(t->validation_loss), baseline_colours[0], first_validation ? "validation loss" : "",
                         true, 0.75);
          first_validation = false;
        }
      }
      html_ += "<figure>" + chart.render() +
               "<figcaption>One solid line per member for the training loss and one "
               "dashed line for the validation loss.</figcaption></figure>\n";
    }

    // Gradient through time: how strongly the loss still responds to inputs k steps back.
    Range lag_range, norm_range;
    std::size_t profiles = 0;
    for (const auto* t : records) {
      const std::size_t n = std::min(t->diagnostic_lags.size(), t->diagnostic_gradient_norms.size());
      bool any = false;
      for (std::size_t k = 0; k < n; ++k) {
        if (!(t->diagnostic_gradient_norms[k] > 0) || !std::isfinite(t->diagnostic_gradient_norms[k])) continue;
        lag_range.add(static_cast<double>(t->diagnostic_lags[k]));
        norm_range.add(t->diagnostic_gradient_norms[k]);
        any = true;
      }
      profiles += any ? 1 : 0;
    }
    if (profiles > 0) {
      detail::ChartFrame frame;
      frame.title = "Gradient through time, " + what;
      frame.x_label = "lag k (steps before the issue step)";
      frame.y_label = "gradient norm (log)";
      frame.width = 560;
      frame.height = 280;
      frame.x_min = lag_range.lo;
      frame.x_max = std::max(lag_range.hi, lag_range.lo + 1);
      frame.y_log = true;
      frame.y_min = std::pow(10.0, std::floor(std::log10(norm_range.lo)));
      frame.y_max = std::pow(10.0, std::ceil(std::log10(norm_range.hi)));
      if (frame.y_max <= frame.y_min) frame.y_max = frame.y_min * 10;
      SvgChart chart(frame);
      bool first = true;
      for (const auto* t : records) {
        const std::size_t n = std::min(t->diagnostic_lags.size(), t->diagnostic_gradient_norms.size());
        std::vector<Point> points;
        for (std::size_t k = 0; k < n; ++k) {
          points.push_back({static_cast<double>(t->diagnostic_lags[k]), t->diagnostic_gradient_norms[k]});
        }
        if (std::none_of(points.begin(), points.end(), [](const Point& p) { return p.y > 0 && std::isfinite(p.y); })) {
          continue;
        }
        chart.add_line(points, baseline_colours[1], first ? "members" : "", false, 0.8);
        first = false;
      }
      html_ += "<figure>" + chart.render() +
               "<figcaption>Norm of the gradient of the loss with respect to the input "
               "k steps back, one line per member; a steep fall means distant inputs barely shape the forecast."
               "</figcaption></figure>\n";
    }
    html_ += "</div>\n";
  }

  void hindcast_chart(const io::SiteResults& site, std::size_t lead_index, const io::ForecastBlock* network) {
    const std::size_t n = site.issue_times.size();
    const std::size_t leads = r_.leads.size();
    const std::int64_t lead = r_.leads[lead_index];
    std::vector<double> x(n);
    for (std::size_t i = 0; i < n; ++i) {
      x[i] = static_cast<double>(site.issue_times[i] + lead * r_.step_seconds);
    }
    auto column = [&](const std::vector<float>& values) {
      std::vector<double> out(n);
      for (std::size_t i = 0; i < n; ++i) out[i] = values[i * leads + lead_index];
      return out;
    };
    Range y_range;
    const auto observed = column(site.observed);
    for (double v : observed) y_range.add(v);

    std::vector<std::pair<std::size_t, std::size_t>> bands;
    std::vector<std::vector<double>> band_edges;  // lower, upper per band
    if (network != nullptr && !network->quantile_levels.empty()) {
      const auto pairs = central_pairs(network->quantile_levels);
      if (!pairs.empty()) bands.push_back(pairs.front());
      if (pairs.size() > 1) bands.push_back(pairs.back());
      const std::size_t q = network->quantile_levels.size();
      for (const auto& [low, high] : bands) {
        for (std::size_t level : {low, high}) {
          std::vector<double> edge(n);
          for (std::size_t i = 0; i < n; ++i) {
            edge[i] = network->quantiles[(i * leads + lead_index) * q + level];
            y_range.add(edge[i]);
          }
          band_edges.push_back(std::move(edge));
        }
      }
    }
    std::vector<std::vector<double>> medians;
    for (const auto& m : site.methods) {
      medians.push_back(column(m.median));
      for (double v : medians.back()) y_range.add(v);
    }

    detail::ChartFrame frame;
    frame.title = "Hindcast at " + lead_text(r_, lead);
    frame.x_label = "valid time (UTC)";
    frame.y_label = r_.target_variable + units_suffix(r_);
    frame.x_format = detail::AxisFormat::utc_time;
    Range x_range;
    for (double v : x) x_range.add(v);
    frame.x_min = x_range.hi >= x_range.lo ? x_range.lo : 0;
    frame.x_max = x_range.hi > x_range.lo ? x_range.hi : frame.x_min + 1;
    std::tie(frame.y_min, frame.y_max) = y_range.padded();
    SvgChart chart(frame);
    const std::size_t max_points = o_.max_points_per_series;
    const double opacities[] = {0.18, 0.34};
    for (std::size_t b = 0; b < bands.size(); ++b) {
      const auto& levels = network->quantile_levels;
      const std::string label = percent_text(levels[bands[b].second] - levels[bands[b].first]) + " interval";
      chart.add_band(detail::decimate_min_max(x, band_edges[2 * b + 1], max_points),
                     detail::decimate_min_max(x, band_edges[2 * b], max_points), network_colour, opacities[b], label);
    }
    std::size_t baseline = 0;
    for (std::size_t k = 0; k < site.methods.size(); ++k) {
      const bool is_network = &site.methods[k] == network;
      const char* colour = is_network ? network_colour : baseline_colours[baseline++ % std::size(baseline_colours)];
      chart.add_line(detail::decimate_min_max(x, medians[k], max_points), colour, site.methods[k].method + " median");
    }
    chart.add_dots(detail::decimate_min_max(x, observed, max_points), observed_colour, "observed");
    html_ += "<figure class=\"hindcast\" data-lead=\"" + std::to_string(lead) + "\">" + chart.render() + "</figure>\n";
  }

  void calibration_charts(const io::SiteResults& site, const io::ForecastBlock& network) {
    const auto calibration =
        quantile_calibration(network.quantile_levels, network.quantiles, site.observed, o_.pit_bins);
    const std::string cases = std::to_string(calibration.cases) + " cases, all leads pooled";
    html_ += "<div class=\"pair\">\n";
    {
      detail::ChartFrame frame;
      frame.title = "PIT histogram of " + network.method + " (" + cases + ")";
      frame.x_label = "PIT";
      frame.y_label = "density";
      frame.width = 560;
      frame.height = 280;
      std::vector<double> density(calibration.pit_counts.size());
      double top = 1.0;
      for (std::size_t b = 0; b < density.size(); ++b) {
        density[b] = calibration.cases == 0 ? std::numeric_limits<double>::quiet_NaN()
                                            : static_cast<double>(calibration.pit_counts[b]) *
                                                  static_cast<double>(density.size()) / calibration.cases;
        if (std::isfinite(density[b])) top = std::max(top, density[b]);
      }
      frame.y_max = top * 1.1;
      SvgChart chart(frame);
      chart.add_bars(density, network_colour, "PIT frequency");
      chart.add_reference(0, 1, 1, 1, "uniform");
      html_ += "<figure>" + chart.render() +
               "<figcaption>PIT by linear interpolation between the stored quantile "
               "levels (a case below the lowest quantile counts at half its level, above the highest at the middle of "
               "the upper tail, as in results.h5); a flat histogram at density 1 is "
               "calibrated, a U shape too narrow, a hump too wide.</figcaption></figure>\n";
    }
    {
      detail::ChartFrame frame;
      frame.title = "Reliability of " + network.method + " (" + cases + ")";
      frame.x_label = "quantile level";
      frame.y_label = "observed frequency below the quantile";
      frame.width = 560;
      frame.height = 280;
      SvgChart chart(frame);
      std::vector<Point> points;
      for (const auto& p : calibration.reliability) points.push_back({p.nominal, p.observed});
      chart.add_markers(points, network_colour, network.method);
      chart.add_reference(0, 0, 1, 1, "ideal");
      html_ += "<figure>" + chart.render() +
               "<figcaption>For each quantile level, the fraction of observations at "
               "or below that quantile; points on the diagonal are reliable.</figcaption></figure>\n";
    }
    html_ += "</div>\n";
  }

  void site_section(std::size_t index) {
    const io::SiteResults& site = r_.sites[index];
    const std::string& id = site.site.id;
    const bool open = index < o_.open_sites;
    html_ += "<details class=\"site\" id=\"" + escape_html(site_anchor(id)) + "\" data-key=\"" +
             escape_html(lower_ascii(id + " " + site.site.name)) + "\"" + (open ? " open" : "") + ">\n<summary><h2>" +
             escape_html(id) + (site.site.name.empty() ? "" : " \u2013 " + escape_html(site.site.name)) +
             "</h2></summary>\n";
    std::string where;
    char buffer[96];
    if (std::isfinite(site.site.latitude) && std::isfinite(site.site.longitude)) {
      std::snprintf(buffer, sizeof buffer, "%.4f\u00b0 N, %.4f\u00b0 E", site.site.latitude, site.site.longitude);
      where += buffer;
    }
    if (std::isfinite(site.site.elevation)) {
      std::snprintf(buffer, sizeof buffer, "%s%.0f m above sea level", where.empty() ? "" : "; ", site.site.elevation);
      where += buffer;
    }
    for (const auto& [name, value] : site.site.attributes) {
      where += (where.empty() ? "" : "; ") + name + " " + format_number(value);
    }
    if (!where.empty()) html_ += "<p class=\"where\">" + escape_html(where) + "</p>\n";

    const io::ForecastBlock* network = nullptr;
    for (const auto& m : site.methods) {
      if (m.method == o_.network_method) network = &m;
    }
    if (site.issue_times.empty() || site.methods.empty()) {
      html_ += "<p class=\"empty\">No hindcasts were stored for this site.</p>\n";
    } else {
      html_ += "<h3>Hindcasts</h3>\n";
      if (chart_lead_indices_.size() > 1) {
        html_ += "<p><label>Lead shown <select class=\"lead-select\">";
        for (std::size_t k : chart_lead_indices_) {
          html_ += "<option value=\"" + std::to_string(r_.leads[k]) + "\">" + escape_html(lead_text(r_, r_.leads[k])) +
                   "</option>";
        }
        html_ += "</select></label></p>\n";
      }
      for (std::size_t k : chart_lead_indices_) hindcast_chart(site, k, network);
      html_ += "<p class=\"note\">Observations as dots, each method's median as a line";
      if (network != nullptr && !central_pairs(network->quantile_levels).empty()) {
        html_ += ", and the central intervals of " + escape_html(network->method) + " as shaded bands";
      }
      html_ += ". Series longer than " + std::to_string(o_.max_points_per_series) +
               " points are thinned keeping the minimum and maximum of each stretch.</p>\n";
      if (network != nullptr && !network->quantile_levels.empty()) {
        html_ += "<h3>Calibration</h3>\n";
        calibration_charts(site, *network);
      }
    }

    // Metrics per lead, then pooled.
    std::set<std::string> present;
    for (const auto& row : r_.metrics) {
      if (row.site == id) present.insert(row.metric);
    }
    if (!present.empty()) {
      const auto columns = order_metrics(present);
      html_ += "<h3>Scores by lead</h3>\n<table class=\"scores\"><thead><tr><th>lead</th><th>method</th>";
      for (const auto& c : columns) html_ += "<th>" + escape_html(metric_heading(c)) + "</th>";
      html_ += "</tr></thead>\n";
      std::vector<std::int64_t> leads(r_.leads.begin(), r_.leads.end());
      leads.push_back(-1);
      for (std::int64_t lead : leads) {
        const auto rows = rows_of(id, lead);
        if (rows.empty()) continue;
        const auto methods = method_order(site, rows);
        const std::string label = lead == -1 ? "all leads" : std::to_string(lead);
        html_ +=
            "<tbody>" + metric_table_body(methods, columns, rows, escape_html(label), methods.size()) + "</tbody>\n";
      }
      html_ += "</table>\n";
    }

    const auto records = training_of(id);
    if (!records.empty()) {
      html_ += "<h3>Training</h3>\n";
      training_block(records, "site " + id);
    } else if (!training_of("*").empty()) {
      html_ +=
          "<p class=\"note\">This site was forecast by the <a href=\"#training-across-sites\">model trained "
          "across sites</a>.</p>\n";
    }
    html_ += "</details>\n";
  }

  const io::RunResults& r_;
  const ReportOptions& o_;
  std::vector<std::size_t> chart_lead_indices_;
  std::string html_;
};

}  // namespace

std::string render_report(const io::RunResults& results, const ReportOptions& options) {
  options.validate();
  results.validate();
  return ReportWriter(results, options).render();
}

void write_report(const std::filesystem::path& path, const io::RunResults& results, const ReportOptions& options) {
  io::write_text_atomically(path, render_report(results, options));
}

}  // namespace libseq::pipeline
