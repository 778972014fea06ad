#pragma once
/// @file case_sets_impl.hpp
/// Internal to the pipeline module: one site's forecasts on one period (a case set), their interval calibration and
/// the final forecast's combination of the network with a baseline (docs/methods.md, steps 6 and 8).

#include <cstdint>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "libseq/data/features.hpp"
#include "libseq/data/time_axis.hpp"
#include "libseq/data/windows.hpp"
#include "libseq/io/results.hpp"
#include "libseq/pipeline/job.hpp"
#include "run_impl.hpp"

namespace libseq::pipeline::detail {

/// One site's forecasts on one period: case = row × leads + lead, quantiles case-major; values in target units.
struct CaseSet {
  std::vector<std::size_t> issues;  ///< rows: issue steps (forecast) or simulated steps (simulation)
  std::vector<double> observed;     ///< rows × leads
  std::vector<double> mean;         ///< rows × leads
  std::vector<double> median;       ///< rows × leads
  std::vector<double> quantiles;    ///< rows × leads × levels
  std::size_t rows() const { return issues.size(); }
};

/// Appends distributions of windows (ordered by site, then issue) to the CaseSet of each window's site in `out`.
void split_by_site(std::span<const data::Window> windows, const CaseDistributions& dist,
                   const data::FeatureTable& table, const data::WindowOptions& options, std::size_t leads,
                   std::vector<CaseSet>& out);

/// Rounds a set to float precision: the precision results and checkpoints store, so that a resumed run (reading
/// checkpoints) computes the final forecast and calibration from exactly the values an uninterrupted run uses.
void round_to_float(CaseSet& set);

/// Calibrates every central interval (job.intervals) of the `test` sets in place: CQR (Romano et al. 2019) on the
/// interval bounds on the score scale `scale`, fitted on the pooled `calibration` sets per lead or over all leads
/// (calibration.leads); with CalibrationMethod::adaptive, then adaptive conformal inference (Gibbs & Candès 2021)
/// through each site's test period in issue order, an outcome being used only once it is observed. Quantiles are
/// sorted afterwards. Unbounded intervals are reported in `warnings` and pooling in `notes`, both prefixed by
/// `what`. Returns false when some lead has no calibration case with an observed target (nothing is changed).
bool calibrate_sets(const JobConfig& job, const ScoreScale& scale, const std::vector<const CaseSet*>& calibration,
                    const std::vector<CaseSet*>& test, std::size_t leads, const std::string& what,
                    std::vector<std::string>& warnings, std::vector<std::string>& notes);

/// A results block of `method` from a set (float storage).
io::ForecastBlock block_from_set(const std::string& method, const CaseSet& set, const std::vector<double>& levels);

/// A set from a stored site and block (checkpoints of --resume).
CaseSet set_from_block(const io::SiteResults& site, const io::ForecastBlock& block, const data::TimeAxis& axis);

/// Per-case mean pinball loss over the levels of lead k (NaN where the target or a quantile is missing).
std::vector<double> pinball_losses(const CaseSet& set, const std::vector<double>& levels, std::size_t leads,
                                   std::size_t k);

/// Mean of the finite values; +inf when there is none.
double mean_finite(const std::vector<double>& values);

/// out = w · a + (1 − w) · b for lead k of every row (quantile averaging keeps the quantiles ordered).
void blend_lead(const CaseSet& a, const CaseSet& b, double w, std::size_t leads, std::size_t k, std::size_t levels,
                CaseSet& out);

/// The final forecast of one site before its interval calibration.
struct FinalCombination {
  CaseSet test;         ///< on the test period
  CaseSet calibration;  ///< on the calibration period (for calibrate_sets)
  std::string choice;   ///< "lead 1: 0.3 network + 0.7 ridge_arx; ..." for the results' notes
};

/// Per lead, the network's quantiles averaged with one baseline's, q = w q_network + (1 − w) q_baseline: the
/// candidates (the network alone, and every baseline with w = 0, 0.1, ..., 0.9) are scored by their mean pinball
/// loss on the selection period, and w is chosen by the one-standard-error rule along the lowest-loss candidate's
/// baseline (docs/methods.md, step 8). `baseline_sets[b]` holds baseline b on the (selection, calibration) cases of
/// the network, `baseline_tests[b]` on its test cases; `lead_labels` are the leads in steps, for the notes.
FinalCombination combine_final(const JobConfig& job, const CaseSet& selection, const CaseSet& test,
                               const CaseSet& calibration,
                               const std::vector<std::pair<CaseSet, CaseSet>>& baseline_sets,
                               const std::vector<CaseSet>& baseline_tests,
                               const std::vector<std::string>& baseline_names,
                               const std::vector<std::int64_t>& lead_labels);

}  // namespace libseq::pipeline::detail
