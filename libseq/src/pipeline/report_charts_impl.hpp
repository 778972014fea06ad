#pragma once
// Private to the report: a small SVG chart writer (axes, grid, legend, series), min/max-preserving thinning of long
// series and HTML escaping. Every chart is an <svg class="chart" data-series="N"> whose N plotted series are the
// elements with class "series"; reference lines and axes carry other classes so that tests can count series.

#include <cstddef>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace libseq::pipeline::detail {

/// Escapes & < > " ' for HTML text and attribute values.
std::string escape_html(std::string_view text);

/// Compact decimal text of a number for tables: 4 significant digits, "–" for NaN.
std::string format_number(double value);

/// A plotted point; y NaN marks a gap (the line is broken there).
struct Point {
  double x = 0;
  double y = 0;
};

/// Points (x[i], y[i]) with NaN y kept as gaps; when there are more than `max_points`, the index range is cut into
/// max_points / 2 equal buckets and each bucket keeps its smallest and largest finite y in index order (a bucket
/// with no finite y becomes one gap). Extremes are kept, so peaks and troughs survive the thinning.
std::vector<Point> decimate_min_max(std::span<const double> x, std::span<const double> y, std::size_t max_points);

/// How an axis labels its ticks.
enum class AxisFormat { number, utc_time };

/// Description of a chart's frame and axes.
struct ChartFrame {
  std::string title;  ///< shown in the SVG <title> and as the heading inside the chart
  std::string x_label;
  std::string y_label;
  AxisFormat x_format = AxisFormat::number;
  bool y_log = false;  ///< log10 y axis (values <= 0 are dropped)
  double width = 960;  ///< SVG user units
  double height = 300;
  double x_min = 0, x_max = 1, y_min = 0, y_max = 1;  ///< data range (fit_range widens it from data)
};

/// One chart under construction. Add series, then render().
class SvgChart {
 public:
  explicit SvgChart(ChartFrame frame) : frame_(std::move(frame)) {}

  /// A polyline through the points, broken at gaps. `dashed` draws it dashed. An empty label adds no legend entry
  /// (further members of one family share the first one's entry); the same holds for every add_* below.
  void add_line(const std::vector<Point>& points, const std::string& colour, const std::string& label,
                bool dashed = false, double opacity = 1.0);
  /// One dot per finite point (drawn as zero-length round-capped segments: small in the file).
  void add_dots(const std::vector<Point>& points, const std::string& colour, const std::string& label);
  /// A shaded band between two curves (upper left to right, then lower right to left), split at gaps.
  void add_band(const std::vector<Point>& upper, const std::vector<Point>& lower, const std::string& colour,
                double opacity, const std::string& label);
  /// Vertical bars of equal width from x_min..x_max, one per value, bottom at 0.
  void add_bars(const std::vector<double>& heights, const std::string& colour, const std::string& label);
  /// Markers with a connecting line (reliability diagram).
  void add_markers(const std::vector<Point>& points, const std::string& colour, const std::string& label);
  /// A reference line from (x0, y0) to (x1, y1); not a series.
  void add_reference(double x0, double y0, double x1, double y1, const std::string& label);

  /// Number of series added so far.
  std::size_t series_count() const { return series_count_; }
  /// The <svg> element.
  std::string render() const;

 private:
  double px(double x) const;
  double py(double y) const;
  long tx(double x) const;  // series coordinates, in tenths of a user unit
  long ty(double y) const;
  bool usable(const Point& p) const;
  std::string path_of(const std::vector<Point>& points, bool dots) const;
  static constexpr double series_scale = 10;
  void add_legend(const std::string& colour, const std::string& label, const std::string& kind, double opacity = 1);

  ChartFrame frame_;
  std::string body_;
  std::string references_;
  struct LegendItem {
    std::string colour, label, kind;
    double opacity = 1;
  };
  std::vector<LegendItem> legend_;
  std::size_t series_count_ = 0;
};

}  // namespace libseq::pipeline::detail
