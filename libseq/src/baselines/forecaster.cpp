#include "libseq/baselines/forecaster.hpp"

#include <array>
#include <string>
#include <utility>

#include "libseq/error.hpp"

namespace libseq::baselines {

void SeriesSet::check(std::string_view what) const {
  for (std::size_t j = 0; j < inputs.size(); ++j) {
    if (inputs[j].size() != target.size()) {
      throw DataError(std::string(what) + ": input series " + std::to_string(j) + " has " +
                      std::to_string(inputs[j].size()) + " steps, expected " + std::to_string(target.size()) +
                      " like the target");
    }
  }
}

namespace {
constexpr std::array<std::pair<BaselineKind, const char*>, 6> kind_names{{
    {BaselineKind::persistence, "persistence"},
    {BaselineKind::seasonal_naive, "seasonal_naive"},
    {BaselineKind::climatology, "climatology"},
    {BaselineKind::ridge_arx, "ridge_arx"},
    {BaselineKind::exp_smoothing, "exp_smoothing"},
    {BaselineKind::local_level, "local_level"},
}};
}  // namespace

std::string to_string(BaselineKind kind) {
  for (const auto& [k, n] : kind_names) {
    if (k == kind) return n;
  }
  return "unknown";
}

BaselineKind parse_baseline_kind(std::string_view text) {
  std::string accepted;
  for (const auto& [k, n] : kind_names) {
    if (text == n) return k;
    accepted += accepted.empty() ? n : std::string(", ") + n;
  }
  throw ConfigError("baseline \"" + std::string(text) + "\" is not known; expected one of " + accepted);
}

}  // namespace libseq::baselines
