#include "libseq/data/panel.hpp"

#include "libseq/error.hpp"

namespace libseq::data {

Panel::Panel(TimeAxis axis, std::vector<SiteInfo> sites, std::vector<VariableInfo> variables)
    : axis_(axis),
      sites_(std::move(sites)),
      variables_(std::move(variables)),
      values_(sites_.size() * axis_.length() * variables_.size(), missing_value) {}

std::span<float> Panel::site_values(std::size_t site) {
  const std::size_t block = time_count() * variable_count();
  return {values_.data() + site * block, block};
}

std::span<const float> Panel::site_values(std::size_t site) const {
  const std::size_t block = time_count() * variable_count();
  return {values_.data() + site * block, block};
}

std::vector<float> Panel::series(std::size_t site, std::size_t variable) const {
  std::vector<float> out(time_count());
  for (std::size_t t = 0; t < out.size(); ++t) out[t] = at(site, t, variable);
  return out;
}

void Panel::set_series(std::size_t site, std::size_t variable, std::span<const float> values) {
  if (values.size() != time_count()) {
    throw DataError("panel: series for variable '" + variables_.at(variable).name + "' has " +
                    std::to_string(values.size()) + " values, expected " + std::to_string(time_count()));
  }
  for (std::size_t t = 0; t < values.size(); ++t) at(site, t, variable) = values[t];
}

std::optional<std::size_t> Panel::find_variable(std::string_view key) const {
  for (std::size_t v = 0; v < variables_.size(); ++v) {
    if (variables_[v].name == key) return v;
  }
  for (std::size_t v = 0; v < variables_.size(); ++v) {
    if (!variables_[v].standard_name.empty() && variables_[v].standard_name == key) return v;
  }
  return std::nullopt;
}

std::optional<std::size_t> Panel::find_site(std::string_view id) const {
  for (std::size_t s = 0; s < sites_.size(); ++s) {
    if (sites_[s].id == id) return s;
  }
  return std::nullopt;
}

std::size_t Panel::require_variable(std::string_view key, std::string_view source) const {
  if (auto found = find_variable(key)) return *found;
  std::string present;
  for (const auto& v : variables_) {
    if (!present.empty()) present += ", ";
    present += v.name;
    if (!v.standard_name.empty()) present += " (" + v.standard_name + ")";
  }
  throw DataError(std::string(source) + ": variable '" + std::string(key) +
                  "' not found (by name or standard_name); variables present: " +
                  (present.empty() ? "none" : present));
}

double Panel::missing_fraction(std::size_t site, std::size_t variable) const {
  if (time_count() == 0) return 1.0;
  std::size_t missing = 0;
  for (std::size_t t = 0; t < time_count(); ++t) missing += std::isnan(at(site, t, variable)) ? 1 : 0;
  return static_cast<double>(missing) / static_cast<double>(time_count());
}

void Panel::remove_sites(const std::vector<bool>& drop) {
  const std::size_t block = time_count() * variable_count();
  std::size_t kept = 0;
  for (std::size_t s = 0; s < sites_.size(); ++s) {
    if (s < drop.size() && drop[s]) continue;
    if (kept != s) {
      sites_[kept] = std::move(sites_[s]);
      std::copy(values_.begin() + s * block, values_.begin() + (s + 1) * block, values_.begin() + kept * block);
    }
    ++kept;
  }
  sites_.resize(kept);
  values_.resize(kept * block);
}

}  // namespace libseq::data
