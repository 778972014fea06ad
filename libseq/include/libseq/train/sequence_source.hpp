#pragma once
/// @file sequence_source.hpp
/// Where a Trainer gets its sequences: an abstract source that packs selected sequences into an nn::SequenceBatch
/// (so window sets can feed the trainer without copying a panel), and an in-memory implementation.

#include <cstddef>
#include <cstdint>
#include <span>
#include <string_view>
#include <vector>

#include "libseq/nn/network.hpp"

namespace libseq::train {

/// A fixed set of equally long sequences with targets. Implementations must be safe to call concurrently from
/// different threads when each call gets its own batch (const methods only read).
template <typename Scalar>
class SequenceSource {
 public:
  virtual ~SequenceSource() = default;
  /// Number of sequences.
  virtual std::size_t size() const = 0;
  /// Steps per sequence (T), the same for every sequence (shorter histories are left-padded and masked).
  virtual std::size_t steps() const = 0;
  /// Dynamic inputs per step, static inputs per sequence, and targets per sequence (lead times).
  virtual std::size_t input_size() const = 0;
  virtual std::size_t static_size() const = 0;
  virtual std::size_t horizon() const = 0;
  /// Packs sequences `indices` (each < size()) into `batch`: steps() steps, time-major, targets of a forecast
  /// issued after the last step.
  virtual void fill(std::span<const std::size_t> indices, nn::SequenceBatch<Scalar>& batch) const = 0;
  /// Targets (indices.size() × horizon, NaN = missing) of a forecast issued after step `step` (0-based) of each
  /// sequence, used by truncated BPTT for windows that end before the last step. Returns false when the source has
  /// none (the default), in which case those windows only carry the state forward.
  virtual bool fill_step_targets(std::span<const std::size_t> indices, std::size_t step,
                                 std::vector<Scalar>& targets) const {
    (void)indices;
    (void)step;
    (void)targets;
    return false;
  }
};

/// Sequences held in memory, sequence-major (unlike the time-major batches it fills).
template <typename Scalar>
class InMemorySequences final : public SequenceSource<Scalar> {
 public:
  /// `inputs` count × steps × input_size; `targets` count × horizon (NaN = missing). The count is inferred from
  /// targets.size() / horizon. @throws libseq::DataError naming `name` when the sizes disagree.
  InMemorySequences(std::size_t steps, std::size_t input_size, std::size_t horizon, std::vector<Scalar> inputs,
                    std::vector<Scalar> targets, std::string_view name = "sequences");

  /// Static inputs, count × static_size. @throws libseq::DataError when the size disagrees.
  void set_statics(std::size_t static_size, std::vector<Scalar> statics);
  /// Step mask, count × steps (1 real, 0 left padding). @throws libseq::DataError when the size disagrees.
  void set_mask(std::vector<std::uint8_t> mask);
  /// Targets of forecasts issued after every step, count × steps × horizon (NaN = none); the row of the last step
  /// should equal the sequence's targets. @throws libseq::DataError when the size disagrees.
  void set_step_targets(std::vector<Scalar> step_targets);

  std::size_t size() const override { return count_; }
  std::size_t steps() const override { return steps_; }
  std::size_t input_size() const override { return input_size_; }
  std::size_t static_size() const override { return static_size_; }
  std::size_t horizon() const override { return horizon_; }
  void fill(std::span<const std::size_t> indices, nn::SequenceBatch<Scalar>& batch) const override;
  bool fill_step_targets(std::span<const std::size_t> indices, std::size_t step,
                         std::vector<Scalar>& targets) const override;

 private:
  std::string name_;
  std::size_t steps_, input_size_, horizon_, static_size_ = 0, count_ = 0;
  std::vector<Scalar> inputs_, targets_, statics_, step_targets_;
  std::vector<std::uint8_t> mask_;
};

}  // namespace libseq::train
