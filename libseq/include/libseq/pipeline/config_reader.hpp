#pragma once
/// @file config_reader.hpp
/// Typed, documented access to a TOML job file. Every key is read through one of these calls with its type,
/// default, units and a one-line description, so that (1) unknown keys can be reported with a "did you mean"
/// suggestion, (2) every problem in a file is collected and reported at once, each naming its key, and (3) the
/// configuration reference (docs/config.md) is generated from the same calls and cannot drift from the code.

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace libseq::pipeline {

/// Documentation of one key, recorded as it is read.
struct KeyDoc {
  std::string section;      ///< e.g. "training"
  std::string key;          ///< e.g. "learning_rate"
  std::string type;         ///< "string", "integer", "number", "boolean", "array of strings", ...
  std::string default_text; ///< default as TOML text, or "(required)"
  std::string units;        ///< units, or empty
  std::string description;  ///< what it does, when to change it
  std::string example;      ///< example value as TOML text
};

/// Reads typed values from a parsed TOML document, collecting problems instead of stopping at the first.
class ConfigReader {
 public:
  /// Parses `text`; `file` names it in messages. A TOML syntax error is recorded as a problem.
  ConfigReader(std::string_view text, std::string file);
  ~ConfigReader();
  ConfigReader(const ConfigReader&) = delete;
  ConfigReader& operator=(const ConfigReader&) = delete;

  /// Describes a section (for the generated reference).
  void section(std::string_view name, std::string_view description);

  std::string text(std::string_view section, std::string_view key, std::string_view default_value,
                   std::string_view description, std::string_view example = {});
  /// A string that must be one of `choices`.
  std::string choice(std::string_view section, std::string_view key, std::string_view default_value,
                     const std::vector<std::string>& choices, std::string_view description);
  /// A required string (empty when missing; a problem is recorded).
  std::string required_text(std::string_view section, std::string_view key, std::string_view description,
                            std::string_view example);
  std::int64_t integer(std::string_view section, std::string_view key, std::int64_t default_value,
                       std::int64_t minimum, std::int64_t maximum, std::string_view units,
                       std::string_view description);
  double number(std::string_view section, std::string_view key, double default_value, double minimum,
                double maximum, std::string_view units, std::string_view description);
  bool flag(std::string_view section, std::string_view key, bool default_value, std::string_view description);
  std::vector<std::string> texts(std::string_view section, std::string_view key,
                                 const std::vector<std::string>& default_value, std::string_view description,
                                 std::string_view example = {});
  std::vector<double> numbers(std::string_view section, std::string_view key, const std::vector<double>& default_value,
                              double minimum, double maximum, std::string_view units, std::string_view description);
  /// A table of string values (e.g. target units per variable), keys free.
  std::vector<std::pair<std::string, std::string>> text_table(std::string_view section, std::string_view key,
                                                              std::string_view description,
                                                              std::string_view example);
  /// True when the key is present in the file.
  bool has(std::string_view section, std::string_view key) const;

  /// Records a problem found by a later check (cross-key rules), naming its key.
  void problem(std::string message);

  /// Reports keys present in the file but never read (with the closest known key as a suggestion).
  void check_unknown_keys();
  const std::vector<std::string>& problems() const { return problems_; }
  /// @throws libseq::ConfigError with every problem, one per line, when there is any.
  void throw_if_problems() const;

  const std::vector<KeyDoc>& documentation() const { return docs_; }
  const std::vector<std::pair<std::string, std::string>>& section_docs() const { return sections_; }
  const std::string& file() const { return file_; }

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
  std::string file_;
  std::vector<std::string> problems_;
  std::vector<KeyDoc> docs_;
  std::vector<std::pair<std::string, std::string>> sections_;
  void record(KeyDoc doc);
};

/// Edit distance between two strings (Levenshtein), for suggestions.
std::size_t edit_distance(std::string_view a, std::string_view b);

/// The closest of `candidates` to `word` when it is close enough to be a plausible typo, else empty.
std::optional<std::string> closest_match(std::string_view word, const std::vector<std::string>& candidates);

}  // namespace libseq::pipeline
