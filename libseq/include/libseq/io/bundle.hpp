#pragma once
/// @file bundle.hpp
/// A generic model bundle: named text entries and named numeric arrays in one HDF5 file. The container knows
/// nothing about networks or training; `train/model_io.hpp` maps a trained network onto it. The file layout is
/// documented in docs/methods-training.md ("Model bundle"). No HDF5 header is included here.

#include <cstddef>
#include <filesystem>
#include <map>
#include <string>
#include <variant>
#include <vector>

namespace libseq::io {

/// A dense row-major array of double or float values with its shape. An empty shape is a scalar (one value).
struct NamedArray {
  std::vector<std::size_t> shape;
  std::variant<std::vector<double>, std::vector<float>> values;

  /// A double array; @throws libseq::DataError when the value count differs from the product of `shape`.
  static NamedArray of_doubles(std::vector<std::size_t> shape, std::vector<double> values);
  /// A float array; @throws libseq::DataError when the value count differs from the product of `shape`.
  static NamedArray of_floats(std::vector<std::size_t> shape, std::vector<float> values);

  /// Whether the values are stored as float (otherwise double).
  bool is_float() const { return values.index() == 1; }
  /// Number of values held.
  std::size_t size() const;
  /// Product of the shape (1 for a scalar).
  std::size_t element_count() const;
  /// The double values; @throws libseq::DataError naming `what` when the array holds floats.
  const std::vector<double>& doubles(const std::string& what = "array") const;
  /// The float values; @throws libseq::DataError naming `what` when the array holds doubles.
  const std::vector<float>& floats(const std::string& what = "array") const;

  friend bool operator==(const NamedArray&, const NamedArray&) = default;
};

/// Text entries (options, summaries, provenance) and arrays (parameters, scaling statistics, curves) by name.
/// Names must be non-empty and contain neither '/' nor NUL; text values must not contain NUL.
struct ModelBundle {
  std::map<std::string, std::string> text;
  std::map<std::string, NamedArray> arrays;

  friend bool operator==(const ModelBundle&, const ModelBundle&) = default;
};

/// Writes `bundle` to `path` as HDF5: first to a temporary file beside it, then renamed over `path`, so a killed
/// run leaves either the old file or the new one. Values are written in their own type (float or double), so a
/// round trip is bit-exact (NaN payloads included).
/// @throws libseq::DataError for an invalid name, text with NUL or an array whose size disagrees with its shape;
/// libseq::IoError when the file cannot be written or renamed (naming the path).
void save_bundle(const std::filesystem::path& path, const ModelBundle& bundle);

/// Reads a bundle written by save_bundle.
/// @throws libseq::IoError when the file cannot be opened; libseq::FormatError when it is not a runnel model bundle
/// or an entry has an unsupported type (naming the path and the entry).
ModelBundle load_bundle(const std::filesystem::path& path);

/// Format tag stored in the file's root attribute "format".
inline constexpr const char* bundle_format_name = "runnel-model-bundle";
/// Version stored in the root attribute "format_version"; load_bundle refuses newer versions.
inline constexpr int bundle_format_version = 1;

}  // namespace libseq::io
