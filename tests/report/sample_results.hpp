#pragma once
// A synthetic RunResults for the report tests: three sites (one with markup characters in its id and name), three
// daily leads, a quantile "network", a point-only "persistence" and a two-level "climatology"; per-site training of
// two members at the first two sites and one model across sites that the third site refers to. Values are
// generated, not measured: a seasonal curve plus noise from a fixed linear congruential generator, with a gap of
// missing observations, so the report has lines, bands, dots and gaps to draw.

#include <cmath>
#include <cstdint>
#include <numbers>
#include <string>
#include <vector>

#include "libseq/io/results.hpp"

namespace libseq::test {

inline io::RunResults sample_results(std::size_t issue_count) {
  io::RunResults r;
  r.title = "Synthetic report check";
  r.summary = "Generated results used to test the HTML report; not a forecast of anything.";
  r.mode = "forecast";
  r.target_variable = "discharge";
  r.target_units = "m3 s-1";
  r.target_standard_name = "water_volume_transport_in_river_channel";
  r.step_seconds = 86400;
  r.leads = {1, 2, 3};
  r.test_period = "2001-01-01..2006-06-23";
  r.provenance.library_version = "0.1.0";
  r.provenance.git_commit = "abcdef012345";
  r.provenance.created = "2024-05-01T12:00:00Z";
  r.provenance.wall_seconds = 12.5;
  r.provenance.threads = 2;
  r.provenance.job_path = "jobs/check.toml";
  r.provenance.job_text = "name = \"check\"\n[periods]\n";
  r.provenance.seeds = {11, 12};
  r.provenance.inputs = {{"inputs/flows.nc", std::string(64, 'a')}};
  r.warnings = {"site c3: one member stopped early"};

  std::uint64_t state = 20240501;
  auto uniform = [&state] {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    return static_cast<double>(state >> 11) / 9007199254740992.0;
  };
  const std::vector<double> levels = {0.05, 0.25, 0.5, 0.75, 0.95};
  const std::vector<double> z = {-1.6449, -0.6745, 0.0, 0.6745, 1.6449};  // standard normal quantiles
  const std::size_t leads = r.leads.size();
  const char* ids[] = {"alder-01", "b<&>", "c3"};
  const char* names[] = {"Alder Brook", "Mill <Weir> & Sluice", ""};
  for (std::size_t s = 0; s < 3; ++s) {
    io::SiteResults site;
    site.site.id = ids[s];
    site.site.name = names[s];
    site.site.latitude = 47.1 + 0.1 * static_cast<double>(s);
    site.site.longitude = 8.3;
    site.site.elevation = 420 + 10 * static_cast<double>(s);
    site.site.attributes["area_km2"] = 120.0 + static_cast<double>(s);
    io::ForecastBlock network{"network", {}, {}, levels, {}, 0, {}};
    io::ForecastBlock persistence{"persistence", {}, {}, {}, {}, 0, {}};
    io::ForecastBlock climatology{"climatology", {}, {}, {0.1, 0.9}, {}, 0, {}};
    auto truth = [&](std::size_t t) {
      return 20 + 8 * std::sin(2 * std::numbers::pi * static_cast<double>(t) / 365.25);
    };
    for (std::size_t i = 0; i < issue_count; ++i) {
      site.issue_times.push_back(978307200 + static_cast<std::int64_t>(i) * 86400);  // from 2001-01-01
      for (std::size_t l = 0; l < leads; ++l) {
        const std::size_t t = i + l + 1;
        const double y = truth(t) + 3 * (uniform() - 0.5);
        const bool gap = t >= 40 && t < 50;
        site.observed.push_back(gap ? NAN : static_cast<float>(y));
        const double centre = truth(t) + 0.5 * (uniform() - 0.5);
        const double spread = 0.9 + 0.3 * static_cast<double>(l);
        network.mean.push_back(static_cast<float>(centre));
        network.median.push_back(static_cast<float>(centre));
        for (double zq : z) network.quantiles.push_back(static_cast<float>(centre + zq * spread));
        persistence.mean.push_back(static_cast<float>(truth(i)));
        persistence.median.push_back(static_cast<float>(truth(i)));
        climatology.mean.push_back(20.0f);
        climatology.median.push_back(20.0f);
        climatology.quantiles.push_back(10.0f);
        climatology.quantiles.push_back(30.0f);
      }
    }
    site.methods = {network, persistence, climatology};
    r.sites.push_back(site);

    for (const char* method : {"network", "persistence", "climatology"}) {
      for (std::int64_t lead : {1, 2, 3, -1}) {
        const double base = method == std::string("network") ? 0.8 : 0.5;
        const double shift = 0.05 * static_cast<double>(lead < 0 ? 2 : lead);
        r.metrics.push_back({ids[s], method, lead, "nse", base - shift, 100, 3});
        r.metrics.push_back({ids[s], method, lead, "kge", base - shift + 0.02, 100, 3});
        r.metrics.push_back({ids[s], method, lead, "crps", 2 - base + shift, 100, 3});
        if (method != std::string("persistence")) {
          r.metrics.push_back({ids[s], method, lead, "coverage", 0.85, 100, 3});
          r.metrics.push_back({ids[s], method, lead, "mean_width", 4.0, 100, 3});
        }
      }
    }
  }

  auto record = [](const std::string& model, std::uint32_t member) {
    io::TrainingRecord t;
    t.model = model;
    t.member = member;
    t.seed = 11 + member;
    t.termination = "early_stopped";
    t.epochs = 30;
    t.best_epoch = 24;
    for (std::uint32_t e = 0; e < t.epochs; ++e) {
      t.train_loss.push_back(1.0 / (1 + 0.3 * e) + 0.01 * member);
      t.validation_loss.push_back(1.1 / (1 + 0.25 * e) + 0.02);
      t.gradient_norm.push_back(0.5);
    }
    t.best_validation_loss = t.validation_loss[t.best_epoch - 1];
    t.clipped_steps = 4;
    t.total_steps = 600;
    for (std::int64_t k = 0; k < 60; k += 5) {
      t.diagnostic_lags.push_back(k);
      t.diagnostic_gradient_norms.push_back(std::exp(-0.15 * static_cast<double>(k)) * (1 + 0.1 * member));
    }
    t.seconds = 3.25;
    return t;
  };
  r.training = {record("alder-01", 0), record("alder-01", 1), record("b<&>", 0), record("b<&>", 1), record("*", 0)};
  return r;
}

/// Number of charts the report of sample_results draws with default options: per site 3 hindcast leads, a PIT
/// histogram and a reliability diagram; loss and gradient charts for the two sites with their own training and once
/// for the model across sites.
inline constexpr std::size_t sample_chart_count = 3 * 5 + 2 * 2 + 2;

}  // namespace libseq::test
