#include "pipeline/report_charts_impl.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

#include "libseq/data/time_axis.hpp"

namespace libseq::pipeline::detail {

namespace {

constexpr double margin_left = 66;
constexpr double margin_right = 18;
constexpr double margin_top = 30;
constexpr double margin_bottom = 44;
constexpr double legend_height = 24;

// Coordinates with one decimal: finer than a screen pixel at the sizes drawn, and it keeps the file small.
std::string coordinate(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.1f", value);
  std::string text = buffer;
  if (text.size() > 2 && text.compare(text.size() - 2, 2, ".0") == 0) text.resize(text.size() - 2);
  if (text == "-0") text = "0";
  return text;
}

std::string fraction(double value) {
  char buffer[16];
  std::snprintf(buffer, sizeof buffer, "%.2g", value);
  return buffer;
}

// Tick positions at 1, 2 or 5 times a power of ten, about `target` of them across [lo, hi].
std::vector<double> nice_ticks(double lo, double hi, int target) {
  std::vector<double> ticks;
  if (!(hi > lo)) return {lo};
  const double raw = (hi - lo) / target;
  const double magnitude = std::pow(10.0, std::floor(std::log10(raw)));
  double step = magnitude;
  for (double factor : {1.0, 2.0, 5.0, 10.0}) {
    step = factor * magnitude;
    if (step >= raw) break;
  }
  for (double t = std::ceil(lo / step) * step; t <= hi + step * 1e-9; t += step)
    ticks.push_back(std::abs(t) < step * 1e-9 ? 0 : t);
  return ticks;
}

std::string tick_text(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.6g", value);
  return buffer;
}

std::string time_text(double seconds, double span_seconds) {
  const std::string iso = data::format_iso8601(static_cast<data::UtcSeconds>(std::llround(seconds)));
  // Dates alone for spans of more than a few days; month, day and clock time for shorter ones.
  if (span_seconds > 4 * 86400.0) return iso.substr(0, 10);
  return iso.substr(5, 5) + " " + iso.substr(11, 5);
}

}  // namespace

std::string escape_html(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

std::string format_number(double value) {
  if (std::isnan(value)) return "\u2013";
  if (std::isinf(value)) return value > 0 ? "\u221e" : "\u2212\u221e";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.4g", value);
  return buffer;
}

std::vector<Point> decimate_min_max(std::span<const double> x, std::span<const double> y, std::size_t max_points) {
  const std::size_t n = std::min(x.size(), y.size());
  std::vector<Point> out;
  if (n <= max_points || max_points < 2) {
    out.reserve(n);
    for (std::size_t i = 0; i < n; ++i) out.push_back({x[i], y[i]});
    return out;
  }
  const std::size_t buckets = max_points / 2;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  out.reserve(2 * buckets);
  for (std::size_t b = 0; b < buckets; ++b) {
    const std::size_t begin = b * n / buckets;
    const std::size_t end = (b + 1) * n / buckets;
    std::size_t low = end, high = end;
    for (std::size_t i = begin; i < end; ++i) {
      if (!std::isfinite(y[i])) continue;
      if (low == end || y[i] < y[low]) low = i;
      if (high == end || y[i] > y[high]) high = i;
    }
    if (low == end) {
      out.push_back({x[begin], nan});
    } else if (low == high) {
      out.push_back({x[low], y[low]});
    } else {
      const std::size_t first = std::min(low, high), second = std::max(low, high);
      out.push_back({x[first], y[first]});
      out.push_back({x[second], y[second]});
    }
  }
  return out;
}

double SvgChart::px(double x) const {
  const double span = frame_.x_max - frame_.x_min;
  const double plot = frame_.width - margin_left - margin_right;
  return margin_left + (span > 0 ? (x - frame_.x_min) / span : 0.5) * plot;
}

double SvgChart::py(double y) const {
  double lo = frame_.y_min, hi = frame_.y_max, v = y;
  if (frame_.y_log) {
    lo = std::log10(lo);
    hi = std::log10(hi);
    v = std::log10(y);
  }
  const double plot = frame_.height - margin_top - margin_bottom - legend_height;
  const double span = hi - lo;
  return margin_top + plot - (span > 0 ? (v - lo) / span : 0.5) * plot;
}

// Series are drawn inside <g transform="scale(0.1)"> in tenths of a user unit, as whole numbers and relative
// moves: "M812 2490l6-31 6 12..." costs about 6 bytes per point instead of about 12 for absolute decimals, which is
// what keeps a report of hundreds of long series small. Differences of rounded integers are exact, so no error
// builds up along a path.
long SvgChart::tx(double x) const { return std::lround(px(x) * series_scale); }
long SvgChart::ty(double y) const { return std::lround(py(y) * series_scale); }

namespace {

// A coordinate pair in path syntax; a minus sign separates numbers by itself.
void append_pair(std::string& d, long a, long b) {
  d += std::to_string(a);
  if (b >= 0) d += ' ';
  d += std::to_string(b);
}

}  // namespace

bool SvgChart::usable(const Point& p) const {
  return std::isfinite(p.y) && std::isfinite(p.x) && (!frame_.y_log || p.y > 0);
}

std::string SvgChart::path_of(const std::vector<Point>& points, bool dots) const {
  std::string d;
  bool pen_down = false;
  long last_x = 0, last_y = 0;
  for (const Point& p : points) {
    if (!usable(p)) {
      pen_down = false;
      continue;
    }
    const long x = tx(p.x), y = ty(p.y);
    if (dots) {
      // Each dot is a zero-length segment with a round cap; "h0" ends the implicit repetition, so every dot after
      // the first starts with a relative move.
      if (d.empty()) {
        d += 'M';
        append_pair(d, x, y);
      } else {
        d += 'm';
        append_pair(d, x - last_x, y - last_y);
      }
      d += "h0";
    } else if (!pen_down) {
      d += 'M';
      append_pair(d, x, y);
      d += 'l';
      pen_down = true;
    } else {
      if (d.back() != 'l' && x - last_x >= 0) d += ' ';
      append_pair(d, x - last_x, y - last_y);
    }
    last_x = x;
    last_y = y;
  }
  // A sub-path that is only "Mx yl" (a single point) is valid but draws nothing; drop the dangling command letter.
  std::string cleaned;
  cleaned.reserve(d.size());
  for (std::size_t i = 0; i < d.size(); ++i) {
    if (d[i] == 'l' && (i + 1 == d.size() || d[i + 1] == 'M')) continue;
    cleaned += d[i];
  }
  return cleaned;
}

void SvgChart::add_legend(const std::string& colour, const std::string& label, const std::string& kind,
                          double opacity) {
  if (label.empty()) return;  // further members of a family share the first one's legend entry
  legend_.push_back({colour, label, kind, opacity});
}

void SvgChart::add_line(const std::vector<Point>& points, const std::string& colour, const std::string& label,
                        bool dashed, double opacity) {
  body_ += "<path class=\"series line\" data-label=\"" + escape_html(label) + "\" fill=\"none\" stroke=\"" + colour +
           "\" stroke-width=\"16\" stroke-linejoin=\"round\"" + (dashed ? " stroke-dasharray=\"50 30\"" : "") +
           (opacity < 1 ? " stroke-opacity=\"" + fraction(opacity) + "\"" : "") + " d=\"" + path_of(points, false) +
           "\"/>\n";
  ++series_count_;
  add_legend(colour, label, dashed ? "dash" : "line");
}

void SvgChart::add_dots(const std::vector<Point>& points, const std::string& colour, const std::string& label) {
  body_ += "<path class=\"series dots\" data-label=\"" + escape_html(label) + "\" fill=\"none\" stroke=\"" + colour +
           "\" stroke-width=\"32\" stroke-linecap=\"round\" d=\"" + path_of(points, true) + "\"/>\n";
  ++series_count_;
  add_legend(colour, label, "dot");
}

void SvgChart::add_band(const std::vector<Point>& upper, const std::vector<Point>& lower, const std::string& colour,
                        double opacity, const std::string& label) {
  // One closed sub-path per stretch where both edges are usable, so a gap in the data is a gap in the band.
  std::string d;
  const std::size_t n = std::min(upper.size(), lower.size());
  std::size_t i = 0;
  auto both = [&](std::size_t k) { return usable(upper[k]) && usable(lower[k]); };
  while (i < n) {
    if (!both(i)) {
      ++i;
      continue;
    }
    std::size_t j = i;
    while (j < n && both(j)) ++j;
    long last_x = tx(upper[i].x), last_y = ty(upper[i].y);
    d += 'M';
    append_pair(d, last_x, last_y);
    d += 'l';
    auto step = [&](const Point& p) {
      const long x = tx(p.x), y = ty(p.y);
      if (d.back() != 'l' && x - last_x >= 0) d += ' ';
      append_pair(d, x - last_x, y - last_y);
      last_x = x;
      last_y = y;
    };
    for (std::size_t k = i + 1; k < j; ++k) step(upper[k]);
    for (std::size_t k = j; k-- > i;) step(lower[k]);
    d += 'Z';
    i = j;
  }
  body_ += "<path class=\"series band\" data-label=\"" + escape_html(label) + "\" stroke=\"none\" fill=\"" + colour +
           "\" fill-opacity=\"" + fraction(opacity) + "\" d=\"" + d + "\"/>\n";
  ++series_count_;
  // Swatches are small, so they are drawn stronger than the band itself, keeping the bands' order of strength.
  add_legend(colour, label, "band", std::min(1.0, 1.6 * opacity));
}

void SvgChart::add_bars(const std::vector<double>& heights, const std::string& colour, const std::string& label) {
  std::string d;
  const double width = heights.empty() ? 0 : (frame_.x_max - frame_.x_min) / static_cast<double>(heights.size());
  for (std::size_t b = 0; b < heights.size(); ++b) {
    if (!std::isfinite(heights[b])) continue;
    const long left = tx(frame_.x_min + b * width) + 10, right = tx(frame_.x_min + (b + 1) * width) - 10;
    const long top = ty(heights[b]), bottom = ty(std::max(frame_.y_min, 0.0));
    d += "M" + std::to_string(left) + " " + std::to_string(bottom) + "V" + std::to_string(top) + "H" +
         std::to_string(right) + "V" + std::to_string(bottom) + "Z";
  }
  body_ += "<path class=\"series bars\" data-label=\"" + escape_html(label) + "\" stroke=\"none\" fill=\"" + colour +
           "\" d=\"" + d + "\"/>\n";
  ++series_count_;
  add_legend(colour, label, "band");
}

void SvgChart::add_markers(const std::vector<Point>& points, const std::string& colour, const std::string& label) {
  body_ += "<g class=\"series markers\" data-label=\"" + escape_html(label) + "\"><path fill=\"none\" stroke=\"" +
           colour + "\" stroke-width=\"14\" d=\"" + path_of(points, false) + "\"/><path fill=\"none\" stroke=\"" +
           colour + "\" stroke-width=\"70\" stroke-linecap=\"round\" d=\"" + path_of(points, true) + "\"/></g>\n";
  ++series_count_;
  add_legend(colour, label, "line");
}

void SvgChart::add_reference(double x0, double y0, double x1, double y1, const std::string& label) {
  references_ += "<line class=\"reference\" x1=\"" + coordinate(px(x0)) + "\" y1=\"" + coordinate(py(y0)) + "\" x2=\"" +
                 coordinate(px(x1)) + "\" y2=\"" + coordinate(py(y1)) +
                 "\" stroke=\"#8a8f98\" stroke-width=\"1.2\" stroke-dasharray=\"2 3\"/>\n";
  add_legend("#8a8f98", label, "dash");
}

std::string SvgChart::render() const {
  const double plot_bottom = frame_.height - margin_bottom - legend_height;
  const double plot_right = frame_.width - margin_right;
  std::string svg = "<svg class=\"chart\" data-series=\"" + std::to_string(series_count_) +
                    "\" xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 " + coordinate(frame_.width) + " " +
                    coordinate(frame_.height) + "\" role=\"img\" aria-label=\"" + escape_html(frame_.title) + "\">\n";
  svg += "<title>" + escape_html(frame_.title) + "</title>\n";
  svg += "<text class=\"chart-title\" x=\"" + coordinate(margin_left) + "\" y=\"18\">" + escape_html(frame_.title) +
         "</text>\n";

  // Grid and tick labels.
  std::string grid;
  std::vector<double> y_ticks;
  if (frame_.y_log) {
    const int lo = static_cast<int>(std::floor(std::log10(frame_.y_min)));
    const int hi = static_cast<int>(std::ceil(std::log10(frame_.y_max)));
    const int stride = std::max(1, (hi - lo) / 6);
    for (int e = lo; e <= hi; e += stride) {
      const double v = std::pow(10.0, e);
      if (v >= frame_.y_min * 0.999 && v <= frame_.y_max * 1.001) y_ticks.push_back(v);
    }
  } else {
    y_ticks = nice_ticks(frame_.y_min, frame_.y_max, 5);
  }
  for (double t : y_ticks) {
    const std::string y = coordinate(py(t));
    grid += "<line x1=\"" + coordinate(margin_left) + "\" y1=\"" + y + "\" x2=\"" + coordinate(plot_right) +
            "\" y2=\"" + y + "\"/>";
    char label[32];
    if (frame_.y_log) {
      std::snprintf(label, sizeof label, "%g", t);
    } else {
      std::snprintf(label, sizeof label, "%s", tick_text(t).c_str());
    }
    svg += "<text class=\"tick\" text-anchor=\"end\" x=\"" + coordinate(margin_left - 6) + "\" y=\"" + y +
           "\" dy=\"0.32em\">" + escape_html(label) + "</text>";
  }
  std::vector<double> x_ticks;
  if (frame_.x_format == AxisFormat::utc_time) {
    for (int k = 0; k <= 5; ++k) x_ticks.push_back(frame_.x_min + (frame_.x_max - frame_.x_min) * k / 5.0);
  } else {
    x_ticks = nice_ticks(frame_.x_min, frame_.x_max, 6);
  }
  for (std::size_t k = 0; k < x_ticks.size(); ++k) {
    const double t = x_ticks[k];
    const std::string x = coordinate(px(t));
    grid += "<line x1=\"" + x + "\" y1=\"" + coordinate(margin_top) + "\" x2=\"" + x + "\" y2=\"" +
            coordinate(plot_bottom) + "\"/>";
    const std::string text =
        frame_.x_format == AxisFormat::utc_time ? time_text(t, frame_.x_max - frame_.x_min) : tick_text(t);
    // The outermost time labels are anchored inwards so that they stay inside the chart.
    const char* anchor = "middle";
    if (frame_.x_format == AxisFormat::utc_time && k == 0) anchor = "start";
    if (frame_.x_format == AxisFormat::utc_time && k + 1 == x_ticks.size()) anchor = "end";
    svg += "<text class=\"tick\" text-anchor=\"" + std::string(anchor) + "\" x=\"" + x + "\" y=\"" +
           coordinate(plot_bottom + 16) + "\">" + escape_html(text) + "</text>";
  }
  svg += "\n<g class=\"grid\">" + grid + "</g>\n";
  svg += "<rect class=\"frame\" x=\"" + coordinate(margin_left) + "\" y=\"" + coordinate(margin_top) + "\" width=\"" +
         coordinate(plot_right - margin_left) + "\" height=\"" + coordinate(plot_bottom - margin_top) + "\"/>\n";
  svg += "<text class=\"axis-label\" text-anchor=\"middle\" x=\"" + coordinate((margin_left + plot_right) / 2) +
         "\" y=\"" + coordinate(plot_bottom + 34) + "\">" + escape_html(frame_.x_label) + "</text>\n";
  svg += "<text class=\"axis-label\" text-anchor=\"middle\" transform=\"translate(14 " +
         coordinate((margin_top + plot_bottom) / 2) + ") rotate(-90)\">" + escape_html(frame_.y_label) + "</text>\n";

  svg += "<g class=\"plot\" transform=\"scale(0.1)\">\n" + body_ + "</g>\n" + references_;

  // Legend: one row along the bottom.
  double x = margin_left;
  const double y = frame_.height - 10;
  svg += "<g class=\"legend\">";
  for (const LegendItem& item : legend_) {
    const std::string sx = coordinate(x), sy = coordinate(y - 4);
    if (item.kind == "band") {
      svg += "<rect x=\"" + sx + "\" y=\"" + coordinate(y - 9) + "\" width=\"16\" height=\"9\" fill=\"" + item.colour +
             "\" fill-opacity=\"" + fraction(item.opacity) + "\"/>";
    } else if (item.kind == "dot") {
      svg += "<circle cx=\"" + coordinate(x + 8) + "\" cy=\"" + sy + "\" r=\"2.5\" fill=\"" + item.colour + "\"/>";
    } else {
      svg += "<line x1=\"" + sx + "\" y1=\"" + sy + "\" x2=\"" + coordinate(x + 16) + "\" y2=\"" + sy + "\" stroke=\"" +
             item.colour + "\" stroke-width=\"2\"" + (item.kind == "dash" ? " stroke-dasharray=\"4 2\"" : "") + "/>";
    }
    svg += "<text x=\"" + coordinate(x + 21) + "\" y=\"" + coordinate(y) + "\">" + escape_html(item.label) + "</text>";
    x += 30 + 6.2 * static_cast<double>(item.label.size());
  }
  svg += "</g>\n</svg>\n";
  return svg;
}

}  // namespace libseq::pipeline::detail
