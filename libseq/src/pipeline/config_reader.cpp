#include "libseq/pipeline/config_reader.hpp"

#include <toml++/toml.h>
#include <algorithm>
#include <cmath>
#include <map>
#include <set>
#include <sstream>

#include "libseq/error.hpp"

namespace libseq::pipeline {

namespace {

std::string full_key(std::string_view section, std::string_view key) {
  return std::string(section) + "." + std::string(key);
}

std::string format_number(double value) {
  std::ostringstream out;
  out << value;
  return out.str();
}

std::string quote(std::string_view text) { return "\"" + std::string(text) + "\""; }

std::string toml_list(const std::vector<std::string>& values) {
  std::string out = "[";
  for (std::size_t i = 0; i < values.size(); ++i) out += (i ? ", " : "") + quote(values[i]);
  return out + "]";
}

std::string toml_list(const std::vector<double>& values) {
  std::string out = "[";
  for (std::size_t i = 0; i < values.size(); ++i) out += (i ? ", " : "") + format_number(values[i]);
  return out + "]";
}

std::string node_type_name(const toml::node& node) {
  switch (node.type()) {
    case toml::node_type::string:
      return "a string";
    case toml::node_type::integer:
      return "an integer";
    case toml::node_type::floating_point:
      return "a number";
    case toml::node_type::boolean:
      return "a boolean";
    case toml::node_type::array:
      return "an array";
    case toml::node_type::table:
      return "a table";
    default:
      return "a date or time";
  }
}

}  // namespace

struct ConfigReader::Impl {
  toml::table root;
  bool parsed = false;
  std::map<std::string, std::set<std::string>> read_keys;  // section -> keys read

  const toml::node* find(std::string_view section, std::string_view key) {
    read_keys[std::string(section)].insert(std::string(key));
    const toml::node* table = root.get(section);
    if (table == nullptr || !table->is_table()) return nullptr;
    return table->as_table()->get(key);
  }
};

ConfigReader::ConfigReader(std::string_view text, std::string file) : impl_(std::make_unique<Impl>()), file_(file) {
  try {
    impl_->root = toml::parse(text, file_);
    impl_->parsed = true;
  } catch (const toml::parse_error& e) {
    const auto& where = e.source().begin;
    problems_.push_back(file_ + ":" + std::to_string(where.line) + ":" + std::to_string(where.column) +
                        ": not valid TOML: " + std::string(e.description()));
  }
}

ConfigReader::~ConfigReader() = default;

void ConfigReader::record(KeyDoc doc) {
  for (const auto& existing : docs_) {
    if (existing.section == doc.section && existing.key == doc.key) return;
  }
  docs_.push_back(std::move(doc));
}

void ConfigReader::section(std::string_view name, std::string_view description) {
  for (const auto& s : sections_) {
    if (s.first == name) return;
  }
  sections_.emplace_back(std::string(name), std::string(description));
  impl_->read_keys[std::string(name)];
}

bool ConfigReader::has(std::string_view section, std::string_view key) const {
  const toml::node* table = impl_->root.get(section);
  return table != nullptr && table->is_table() && table->as_table()->get(key) != nullptr;
}

void ConfigReader::problem(std::string message) { problems_.push_back(std::move(message)); }

std::string ConfigReader::text(std::string_view section, std::string_view key, std::string_view default_value,
                               std::string_view description, std::string_view example) {
  record({std::string(section), std::string(key), "string", quote(default_value), "", std::string(description),
          example.empty() ? quote(default_value) : std::string(example)});
  const toml::node* node = impl_->find(section, key);
  if (node == nullptr) return std::string(default_value);
  if (!node->is_string()) {
    problem(full_key(section, key) + ": expected a string, got " + node_type_name(*node));
    return std::string(default_value);
  }
  return std::string(*node->value<std::string_view>());
}

std::string ConfigReader::required_text(std::string_view section, std::string_view key, std::string_view description,
                                        std::string_view example) {
  record({std::string(section), std::string(key), "string", "(required)", "", std::string(description),
          std::string(example)});
  const toml::node* node = impl_->find(section, key);
  if (node == nullptr) {
    problem(full_key(section, key) + ": required, but missing (example: " + std::string(key) + " = " +
            std::string(example) + ")");
    return {};
  }
  if (!node->is_string()) {
    problem(full_key(section, key) + ": expected a string, got " + node_type_name(*node));
    return {};
  }
  return std::string(*node->value<std::string_view>());
}

std::string ConfigReader::choice(std::string_view section, std::string_view key, std::string_view default_value,
                                 const std::vector<std::string>& choices, std::string_view description) {
  std::string one_of;
  for (const auto& c : choices) one_of += (one_of.empty() ? "" : " | ") + c;
  record({std::string(section), std::string(key), "string: " + one_of, quote(default_value), "",
          std::string(description), quote(default_value)});
  const toml::node* node = impl_->find(section, key);
  if (node == nullptr) return std::string(default_value);
  if (!node->is_string()) {
    problem(full_key(section, key) + ": expected one of " + one_of + ", got " + node_type_name(*node));
    return std::string(default_value);
  }
  std::string value(*node->value<std::string_view>());
  if (std::find(choices.begin(), choices.end(), value) == choices.end()) {
    std::string message = full_key(section, key) + ": '" + value + "' is not one of " + one_of;
    if (auto near = closest_match(value, choices)) message += " (did you mean '" + *near + "'?)";
    problem(message);
    return std::string(default_value);
  }
  return value;
}

std::int64_t ConfigReader::integer(std::string_view section, std::string_view key, std::int64_t default_value,
                                   std::int64_t minimum, std::int64_t maximum, std::string_view units,
                                   std::string_view description) {
  record({std::string(section), std::string(key),
          "integer in [" + std::to_string(minimum) + ", " + std::to_string(maximum) + "]",
          std::to_string(default_value), std::string(units), std::string(description), std::to_string(default_value)});
  const toml::node* node = impl_->find(section, key);
  if (node == nullptr) return default_value;
  std::int64_t value = default_value;
  if (node->is_integer()) {
    value = *node->value<std::int64_t>();
  } else if (node->is_floating_point() && std::floor(*node->value<double>()) == *node->value<double>()) {
    value = static_cast<std::int64_t>(*node->value<double>());
  } else {
    problem(full_key(section, key) + ": expected an integer, got " + node_type_name(*node));
    return default_value;
  }
  if (value < minimum || value > maximum) {
    problem(full_key(section, key) + ": " + std::to_string(value) + " is outside [" + std::to_string(minimum) + ", " +
            std::to_string(maximum) + "]");
    return default_value;
  }
  return value;
}

double ConfigReader::number(std::string_view section, std::string_view key, double default_value, double minimum,
                            double maximum, std::string_view units, std::string_view description) {
  record({std::string(section), std::string(key),
          "number in [" + format_number(minimum) + ", " + format_number(maximum) + "]", format_number(default_value),
          std::string(units), std::string(description), format_number(default_value)});
  const toml::node* node = impl_->find(section, key);
  if (node == nullptr) return default_value;
  if (!node->is_number()) {
    problem(full_key(section, key) + ": expected a number, got " + node_type_name(*node));
    return default_value;
  }
  const double value = node->is_integer() ? static_cast<double>(*node->value<std::int64_t>()) : *node->value<double>();
  if (!(value >= minimum && value <= maximum)) {
    problem(full_key(section, key) + ": " + format_number(value) + " is outside [" + format_number(minimum) + ", " +
            format_number(maximum) + "]");
    return default_value;
  }
  return value;
}

bool ConfigReader::flag(std::string_view section, std::string_view key, bool default_value,
                        std::string_view description) {
  record({std::string(section), std::string(key), "boolean", default_value ? "true" : "false", "",
          std::string(description), default_value ? "true" : "false"});
  const toml::node* node = impl_->find(section, key);
  if (node == nullptr) return default_value;
  if (!node->is_boolean()) {
    problem(full_key(section, key) + ": expected true or false, got " + node_type_name(*node));
    return default_value;
  }
  return *node->value<bool>();
}

std::vector<std::string> ConfigReader::texts(std::string_view section, std::string_view key,
                                             const std::vector<std::string>& default_value,
                                             std::string_view description, std::string_view example) {
  record({std::string(section), std::string(key), "array of strings", toml_list(default_value), "",
          std::string(description), example.empty() ? toml_list(default_value) : std::string(example)});
  const toml::node* node = impl_->find(section, key);
  if (node == nullptr) return default_value;
  const toml::array* array = node->as_array();
  if (array == nullptr) {
    problem(full_key(section, key) + ": expected an array of strings, got " + node_type_name(*node));
    return default_value;
  }
  std::vector<std::string> out;
  for (std::size_t i = 0; i < array->size(); ++i) {
    const toml::node& element = *array->get(i);
    if (!element.is_string()) {
      problem(full_key(section, key) + "[" + std::to_string(i) + "]: expected a string, got " +
              node_type_name(element));
      continue;
    }
    out.emplace_back(*element.value<std::string_view>());
  }
  return out;
}

std::vector<double> ConfigReader::numbers(std::string_view section, std::string_view key,
                                          const std::vector<double>& default_value, double minimum, double maximum,
                                          std::string_view units, std::string_view description) {
  record({std::string(section), std::string(key),
          "array of numbers in [" + format_number(minimum) + ", " + format_number(maximum) + "]",
          toml_list(default_value), std::string(units), std::string(description), toml_list(default_value)});
  const toml::node* node = impl_->find(section, key);
  if (node == nullptr) return default_value;
  const toml::array* array = node->as_array();
  if (array == nullptr) {
    problem(full_key(section, key) + ": expected an array of numbers, got " + node_type_name(*node));
    return default_value;
  }
  std::vector<double> out;
  for (std::size_t i = 0; i < array->size(); ++i) {
    const toml::node& element = *array->get(i);
    if (!element.is_number()) {
      problem(full_key(section, key) + "[" + std::to_string(i) + "]: expected a number, got " +
              node_type_name(element));
      continue;
    }
    const double value =
        element.is_integer() ? static_cast<double>(*element.value<std::int64_t>()) : *element.value<double>();
    if (!(value >= minimum && value <= maximum)) {
      problem(full_key(section, key) + "[" + std::to_string(i) + "]: " + format_number(value) + " is outside [" +
              format_number(minimum) + ", " + format_number(maximum) + "]");
      continue;
    }
    out.push_back(value);
  }
  return out;
}

std::vector<std::pair<std::string, std::string>> ConfigReader::text_table(std::string_view section,
                                                                          std::string_view key,
                                                                          std::string_view description,
                                                                          std::string_view example) {
  record({std::string(section), std::string(key), "table of strings", "{}", "", std::string(description),
          std::string(example)});
  const toml::node* node = impl_->find(section, key);
  std::vector<std::pair<std::string, std::string>> out;
  if (node == nullptr) return out;
  const toml::table* table = node->as_table();
  if (table == nullptr) {
    problem(full_key(section, key) + ": expected a table like " + std::string(example) + ", got " +
            node_type_name(*node));
    return out;
  }
  for (const auto& [name, value] : *table) {
    if (!value.is_string()) {
      problem(full_key(section, key) + "." + std::string(name.str()) + ": expected a string, got " +
              node_type_name(value));
      continue;
    }
    out.emplace_back(std::string(name.str()), std::string(*value.value<std::string_view>()));
  }
  return out;
}

void ConfigReader::check_unknown_keys() {
  if (!impl_->parsed) return;
  std::vector<std::string> sections;
  for (const auto& [name, keys] : impl_->read_keys) sections.push_back(name);
  for (const auto& [name, node] : impl_->root) {
    const std::string section(name.str());
    auto known = impl_->read_keys.find(section);
    if (known == impl_->read_keys.end()) {
      std::string message = file_ + ": unknown section [" + section + "]";
      if (auto near = closest_match(section, sections)) message += " (did you mean [" + *near + "]?)";
      problem(message);
      continue;
    }
    if (!node.is_table()) {
      problem(file_ + ": '" + section + "' must be a section ([" + section + "]), got " + node_type_name(node));
      continue;
    }
    std::vector<std::string> keys(known->second.begin(), known->second.end());
    for (const auto& [key_name, value] : *node.as_table()) {
      const std::string key(key_name.str());
      if (known->second.count(key)) continue;
      std::string message = full_key(section, key) + ": unknown key";
      if (auto near = closest_match(key, keys)) {
        message += " (did you mean '" + *near + "'?)";
      } else {
        // The key may belong to another section.
        for (const auto& [other, other_keys] : impl_->read_keys) {
          if (other != section && other_keys.count(key)) {
            message += " (it belongs in [" + other + "])";
            break;
          }
        }
      }
      problem(message);
    }
  }
}

void ConfigReader::throw_if_problems() const {
  if (problems_.empty()) return;
  std::string message = file_ + ": " + std::to_string(problems_.size()) + " problem(s) in the job file:";
  for (const auto& p : problems_) message += "\n  " + p;
  throw ConfigError(message);
}

std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> previous(b.size() + 1), current(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) previous[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    current[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t substitution = previous[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
      current[j] = std::min({previous[j] + 1, current[j - 1] + 1, substitution});
    }
    std::swap(previous, current);
  }
  return previous[b.size()];
}

std::optional<std::string> closest_match(std::string_view word, const std::vector<std::string>& candidates) {
  std::optional<std::string> best;
  std::size_t best_distance = 0;
  for (const auto& c : candidates) {
    const std::size_t d = edit_distance(word, c);
    if (!best || d < best_distance) {
      best = c;
      best_distance = d;
    }
  }
  // Plausible typo: at most a third of the word's letters wrong (and at least one allowed).
  if (best && best_distance <= std::max<std::size_t>(1, word.size() / 3)) return best;
  return std::nullopt;
}

}  // namespace libseq::pipeline
