#include "libseq/pipeline/inspect.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <map>
#include <memory>

#include "support/paths.hpp"

namespace libseq::pipeline {

namespace {

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

// A small JSON reader following the grammar of RFC 8259 (sections 2-7), strict enough to reject what a real
// parser would; values keep only what the checks below need.
struct Json {
  enum class Kind { null, boolean, number, string, array, object } kind = Kind::null;
  bool boolean = false;
  double number = 0;
  std::string string;
  std::vector<Json> array;
  std::map<std::string, Json> object;
  const Json& operator[](const std::string& key) const { return object.at(key); }
};

class JsonParser {
 public:
  explicit JsonParser(const std::string& text) : text_(text) {}
  Json parse() {
    Json value = parse_value();
    skip_space();
    if (pos_ != text_.size()) fail("trailing text");
    return value;
  }

 private:
  [[noreturn]] void fail(const std::string& why) {
    throw std::runtime_error("invalid JSON at byte " + std::to_string(pos_) + ": " + why);
  }
  void skip_space() {
    while (pos_ < text_.size() &&
           (text_[pos_] == ' ' || text_[pos_] == '\n' || text_[pos_] == '\r' || text_[pos_] == '\t'))
      ++pos_;
  }
  void expect(char c) {
    skip_space();
    if (pos_ >= text_.size() || text_[pos_] != c) fail(std::string("expected '") + c + "'");
    ++pos_;
  }
  bool literal(const char* word) {
    const std::string w(word);
    if (text_.compare(pos_, w.size(), w) != 0) return false;
    pos_ += w.size();
    return true;
  }
  Json parse_value() {
    skip_space();
    if (pos_ >= text_.size()) fail("value expected");
    Json value;
    const char c = text_[pos_];
    if (c == '{') {
      value.kind = Json::Kind::object;
      ++pos_;
      skip_space();
      if (text_[pos_] == '}') {
        ++pos_;
        return value;
      }
      while (true) {
        skip_space();
        std::string key = parse_string();
        expect(':');
        if (!value.object.emplace(key, parse_value()).second) fail("duplicate key " + key);
        skip_space();
        if (pos_ < text_.size() && text_[pos_] == ',') {
          ++pos_;
          continue;
        }
        expect('}');
        return value;
      }
    }
    if (c == '[') {
      value.kind = Json::Kind::array;
      ++pos_;
      skip_space();
      if (text_[pos_] == ']') {
        ++pos_;
        return value;
      }
      while (true) {
        value.array.push_back(parse_value());
        skip_space();
        if (pos_ < text_.size() && text_[pos_] == ',') {
          ++pos_;
          continue;
        }
        expect(']');
        return value;
      }
    }
    if (c == '"') {
      value.kind = Json::Kind::string;
      value.string = parse_string();
      return value;
    }
    if (literal("true") || literal("false")) {
      value.kind = Json::Kind::boolean;
      value.boolean = text_[pos_ - 1] == 'e' && text_[pos_ - 2] == 'u';
      return value;
    }
    if (literal("null")) return value;
    // number = [ minus ] int [ frac ] [ exp ]
    const std::size_t start = pos_;
    if (text_[pos_] == '-') ++pos_;
    if (pos_ >= text_.size() || !std::isdigit(static_cast<unsigned char>(text_[pos_]))) fail("number expected");
    if (text_[pos_] == '0') {
      ++pos_;
    } else {
      while (pos_ < text_.size() && std::isdigit(static_cast<unsigned char>(text_[pos_]))) ++pos_;
    }
    if (pos_ < text_.size() && text_[pos_] == '.') {
      ++pos_;
      if (pos_ >= text_.size() || !std::isdigit(static_cast<unsigned char>(text_[pos_]))) fail("digit after '.'");
      while (pos_ < text_.size() && std::isdigit(static_cast<unsigned char>(text_[pos_]))) ++pos_;
    }
    if (pos_ < text_.size() && (text_[pos_] == 'e' || text_[pos_] == 'E')) {
      ++pos_;
      if (pos_ < text_.size() && (text_[pos_] == '+' || text_[pos_] == '-')) ++pos_;
      if (pos_ >= text_.size() || !std::isdigit(static_cast<unsigned char>(text_[pos_]))) fail("digit in exponent");
      while (pos_ < text_.size() && std::isdigit(static_cast<unsigned char>(text_[pos_]))) ++pos_;
    }
    value.kind = Json::Kind::number;
    value.number = std::stod(text_.substr(start, pos_ - start));
    return value;
  }
  std::string parse_string() {
    if (pos_ >= text_.size() || text_[pos_] != '"') fail("string expected");
    ++pos_;
    std::string out;
    while (true) {
      if (pos_ >= text_.size()) fail("unterminated string");
      const auto c = static_cast<unsigned char>(text_[pos_++]);
      if (c == '"') return out;
      if (c < 0x20) fail("unescaped control character");
      if (c != '\\') {
        out += static_cast<char>(c);
        continue;
      }
      const char e = text_[pos_++];
      switch (e) {
        case '"':
          out += '"';
          break;
        case '\\':
          out += '\\';
          break;
        case '/':
          out += '/';
          break;
        case 'b':
          out += '\b';
          break;
        case 'f':
          out += '\f';
          break;
        case 'n':
          out += '\n';
          break;
        case 'r':
          out += '\r';
          break;
        case 't':
          out += '\t';
          break;
        case 'u': {
          const unsigned code = static_cast<unsigned>(std::stoul(text_.substr(pos_, 4), nullptr, 16));
          pos_ += 4;
          if (code >= 0x80) fail("this checker only needs \\u escapes below U+0080");
          out += static_cast<char>(code);
          break;
        }
        default:
          fail("bad escape");
      }
    }
  }
  const std::string& text_;
  std::size_t pos_ = 0;
};

std::filesystem::path write_file(const std::filesystem::path& dir, const std::string& name, const std::string& text) {
  std::ofstream(dir / name, std::ios::binary) << text;
  return dir / name;
}

// Two files that read and one that does not: eight daily steps, one of eight q values missing at S1
// (12.5 %), a site that is all missing (skipped with a warning), a name needing JSON escapes.
struct Inputs {
  std::filesystem::path good;
  std::filesystem::path long_form;
  std::filesystem::path missing;
};

Inputs write_inputs(const std::string& test) {
  const auto dir = test::scratch_dir("inspect/" + test);
  std::string one_site =
      "# site_id: S1\n# name: Quote \" back\\slash \xC3\xA9t\xC3\xA9 tab\there\n# latitude: 47.5\n"
      "# units q: m3 s-1\n# standard_name q: water_volume_transport_in_river_channel\ntime,q,pr\n";
  for (int d = 1; d <= 8; ++d) {
    one_site += "2003-04-0" + std::to_string(d) + "," + (d == 3 ? std::string() : std::to_string(d)) + ",0.5\n";
  }
  Inputs inputs;
  inputs.good = write_file(dir, "s1.csv", one_site);
  inputs.long_form = write_file(dir, "long.csv",
                                "site,time,q\nA,2003-04-01T00:00Z,1\nA,2003-04-01T01:00Z,\nB,2003-04-01T00:00Z,NA\n"
                                "B,2003-04-01T01:00Z,\n");
  inputs.missing = dir / "no_such_file.nc";
  return inputs;
}

}  // namespace

TEST(Inspect, SummarisesGoodFilesAndRecordsTheFailedOneWithoutThrowing) {
  const Inputs in = write_inputs("summary");
  const InspectReport report = inspect_files({in.good, in.missing, in.long_form});
  ASSERT_EQ(report.files.size(), 3u);
  EXPECT_EQ(report.failed_count(), 1u);

  const FileInspection& good = report.files[0];
  ASSERT_TRUE(good.ok()) << good.error;
  EXPECT_EQ(good.format, io::FileFormat::csv);
  EXPECT_EQ(good.time_start, "2003-04-01T00:00:00Z");
  EXPECT_EQ(good.time_end, "2003-04-08T00:00:00Z");
  EXPECT_EQ(good.step_seconds, 86400);
  EXPECT_EQ(good.step, "1 day");
  EXPECT_EQ(good.time_count, 8u);
  ASSERT_EQ(good.variables.size(), 2u);
  EXPECT_EQ(good.variables[0].units, "m3 s-1");
  EXPECT_EQ(good.variables[0].standard_name, "water_volume_transport_in_river_channel");
  ASSERT_EQ(good.sites.size(), 1u);
  EXPECT_DOUBLE_EQ(good.sites[0].missing_fraction[0], 1.0 / 8.0);
  EXPECT_DOUBLE_EQ(good.sites[0].missing_fraction[1], 0.0);
  EXPECT_DOUBLE_EQ(good.sites[0].latitude, 47.5);
  EXPECT_TRUE(std::isnan(good.sites[0].longitude));

  const FileInspection& missing = report.files[1];
  EXPECT_FALSE(missing.ok());
  EXPECT_EQ(missing.error_kind, "io");
  EXPECT_TRUE(contains(missing.error, in.missing.string())) << missing.error;
  EXPECT_FALSE(missing.format.has_value());

  const FileInspection& long_form = report.files[2];
  ASSERT_TRUE(long_form.ok()) << long_form.error;
  ASSERT_EQ(long_form.sites.size(), 1u);
  EXPECT_EQ(long_form.step, "1 hour");
  ASSERT_EQ(long_form.warnings.size(), 1u);
  EXPECT_TRUE(contains(long_form.warnings[0], "site 'B' skipped"));
}

TEST(Inspect, TextReportShowsTablesErrorsAndWarnings) {
  const Inputs in = write_inputs("text");
  const std::string text = inspect_files({in.good, in.missing, in.long_form}).to_text();
  EXPECT_TRUE(contains(text, "file: " + in.good.string() + "\n  format: csv\n")) << text;
  EXPECT_TRUE(contains(text, "2003-04-01T00:00:00Z .. 2003-04-08T00:00:00Z, step 1 day, 8 steps")) << text;
  EXPECT_TRUE(contains(text, "    name  units   standard_name\n")) << text;
  EXPECT_TRUE(contains(text, "    q     m3 s-1  water_volume_transport_in_river_channel\n")) << text;
  EXPECT_TRUE(contains(text, "    pr    -       -\n")) << text;
  // The tab in the site name is shown as a space so that the columns stay aligned; é counts as one column.
  EXPECT_TRUE(contains(text, "    id  name                             latitude  longitude      q    pr\n")) << text;
  EXPECT_TRUE(
      contains(text, "    S1  Quote \" back\\slash \xC3\xA9t\xC3\xA9 tab here   47.5000          -  12.5%  0.0%\n"))
      << text;
  EXPECT_TRUE(contains(text, "  error (io): " + in.missing.string() + ": file not found\n")) << text;
  EXPECT_TRUE(contains(text, "site 'B' skipped")) << text;
  EXPECT_TRUE(contains(text, "3 files inspected, 1 could not be read\nCAUTION:")) << text;
}

TEST(Inspect, JsonReportParsesAndCarriesEveryField) {
  const Inputs in = write_inputs("json");
  const std::string text = inspect_files({in.good, in.missing, in.long_form}).to_json();
  Json json;
  ASSERT_NO_THROW(json = JsonParser(text).parse()) << text;
  EXPECT_EQ(json["file_count"].number, 3);
  EXPECT_EQ(json["failed_count"].number, 1);
  EXPECT_TRUE(contains(json["caution"].string, "CAUTION"));
  const auto& files = json["files"].array;
  ASSERT_EQ(files.size(), 3u);
  const Json& good = files[0];
  EXPECT_TRUE(good["ok"].boolean);
  EXPECT_EQ(good["path"].string, in.good.string());
  EXPECT_EQ(good["format"].string, "csv");
  EXPECT_EQ(good["time"]["start"].string, "2003-04-01T00:00:00Z");
  EXPECT_EQ(good["time"]["step_seconds"].number, 86400);
  EXPECT_EQ(good["time"]["count"].number, 8);
  EXPECT_EQ(good["variables"].array.at(0)["standard_name"].string, "water_volume_transport_in_river_channel");
  const Json& site = good["sites"].array.at(0);
  EXPECT_EQ(site["name"].string, "Quote \" back\\slash \xC3\xA9t\xC3\xA9 tab\there");  // escapes survive
  EXPECT_EQ(site["latitude"].number, 47.5);
  EXPECT_EQ(site["longitude"].kind, Json::Kind::null);  // NaN is null
  EXPECT_EQ(site["missing_fraction"]["q"].number, 0.125);
  const Json& missing = files[1];
  EXPECT_FALSE(missing["ok"].boolean);
  EXPECT_EQ(missing["format"].kind, Json::Kind::null);
  EXPECT_EQ(missing["error_kind"].string, "io");
  EXPECT_TRUE(contains(missing["error"].string, in.missing.string()));
  EXPECT_EQ(files[2]["warnings"].array.size(), 1u);
}

TEST(Inspect, JsonReplacesInvalidUtf8AndEscapesControlCharacters) {
  const auto dir = test::scratch_dir("inspect/utf8");
  // Latin-1 "é" (0xE9) is not UTF-8; a 0x01 byte needs a \u escape.
  const auto path = write_file(dir, "latin1.csv", "# name: caf\xE9 \x01 end\ntime,q\n2001-01-01,1\n");
  const std::string text = inspect_files({path}).to_json();
  Json json;
  ASSERT_NO_THROW(json = JsonParser(text).parse()) << text;
  EXPECT_EQ(json["files"].array.at(0)["sites"].array.at(0)["name"].string, "caf\xEF\xBF\xBD \x01 end");
}

TEST(Inspect, RequestedVariableMissingIsRecordedAsADataError) {
  const Inputs in = write_inputs("variable");
  io::ReadOptions options;
  options.variables = {"tas"};
  const InspectReport report = inspect_files({in.good}, options);
  ASSERT_EQ(report.failed_count(), 1u);
  EXPECT_EQ(report.files[0].error_kind, "data");
  EXPECT_EQ(report.files[0].format, io::FileFormat::csv);
  EXPECT_TRUE(contains(report.files[0].error, "'tas'") && contains(report.files[0].error, "q (water_volume"));
}

}  // namespace libseq::pipeline
