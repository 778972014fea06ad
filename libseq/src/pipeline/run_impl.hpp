#pragma once
// Private pieces of the batch job shared by run.cpp and the operational forecast: the window source that feeds the
// trainer from a FeatureTable, and turning ensemble members into quantiles in target units.

#include <exception>
#include <filesystem>
#include <functional>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "libseq/data/windows.hpp"
#include "libseq/io/read_options.hpp"
#include "libseq/io/results.hpp"
#include "libseq/nn/network.hpp"
#include "libseq/pipeline/job.hpp"
#include "libseq/train/sequence_source.hpp"
#include "libseq/uncertainty/conformal.hpp"
#include "libseq/uncertainty/ensemble.hpp"
#include "libseq/uncertainty/mixture.hpp"

namespace libseq::pipeline::detail {

/// Windows of a FeatureTable as a trainer source (views; a batch is packed on demand).
class WindowSource final : public train::SequenceSource<float> {
 public:
  WindowSource(const data::FeatureTable& table, const data::WindowOptions& options, std::vector<data::Window> windows);
  std::size_t size() const override { return windows_.size(); }
  std::size_t steps() const override { return options_.sequence_steps(); }
  std::size_t input_size() const override { return input_size_; }
  std::size_t static_size() const override { return table_.static_count(); }
  std::size_t horizon() const override { return options_.lead_count(); }
  void fill(std::span<const std::size_t> indices, nn::SequenceBatch<float>& batch) const override;
  const std::vector<data::Window>& windows() const { return windows_; }

 private:
  const data::FeatureTable& table_;
  data::WindowOptions options_;
  std::vector<data::Window> windows_;
  std::size_t input_size_ = 0;
};

/// Quantiles, median and mean of every (window, lead) case in target units.
struct CaseDistributions {
  std::size_t cases = 0;
  std::vector<double> levels;     ///< the reported levels
  std::vector<double> quantiles;  ///< cases × levels
  std::vector<double> median;     ///< cases
  std::vector<double> mean;       ///< cases
  std::size_t member_count = 0;
  std::vector<double> members;  ///< cases × member_count, in target units (empty unless kept)
};

/// Mixes members (in the network's scaled, transformed space) and maps the result back to target units through
/// the table's inverse scaling and transform. Quantiles map exactly because the inverse is increasing; the mean of
/// a transformed target is the average of the back-transformed quantiles at 200 midpoint levels.
CaseDistributions to_target_units(const uncertainty::MemberForecasts& members, const data::FeatureTable& table,
                                  std::span<const data::Window> windows, std::size_t leads,
                                  const std::vector<double>& levels, bool keep_members);

/// The ensemble options of a job for a fitted feature plan (network input and static sizes, horizon, seeds).
uncertainty::EnsembleOptions ensemble_options_for(const JobConfig& job, const data::FeaturePlan& plan);

/// The results record of member `member` (index `index`) of model `model_name`: its training summary, curves and
/// final gradient-through-time profile.
io::TrainingRecord training_record(const std::string& model_name, std::size_t index,
                                   const uncertainty::EnsembleMember& member);

/// CQR calibrator (Romano et al. 2019) of one central interval of `coverage`, per lead, from calibration cases:
/// observations, the raw interval bounds and each case's lead index.
/// `per_lead` false pools the cases of all leads into one calibrator.
uncertainty::Calibrator fit_interval_calibrator(std::span<const double> observed, std::span<const double> lower,
                                                std::span<const double> upper, std::span<const std::size_t> lead,
                                                double coverage, bool per_lead);

/// Whether intervals are calibrated per lead (calibration.leads): "each" always, "pooled" never, "auto" when every
/// one of the `leads` leads has at least calibration.min_cases_per_lead cases with an observed target.
bool calibrate_per_lead(const JobConfig& job, std::span<const double> observed, std::span<const std::size_t> lead,
                        std::size_t leads);

/// The scale of conformity scores (calibration.scale): the target transform's, or the target's units. Calibration
/// maps observations and interval bounds through forward(), computes CQR scores and widens there, and maps the
/// bounds back through inverse(). A fixed increasing map keeps split conformal's coverage guarantee: the event
/// "y in [lo, hi]" is the same on both scales (Romano et al. 2019 hold for any score computed from the calibration
/// cases alone). On the log scale a widening by Q multiplies the bounds by e^±Q, so a high-flow season is widened
/// in proportion to its flows rather than by the low-flow season's absolute errors.
class ScoreScale {
 public:
  ScoreScale(const JobConfig& job, const data::FeaturePlan& plan);
  /// The transform, or the identity; values below the transform's domain map to its lower limit (−inf for log).
  double forward(double y) const;
  /// The inverse transform; the lower limit maps back to the domain's edge (−offset).
  double inverse(double z) const;
  /// Whether forward() is the identity.
  bool identity() const { return identity_; }

 private:
  const data::FeaturePlan* plan_;
  bool identity_;
  double floor_;  // forward() of values at or below the domain's edge
};

/// Target step of lead index `lead` (0-based) of a sample issued at `issue`: issue + 1 + lead in forecast mode, the
/// issue step itself in simulation mode.
std::size_t target_step(const data::WindowOptions& w, std::size_t issue, std::size_t lead);

/// Position of `level` among the reported quantile levels. @throws libseq::DataError when it is not one of them.
std::size_t level_position(const std::vector<double>& levels, double level);

/// The sites of each model: one model over all sites (across_sites) or one per site (per_site).
std::vector<std::vector<std::size_t>> model_sites(const JobConfig& job, std::size_t site_count);

/// The name of a model in notes, records and progress: "*" for one model across sites, else its site's id.
std::string model_name(const JobConfig& job, const data::Panel& panel, const std::vector<std::size_t>& sites);

/// Runs body(m) for every model m in [0, count). When there are more models than members per model (per-site models
/// at many sites) and `threads` > 1, the models run side by side on the OpenMP threads, an OpenMP region inside
/// body (the members of Ensemble::train) then running on one thread; otherwise one after another, with the members
/// in parallel inside. A member's work is the same either way. What body(m) throws is kept in errors[m] (resized to
/// count) for the caller to rethrow in model order; after each model, done(m, finished) runs under a lock.
void for_each_model(const JobConfig& job, int threads, std::size_t count, const std::function<void(std::size_t)>& body,
                    const std::function<void(std::size_t, std::size_t)>& done, std::vector<std::exception_ptr>& errors);

/// The current UTC time, ISO 8601 (provenance).
std::string now_iso();

/// Standard error of the mean of d = a − b over the cases where both are finite, with the autocovariances of d up
/// to lag `overlap` (the rectangular window of Diebold & Mariano 1995 for h-step forecasts, overlap = h − 1, as R
/// `forecast::dm.test` with varestimator "acf"); the lag-0 variance alone when that sum is not positive. 0 when
/// fewer than two cases.
double difference_standard_error(const std::vector<double>& a, const std::vector<double>& b, std::size_t overlap);

/// The windows of `all` that belong to `sites`, in their order.
std::vector<data::Window> windows_of_sites(const std::vector<data::Window>& all, const std::vector<std::size_t>& sites);

/// Trains model `model` (0-based) of a job — one ensemble on the training windows of `sites`, early stopping on
/// their validation windows — exactly as the batch job and `fit` both do, so that their seeds and data agree.
/// Empty when the model has no training window with an observed target.
std::optional<uncertainty::Ensemble> train_model(const data::FeatureTable& table, const JobConfig& job,
                                                 const uncertainty::EnsembleOptions& options,
                                                 const std::vector<data::Window>& all_training,
                                                 const std::vector<data::Window>& all_validation,
                                                 const std::vector<std::size_t>& sites, std::size_t model);

/// Seed of the resamples of model `model` (0-based) of a job: distinct per model, fixed by the job seed.
std::uint64_t model_seed(std::uint64_t job_seed, std::size_t model);

/// Reads every file with `read` and joins their sites (the operational forecast's reader; the same joining rules as
/// the batch job's). Files must share the time axis and the variables read, and hold distinct sites.
/// @throws libseq::DataError naming the file that differs, or when no site has data; what io::read_panel throws.
data::Panel read_joined_panel(const std::vector<std::filesystem::path>& files, const io::ReadOptions& read,
                              std::vector<std::string>& warnings);

/// Puts each case's quantiles in order after calibration without moving the calibrated interval bounds between
/// levels: (1) from the narrowest coverage to the widest, a wider interval's bounds are extended to contain the next
/// narrower one's (intervals are calibrated one by one and may cross; extending can only raise the wider interval's
/// coverage); (2) every other level is clamped between the bounds at the levels below and above it; (3) what is
/// still out of order (an interval narrowed past its centre, NaN) is sorted, NaN last. Sorting alone would swap a
/// widened bound with a neighbouring level and so narrow the interval it belongs to.
void order_calibrated_quantiles(std::vector<double>& quantiles, const std::vector<double>& levels,
                                const std::vector<double>& intervals);

/// Sorts each case's `width` quantiles (NaN last) so that calibrated bounds never cross (as the batch job does).
void sort_case_quantiles(std::vector<double>& quantiles, std::size_t width);

}  // namespace libseq::pipeline::detail
