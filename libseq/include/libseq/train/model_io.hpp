#pragma once
/// @file model_io.hpp
/// A trained network (options and parameters) and its TrainSummary, to and from an io::ModelBundle, and to and
/// from a bundle file. The mapping (entry names, types) is documented in docs/methods-training.md ("Model bundle");
/// doubles are stored as arrays, never as text, so a round trip is bit-exact.

#include <filesystem>
#include <optional>
#include <string_view>

#include "libseq/io/bundle.hpp"
#include "libseq/nn/network.hpp"
#include "libseq/train/trainer.hpp"

namespace libseq::train {

/// A network read back from a bundle, with the summary of the run that trained it when one was stored.
template <typename Scalar>
struct LoadedModel {
  nn::Network<Scalar> network;
  std::optional<TrainSummary> summary;
};

/// Entries describing `network` (and `summary` when non-null) added to a new bundle. Parameters are stored in
/// Scalar precision (a float network gives a float array).
template <typename Scalar>
io::ModelBundle to_bundle(const nn::Network<Scalar>& network, const TrainSummary* summary = nullptr);

/// The network (and summary, if present) stored in `bundle`; `source` names the file for messages.
/// @throws libseq::FormatError naming the entry when one is missing, malformed, of the other precision, or when the
/// parameter count disagrees with the stored options.
template <typename Scalar>
LoadedModel<Scalar> from_bundle(const io::ModelBundle& bundle, std::string_view source = "model bundle");

/// to_bundle then io::save_bundle (atomic). @throws what io::save_bundle throws.
template <typename Scalar>
void save_model(const std::filesystem::path& path, const nn::Network<Scalar>& network,
                const TrainSummary* summary = nullptr);

/// io::load_bundle then from_bundle. @throws what those throw.
template <typename Scalar>
LoadedModel<Scalar> load_model(const std::filesystem::path& path);

}  // namespace libseq::train
