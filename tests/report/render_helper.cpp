// Helper of the headless-browser test (tests/report/render_check.sh).
//   render_helper write DIR        writes DIR/results.h5 from the synthetic sample, reads it back and writes
//                                  DIR/report.html from what was read (the path `runnel report` takes).
//   render_helper check DOM N      checks a DOM that chromium dumped after the page's script ran: the script
//                                  reported "ok", there are N charts, each chart's data-series equals the number
//                                  of its elements of class "series", and each chart drew something.
// Exit status 0 when everything holds; otherwise 1 with one line per failed check.

#include <filesystem>
#include <fstream>
#include <iostream>
#include <sstream>
#include <string>

#include "libseq/io/results.hpp"
#include "libseq/pipeline/report.hpp"
#include "report/sample_results.hpp"

namespace {

std::size_t count(const std::string& text, const std::string& needle) {
  std::size_t n = 0;
  for (auto pos = text.find(needle); pos != std::string::npos; pos = text.find(needle, pos + needle.size())) ++n;
  return n;
}

int write(const std::filesystem::path& dir) {
  std::filesystem::create_directories(dir);
  // Longer than the default thinning budget (1500 points), so the browser draws thinned series too.
  libseq::io::write_results_hdf5(dir / "results.h5", libseq::test::sample_results(2400));
  const auto results = libseq::io::read_results_hdf5(dir / "results.h5");
  libseq::pipeline::write_report(dir / "report.html", results);
  std::cout << (dir / "report.html").string() << "\n";
  return 0;
}

int check(const std::filesystem::path& dom_path, std::size_t expected_charts) {
  std::ifstream in(dom_path, std::ios::binary);
  std::stringstream buffer;
  buffer << in.rdbuf();
  const std::string dom = buffer.str();
  int failures = 0;
  auto fail = [&](const std::string& message) {
    std::cout << "FAIL: " << message << "\n";
    ++failures;
  };
  const auto body = dom.find("<body");
  const auto body_end = body == std::string::npos ? body : dom.find('>', body);
  if (body == std::string::npos) {
    fail("no <body> in the dumped DOM");
  } else {
    const std::string tag = dom.substr(body, body_end - body);
    if (tag.find("data-ready=\"ok\"") == std::string::npos) fail("the page script did not report ok: " + tag);
  }
  std::size_t charts = 0;
  for (auto pos = dom.find("<svg class=\"chart\""); pos != std::string::npos;
       pos = dom.find("<svg class=\"chart\"", pos + 1)) {
    ++charts;
    const std::string chart = dom.substr(pos, dom.find("</svg>", pos) - pos);
    const auto attr = chart.find("data-series=\"");
    const int declared = attr == std::string::npos ? -1 : std::stoi(chart.substr(attr + 13));
    const auto found = static_cast<int>(count(chart, "class=\"series"));
    if (declared != found || declared < 1) {
      fail("chart " + std::to_string(charts) + " declares " + std::to_string(declared) + " series, has " +
           std::to_string(found));
    }
    if (count(chart, " d=\"M") < static_cast<std::size_t>(std::max(found, 1))) {
      fail("chart " + std::to_string(charts) + " has a series with an empty path");
    }
  }
  if (charts != expected_charts) {
    fail("expected " + std::to_string(expected_charts) + " charts, found " + std::to_string(charts));
  }
  std::cout << "checked " << charts << " charts in " << dom_path.string() << ": " << failures << " failures\n";
  return failures == 0 ? 0 : 1;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    const std::string mode = argc > 1 ? argv[1] : "";
    if (mode == "write" && argc == 3) return write(argv[2]);
    if (mode == "check" && argc == 4) return check(argv[2], std::stoul(argv[3]));
    if (mode == "expected-charts" && argc == 2) {
      std::cout << libseq::test::sample_chart_count << "\n";
      return 0;
    }
  } catch (const std::exception& e) {
    std::cerr << "render_helper: " << e.what() << "\n";
    return 1;
  }
  std::cerr << "usage: render_helper write DIR | check DOM_FILE CHART_COUNT | expected-charts\n";
  return 2;
}
