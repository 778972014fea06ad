#include "libseq/pipeline/report.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "libseq/caution.hpp"
#include "libseq/error.hpp"
#include "pipeline/report_charts_impl.hpp"
#include "report/sample_results.hpp"
#include "support/paths.hpp"

namespace libseq::pipeline {
namespace {

std::size_t count(const std::string& text, const std::string& needle) {
  std::size_t n = 0;
  for (auto pos = text.find(needle); pos != std::string::npos; pos = text.find(needle, pos + needle.size())) ++n;
  return n;
}

// Every <svg class="chart" ...>...</svg> of a piece of HTML.
std::vector<std::string> charts_of(const std::string& html) {
  std::vector<std::string> charts;
  for (auto pos = html.find("<svg class=\"chart\""); pos != std::string::npos;
       pos = html.find("<svg class=\"chart\"", pos + 1)) {
    const auto end = html.find("</svg>", pos);
    charts.push_back(html.substr(pos, end - pos));
  }
  return charts;
}

int declared_series(const std::string& chart) {
  const auto pos = chart.find("data-series=\"");
  return std::stoi(chart.substr(pos + 13));
}

// The <details class="site"> sections, in order.
std::vector<std::string> sections_of(const std::string& html) {
  std::vector<std::string> sections;
  for (auto pos = html.find("<details class=\"site\""); pos != std::string::npos;
       pos = html.find("<details class=\"site\"", pos + 1)) {
    const auto end = html.find("\n</details>\n", pos);
    sections.push_back(html.substr(pos, end - pos));
  }
  return sections;
}

// Hand-worked: levels 0.1, 0.5, 0.9 at quantiles 10, 20, 40. Between 10 and 20 the level rises 0.4 over 10 units,
// so y = 15 gives 0.1 + 0.4 * 5/10 = 0.3; between 20 and 40 it rises 0.4 over 20, so y = 30 gives 0.5 + 0.4 * 10/20
// = 0.7. Outside the stored quantiles, the middle of each tail: 0.1/2 = 0.05 below 10, (1 + 0.9)/2 = 0.95 above 40
// (the convention of metrics::pit_quantiles, which the scorecard uses).
TEST(QuantileSetPit, InterpolatesLevelsLinearlyAndPutsTheTailsAtTheirMiddles) {
  const std::vector<double> levels = {0.1, 0.5, 0.9};
  const std::vector<float> quantiles = {10, 20, 40};
  EXPECT_DOUBLE_EQ(quantile_set_pit(levels, quantiles, 15), 0.3);
  EXPECT_DOUBLE_EQ(quantile_set_pit(levels, quantiles, 30), 0.7);
  EXPECT_DOUBLE_EQ(quantile_set_pit(levels, quantiles, 20), 0.5);
  EXPECT_DOUBLE_EQ(quantile_set_pit(levels, quantiles, 10), 0.1);
  EXPECT_DOUBLE_EQ(quantile_set_pit(levels, quantiles, 40), 0.9);
  EXPECT_DOUBLE_EQ(quantile_set_pit(levels, quantiles, 9.99), 0.05);
  EXPECT_DOUBLE_EQ(quantile_set_pit(levels, quantiles, 1e6), 0.95);
}

TEST(QuantileSetPit, SortsCrossedQuantilesAveragesTiesAndRefusesMissingValues) {
  const std::vector<double> levels = {0.1, 0.5, 0.9};
  // Crossed 20, 10, 40 are used as 10, 20, 40: same answers as above.
  EXPECT_DOUBLE_EQ(quantile_set_pit(levels, std::vector<float>{20, 10, 40}, 15), 0.3);
  // y equal to the tied quantiles at levels 0.4 and 0.6 sits in the middle of the jump: 0.5.
  const std::vector<double> tied_levels = {0.1, 0.4, 0.6, 0.9};
  EXPECT_DOUBLE_EQ(quantile_set_pit(tied_levels, std::vector<float>{10, 20, 20, 40}, 20), 0.5);
  EXPECT_TRUE(std::isnan(quantile_set_pit(levels, std::vector<float>{10, NAN, 40}, 15)));
  EXPECT_TRUE(std::isnan(quantile_set_pit(levels, std::vector<float>{10, 20, 40}, NAN)));
  EXPECT_TRUE(std::isnan(quantile_set_pit(levels, std::vector<float>{10, 20}, 15)));
}

// Hand-worked: levels 0.25, 0.5, 0.75 at quantiles 1, 2, 3 for every case; observations 0.5, 1.5, 1.75, 3.5 and a
// missing one give PIT 0, 0.375, 0.4375, 1, so 4 bins hold 1, 2, 0, 1; at or below quantile 1, 2, 3 lie 1, 3, 3 of
// the 4 usable cases.
TEST(QuantileCalibration, CountsPitBinsAndReliabilityOfAHandWorkedCase) {
  const std::vector<double> levels = {0.25, 0.5, 0.75};
  std::vector<float> quantiles;
  for (int i = 0; i < 5; ++i) quantiles.insert(quantiles.end(), {1, 2, 3});
  const std::vector<float> observed = {0.5f, 1.5f, 1.75f, 3.5f, NAN};
  const auto c = quantile_calibration(levels, quantiles, observed, 4);
  EXPECT_EQ(c.cases, 4u);
  EXPECT_EQ(c.pit_counts, (std::vector<std::size_t>{1, 2, 0, 1}));
  ASSERT_EQ(c.reliability.size(), 3u);
  EXPECT_DOUBLE_EQ(c.reliability[0].observed, 0.25);
  EXPECT_DOUBLE_EQ(c.reliability[1].observed, 0.75);
  EXPECT_DOUBLE_EQ(c.reliability[2].observed, 0.75);
  EXPECT_DOUBLE_EQ(c.reliability[1].nominal, 0.5);
  EXPECT_THROW(quantile_calibration(levels, std::vector<float>{1, 2}, observed, 4), DataError);
  EXPECT_THROW(quantile_calibration(levels, quantiles, observed, 0), ConfigError);
}

TEST(Report, CarriesTheCautionTextExactlyOnce) {
  const std::string html = render_report(test::sample_results(120));
  EXPECT_EQ(count(html, detail::escape_html(caution_text())), 1u);
  EXPECT_EQ(html.rfind("<!DOCTYPE html>", 0), 0u);
  EXPECT_NE(html.find("</html>"), std::string::npos);
}

TEST(Report, HasOneSectionPerSiteWithItsAnchorAndIndexEntry) {
  const std::string html = render_report(test::sample_results(120));
  const auto sections = sections_of(html);
  ASSERT_EQ(sections.size(), 3u);
  EXPECT_NE(sections[0].find("id=\"site-alder-01\""), std::string::npos);
  EXPECT_NE(sections[2].find("id=\"site-c3\""), std::string::npos);
  EXPECT_NE(html.find("href=\"#site-alder-01\""), std::string::npos);
  EXPECT_EQ(count(html, "<tbody data-key="), 3u);            // the searchable index has one entry per site
  EXPECT_NE(sections[0].find(" open>"), std::string::npos);  // open_sites = 1
  EXPECT_EQ(sections[1].find(" open>"), std::string::npos);
  // The third site has no training of its own and points to the model across sites.
  EXPECT_NE(sections[2].find("href=\"#training-across-sites\""), std::string::npos);
  EXPECT_NE(html.find("id=\"training-across-sites\""), std::string::npos);
}

TEST(Report, DrawsTheExpectedChartsWithMatchingSeriesCounts) {
  const std::string html = render_report(test::sample_results(120));
  const auto charts = charts_of(html);
  EXPECT_EQ(charts.size(), test::sample_chart_count);
  for (const auto& chart : charts) EXPECT_EQ(declared_series(chart), static_cast<int>(count(chart, "class=\"series")));

  const auto sections = sections_of(html);
  ASSERT_EQ(sections.size(), 3u);
  // Site 1: 3 hindcast leads (2 bands + 3 medians + observed = 6 series), PIT (1), reliability (1),
  // loss (2 members × training and validation = 4), gradient through time (2 members).
  const auto site_charts = charts_of(sections[0]);
  ASSERT_EQ(site_charts.size(), 7u);
  const std::vector<int> expected = {6, 6, 6, 1, 1, 4, 2};
  for (std::size_t k = 0; k < expected.size(); ++k) EXPECT_EQ(declared_series(site_charts[k]), expected[k]) << k;
  EXPECT_NE(site_charts[0].find("Hindcast at lead 1 (1 day)"), std::string::npos);
  EXPECT_NE(site_charts[2].find("Hindcast at lead 3 (3 days)"), std::string::npos);
  EXPECT_NE(site_charts[0].find("90% interval"), std::string::npos);  // widest pair 0.05..0.95
  EXPECT_NE(site_charts[0].find("50% interval"), std::string::npos);  // narrowest pair 0.25..0.75
  EXPECT_EQ(charts_of(sections[2]).size(), 5u);                       // no training charts of its own
}

TEST(Report, EscapesMarkupInSiteIdsAndNames) {
  const std::string html = render_report(test::sample_results(30));
  EXPECT_NE(html.find("Mill &lt;Weir&gt; &amp; Sluice"), std::string::npos);
  EXPECT_EQ(html.find("<Weir>"), std::string::npos);
  EXPECT_EQ(html.find("b<&>"), std::string::npos);
  EXPECT_NE(html.find("id=\"site-b&lt;&amp;&gt;\""), std::string::npos);
  EXPECT_NE(html.find("href=\"#site-b%3C%26%3E\""), std::string::npos);
  EXPECT_EQ(detail::escape_html("a<b & \"c\" 'd'>"), "a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;");
}

TEST(Report, MarksTheBestValueOfEachColumnWithinASite) {
  // Pooled rows of the sample: network NSE 0.7, KGE 0.72, CRPS 1.3 against 0.4, 0.42, 1.6 for the baselines, so
  // the network holds the best NSE, KGE and CRPS of every site: 3 marks per site in the index; coverage and mean
  // width are not ranked.
  const std::string html = render_report(test::sample_results(30));
  const auto index_begin = html.find("<nav id=\"site-index\"");
  const auto index_end = html.find("</nav>");
  const std::string index = html.substr(index_begin, index_end - index_begin);
  EXPECT_EQ(count(index, "class=\"num best\""), 9u);
  const auto row_begin = index.find("<td class=\"method\">network</td>");
  const auto row_end = index.find("</tr>", row_begin);
  EXPECT_EQ(count(index.substr(row_begin, row_end - row_begin), "best"), 3u);
}

TEST(Report, ThinsLongSeriesToTheRequestedNumberOfPoints) {
  ReportOptions options;
  options.max_points_per_series = 100;
  const std::string html = render_report(test::sample_results(2000), options);
  const auto charts = charts_of(sections_of(html).at(0));  // the first is the hindcast at lead 1
  ASSERT_FALSE(charts.empty());
  const auto dots_begin = charts[0].find("class=\"series dots\"");
  const auto dots_end = charts[0].find("/>", dots_begin);
  const auto dots = count(charts[0].substr(dots_begin, dots_end - dots_begin), "h0");
  EXPECT_GT(dots, 50u);
  EXPECT_LE(dots, 100u);
  EXPECT_LT(html.size(), render_report(test::sample_results(2000)).size());
}

TEST(Report, ChartsOnlyTheRequestedLeads) {
  ReportOptions options;
  options.chart_leads = {2};
  const auto sections = sections_of(render_report(test::sample_results(30), options));
  ASSERT_EQ(sections.size(), 3u);
  EXPECT_EQ(count(sections[0], "<figure class=\"hindcast\""), 1u);
  EXPECT_NE(sections[0].find("data-lead=\"2\""), std::string::npos);
  EXPECT_EQ(sections[0].find("lead-select"), std::string::npos);  // no selector for a single lead
  options.chart_leads = {7};
  try {
    render_report(test::sample_results(30), options);
    FAIL() << "expected DataError";
  } catch (const DataError& e) {
    EXPECT_NE(std::string(e.what()).find("lead 7"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("1, 2, 3"), std::string::npos) << e.what();
  }
}

TEST(ReportOptions, ReportsEveryBrokenRuleAtOnce) {
  ReportOptions options;
  options.max_points_per_series = 3;
  options.pit_bins = 0;
  options.max_chart_leads = 0;
  options.chart_leads = {1, 1};
  try {
    options.validate();
    FAIL() << "expected ConfigError";
  } catch (const ConfigError& e) {
    const std::string message = e.what();
    for (const char* key : {"report.max_points_per_series = 3", "report.pit_bins = 0", "report.max_chart_leads = 0",
                            "report.chart_leads"}) {
      EXPECT_NE(message.find(key), std::string::npos) << message;
    }
  }
  EXPECT_NO_THROW(ReportOptions{}.validate());
}

TEST(Report, RefusesResultsWithArraysOfTheWrongLength) {
  auto results = test::sample_results(30);
  results.sites[1].observed.pop_back();
  EXPECT_THROW(render_report(results), DataError);
}

TEST(WriteReport, WritesTheRenderedDocumentAndLeavesNoTemporaryFile) {
  const auto dir = test::scratch_dir("report_write");
  const auto results = test::sample_results(40);
  write_report(dir / "report.html", results);
  std::ifstream in(dir / "report.html", std::ios::binary);
  std::stringstream text;
  text << in.rdbuf();
  EXPECT_EQ(text.str(), render_report(results));
  std::size_t files = 0;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) files += entry.is_regular_file() ? 1 : 0;
  EXPECT_EQ(files, 1u);
  EXPECT_THROW(write_report(dir / "missing-folder" / "report.html", results), IoError);
}

TEST(DecimateMinMax, KeepsExtremesAndGapsWithinTheBudget) {
  std::vector<double> x(10000), y(10000);
  for (std::size_t i = 0; i < x.size(); ++i) {
    x[i] = static_cast<double>(i);
    y[i] = std::sin(static_cast<double>(i) / 300.0);
  }
  y[5003] = 1e6;                                         // a spike
  y[7777] = -1e6;                                        // a trough
  for (std::size_t i = 2000; i < 2100; ++i) y[i] = NAN;  // longer than a bucket (10000 / 750 ≈ 13 points)
  const auto points = detail::decimate_min_max(x, y, 1500);
  EXPECT_LE(points.size(), 1500u);
  bool spike = false, trough = false, gap = false;
  for (const auto& p : points) {
    spike = spike || (p.y == 1e6 && p.x == 5003);
    trough = trough || (p.y == -1e6 && p.x == 7777);
    gap = gap || (std::isnan(p.y) && p.x >= 2000 && p.x < 2100);
  }
  EXPECT_TRUE(spike);
  EXPECT_TRUE(trough);
  EXPECT_TRUE(gap);
  for (std::size_t k = 1; k < points.size(); ++k) EXPECT_LT(points[k - 1].x, points[k].x);
  // Short series pass through untouched.
  const auto short_points = detail::decimate_min_max(std::span(x).first(50), std::span(y).first(50), 1500);
  ASSERT_EQ(short_points.size(), 50u);
  EXPECT_EQ(short_points[49].y, y[49]);
}

}  // namespace
}  // namespace libseq::pipeline
