#pragma once
// Test helper: writes runnel panel layout files (and broken variants) with the HDF5 C API, so that the reader
// tests control every dataset, type and attribute. Used by hdf5_reader_test.cpp and reader_test.cpp only.

#include <hdf5.h>

#include <cstdint>
#include <filesystem>
#include <limits>
#include <stdexcept>
#include <string>
#include <vector>

namespace libseq::test {

class Hdf5Builder {
 public:
  explicit Hdf5Builder(const std::filesystem::path& path)
      : file_(H5Fcreate(path.string().c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT)) {
    if (file_ < 0) throw std::runtime_error("cannot create " + path.string());
    link_ = H5Pcreate(H5P_LINK_CREATE);
    H5Pset_create_intermediate_group(link_, 1);
  }
  ~Hdf5Builder() {
    H5Pclose(link_);
    H5Fclose(file_);
  }
  Hdf5Builder(const Hdf5Builder&) = delete;
  Hdf5Builder& operator=(const Hdf5Builder&) = delete;

  void string_attribute(const std::string& object, const char* name, const std::string& value) {
    const hid_t type = vlen_string_type();
    const hid_t space = H5Screate(H5S_SCALAR);
    const char* text = value.c_str();
    const hid_t attribute =
        H5Acreate_by_name(file_, object.c_str(), name, type, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(attribute, type, &text);
    H5Aclose(attribute);
    H5Sclose(space);
    H5Tclose(type);
  }
  void number_attribute(const std::string& object, const char* name, double value, hid_t file_type) {
    const hid_t space = H5Screate(H5S_SCALAR);
    const hid_t attribute =
        H5Acreate_by_name(file_, object.c_str(), name, file_type, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(attribute, H5T_NATIVE_DOUBLE, &value);
    H5Aclose(attribute);
    H5Sclose(space);
  }
  void int64_dataset(const std::string& object, const std::vector<std::int64_t>& values) {
    write(object, {values.size()}, H5T_STD_I64LE, H5T_NATIVE_INT64, values.data());
  }
  void double_dataset(const std::string& object, const std::vector<double>& values) {
    write(object, {values.size()}, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data());
  }
  void string_dataset(const std::string& object, const std::vector<std::string>& values) {
    std::vector<const char*> pointers;
    for (const auto& v : values) pointers.push_back(v.c_str());
    const hid_t type = vlen_string_type();
    write(object, {values.size()}, type, type, pointers.data());
    H5Tclose(type);
  }
  /// A [rows, cols] (or [cols] when rows == 0) dataset stored as float64 (`as_double`) or float32.
  void matrix_dataset(const std::string& object, std::size_t rows, std::size_t cols, const std::vector<double>& values,
                      bool as_double) {
    std::vector<hsize_t> dims = rows ? std::vector<hsize_t>{rows, cols} : std::vector<hsize_t>{cols};
    write(object, dims, as_double ? H5T_IEEE_F64LE : H5T_IEEE_F32LE, H5T_NATIVE_DOUBLE, values.data());
  }

 private:
  static hid_t vlen_string_type() {
    const hid_t type = H5Tcopy(H5T_C_S1);
    H5Tset_size(type, H5T_VARIABLE);
    H5Tset_cset(type, H5T_CSET_UTF8);
    return type;
  }
  void write(const std::string& object, const std::vector<hsize_t>& dims, hid_t file_type, hid_t memory_type,
             const void* data) {
    const hid_t space = H5Screate_simple(static_cast<int>(dims.size()), dims.data(), nullptr);
    const hid_t dataset = H5Dcreate2(file_, object.c_str(), file_type, space, link_, H5P_DEFAULT, H5P_DEFAULT);
    if (dataset < 0) throw std::runtime_error("cannot create dataset " + object);
    H5Dwrite(dataset, memory_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, data);
    H5Dclose(dataset);
    H5Sclose(space);
  }
  hid_t file_;
  hid_t link_;
};

/// Values of the standard test panel: discharge q(s, t) = 10 s + t + 0.5 and precipitation pr(s, t) = s - 0.25 t.
inline double test_q(std::size_t s, std::size_t t) {
  return 10.0 * static_cast<double>(s) + static_cast<double>(t) + 0.5;
}
inline double test_pr(std::size_t s, std::size_t t) { return static_cast<double>(s) - 0.25 * static_cast<double>(t); }

/// What to break in the standard test panel.
struct PanelFileFaults {
  std::vector<std::int64_t> times;  ///< replaces the daily axis from 2001-01-01 when not empty
  bool q_one_dimensional = false;   ///< /variables/q written as [time]
  bool no_layout_attribute = false;
  std::string time_units = "seconds since 1970-01-01T00:00:00Z";
  std::size_t all_missing_site = 99;  ///< index of a site whose values are all NaN
  bool inf_in_pr = false;             ///< +Inf at site 1, time 2 of pr
  bool huge_in_q = false;             ///< 1e300 (beyond float32) at site 2, time 1 of the float64 q
};

/// The standard test panel: sites A, B, C; 5 daily steps from 2001-01-01; q float64 with _FillValue -1 at
/// (site 0, time 3); pr float32 with standard_name precipitation_flux.
inline void write_test_panel(const std::filesystem::path& path, const PanelFileFaults& faults = {}) {
  Hdf5Builder b(path);
  const std::size_t sites = 3;
  std::vector<std::int64_t> times = faults.times;
  if (times.empty()) {
    for (std::int64_t i = 0; i < 5; ++i) times.push_back(978307200 + i * 86400);  // 2001-01-01T00:00:00Z
  }
  const std::size_t steps = times.size();
  if (!faults.no_layout_attribute) b.string_attribute("/", "runnel_layout", "panel");
  b.number_attribute("/", "runnel_layout_version", 1, H5T_STD_I32LE);
  b.int64_dataset("/time", times);
  b.string_attribute("/time", "units", faults.time_units);
  b.string_dataset("/sites/id", {"A", "B", "C"});
  b.string_dataset("/sites/name", {"Alpha \"quoted\"", "Beta", ""});
  b.double_dataset("/sites/latitude", {10.5, -20.25, 0});
  b.double_dataset("/sites/longitude", {100, 101, 102});
  b.double_dataset("/sites/attributes/area_km2", {1.5, 2.5, 3.5});
  std::vector<double> q(sites * steps);
  std::vector<double> pr(sites * steps);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (std::size_t s = 0; s < sites; ++s) {
    for (std::size_t t = 0; t < steps; ++t) {
      const bool dead = s == faults.all_missing_site;
      q[s * steps + t] = dead ? nan : test_q(s, t);
      pr[s * steps + t] = dead ? nan : test_pr(s, t);
    }
  }
  q[3] = -1.0;  // the fill value
  if (faults.inf_in_pr) pr[1 * steps + 2] = std::numeric_limits<double>::infinity();
  if (faults.huge_in_q) q[2 * steps + 1] = 1e300;
  if (faults.q_one_dimensional) {
    b.matrix_dataset("/variables/q", 0, steps, std::vector<double>(q.begin(), q.begin() + static_cast<long>(steps)),
                     true);
  } else {
    b.matrix_dataset("/variables/q", sites, steps, q, true);
  }
  b.string_attribute("/variables/q", "units", "m3 s-1");
  b.string_attribute("/variables/q", "long_name", "discharge");
  b.number_attribute("/variables/q", "_FillValue", -1.0, H5T_IEEE_F64LE);
  b.matrix_dataset("/variables/pr", sites, steps, pr, false);
  b.string_attribute("/variables/pr", "units", "mm day-1");
  b.string_attribute("/variables/pr", "standard_name", "precipitation_flux");
}

}  // namespace libseq::test
