// Model bundle container: bit-exact HDF5 round trip, atomic replacement, and the errors a user sees.
// Reference: IEEE 754 bit patterns (a round trip must preserve every bit, including NaN payloads, −0 and
// subnormals); common practice, no source.

#include "libseq/io/bundle.hpp"

#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>

#include "libseq/error.hpp"

namespace libseq::io {
namespace {

// Scratch directory below the build tree when CTest provides it, else below the system temporary directory
// (tests/CMakeLists.txt currently passes only the first of its environment entries to discovered tests).
std::filesystem::path scratch(const std::string& name) {
  const char* binary = std::getenv("RUNNEL_BINARY_DIR");
  const std::filesystem::path root = (binary != nullptr && *binary != '\0')
                                         ? std::filesystem::path(binary) / "test-scratch"
                                         : std::filesystem::temp_directory_path() / "runnel-test-scratch";
  const auto dir = root / name;
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir;
}

ModelBundle awkward_bundle() {
  ModelBundle bundle;
  bundle.text["options"] = "cell = \"lstm\"\nhidden_size = 64\n";
  bundle.text["empty"] = "";
  bundle.text["unicode"] = "débit m³ s⁻¹ — Ångström";
  const double quiet_nan_with_payload = std::bit_cast<double>(std::uint64_t{0x7ff8000000012345});
  bundle.arrays["double_matrix"] = NamedArray::of_doubles(
      {2, 3}, {-0.0, std::numeric_limits<double>::denorm_min(), quiet_nan_with_payload,
               std::numeric_limits<double>::infinity(), 1.0 / 3.0, -1e308});
  const float float_nan_with_payload = std::bit_cast<float>(std::uint32_t{0x7fc00abc});
  bundle.arrays["float_cube"] = NamedArray::of_floats(
      {2, 1, 2}, {0.1f, float_nan_with_payload, std::numeric_limits<float>::denorm_min(), -3.0e38f});
  bundle.arrays["scalar"] = NamedArray::of_doubles({}, {42.5});
  bundle.arrays["empty_rows"] = NamedArray::of_floats({0, 4}, {});
  return bundle;
}

template <typename T>
void expect_same_bits(const std::vector<T>& a, const std::vector<T>& b, const std::string& what) {
  ASSERT_EQ(a.size(), b.size()) << what;
  for (std::size_t i = 0; i < a.size(); ++i) {
    using Bits = std::conditional_t<sizeof(T) == 8, std::uint64_t, std::uint32_t>;
    EXPECT_EQ(std::bit_cast<Bits>(a[i]), std::bit_cast<Bits>(b[i])) << what << " entry " << i;
  }
}

}  // namespace

TEST(ModelBundle, RoundTripIsBitExact) {
  const auto path = scratch("bundle_round_trip") / "model.h5";
  const ModelBundle original = awkward_bundle();
  save_bundle(path, original);
  const ModelBundle loaded = load_bundle(path);
  EXPECT_EQ(loaded.text, original.text);
  ASSERT_EQ(loaded.arrays.size(), original.arrays.size());
  for (const auto& [name, array] : original.arrays) {
    const NamedArray& back = loaded.arrays.at(name);
    EXPECT_EQ(back.shape, array.shape) << name;
    ASSERT_EQ(back.is_float(), array.is_float()) << name;
    if (array.is_float()) {
      expect_same_bits(back.floats(), array.floats(), name);
    } else {
      expect_same_bits(back.doubles(), array.doubles(), name);
    }
  }
}

TEST(ModelBundle, SavingReplacesTheOldFileAndLeavesNoTemporary) {
  const auto dir = scratch("bundle_replace");
  const auto path = dir / "model.h5";
  ModelBundle first;
  first.text["version"] = "first";
  save_bundle(path, first);
  ModelBundle second;
  second.text["version"] = "second";
  second.arrays["w"] = NamedArray::of_floats({1}, {1.0f});
  save_bundle(path, second);
  EXPECT_EQ(load_bundle(path), second);
  std::size_t files = 0;
  for ([[maybe_unused]] const auto& entry : std::filesystem::directory_iterator(dir)) ++files;
  EXPECT_EQ(files, 1u);
}

TEST(ModelBundle, InvalidBundleIsRefusedAndTheOldFileSurvives) {
  const auto path = scratch("bundle_invalid") / "model.h5";
  ModelBundle good;
  good.text["version"] = "good";
  save_bundle(path, good);
  ModelBundle bad;
  bad.arrays["layer/0"] = NamedArray::of_doubles({1}, {1.0});
  EXPECT_THROW(save_bundle(path, bad), DataError);
  ModelBundle mismatched;
  mismatched.arrays["w"].shape = {3};
  mismatched.arrays["w"].values = std::vector<double>{1.0, 2.0};
  EXPECT_THROW(save_bundle(path, mismatched), DataError);
  EXPECT_THROW(NamedArray::of_floats({2, 2}, {1.0f}), DataError);
  EXPECT_EQ(load_bundle(path), good);
}

TEST(ModelBundle, UnwritableAndUnreadablePathsNameTheFile) {
  const auto dir = scratch("bundle_errors");
  try {
    save_bundle(dir / "no-such-dir" / "model.h5", ModelBundle{});
    FAIL() << "no exception";
  } catch (const IoError& e) {
    EXPECT_NE(std::string(e.what()).find("no-such-dir"), std::string::npos) << e.what();
  }
  EXPECT_THROW(load_bundle(dir / "missing.h5"), IoError);
  {
    std::ofstream text(dir / "plain.txt");
    text << "not hdf5\n";
  }
  try {
    load_bundle(dir / "plain.txt");
    FAIL() << "no exception";
  } catch (const FormatError& e) {
    EXPECT_NE(std::string(e.what()).find("plain.txt"), std::string::npos) << e.what();
  }
}

TEST(NamedArray, TypedAccessRefusesTheOtherType) {
  const NamedArray a = NamedArray::of_floats({2}, {1.0f, 2.0f});
  EXPECT_TRUE(a.is_float());
  EXPECT_EQ(a.element_count(), 2u);
  EXPECT_THROW(a.doubles("weights"), DataError);
  EXPECT_EQ(NamedArray::of_doubles({}, {3.0}).element_count(), 1u);
}

}  // namespace libseq::io
