#include "libseq/io/bundle.hpp"
#include "libseq/io/results.hpp"

#include <hdf5.h>

#include <algorithm>
#include <cstring>
#include <functional>
#include <system_error>
#include <unistd.h>

#include "libseq/error.hpp"

namespace libseq::io {

std::size_t NamedArray::size() const {
  return std::visit([](const auto& v) { return v.size(); }, values);
}

std::size_t NamedArray::element_count() const {
  std::size_t count = 1;
  for (std::size_t extent : shape) count *= extent;
  return count;
}

namespace {

template <typename Vector>
NamedArray make_array(std::vector<std::size_t> shape, Vector values) {
  NamedArray array;
  array.shape = std::move(shape);
  array.values = std::move(values);
  if (array.size() != array.element_count()) {
    throw DataError("model bundle array: " + std::to_string(array.size()) + " values do not fill a shape of " +
                    std::to_string(array.element_count()) + " elements");
  }
  return array;
}

// Owns one HDF5 identifier and closes it with the matching function.
class Handle {
 public:
  Handle(hid_t id, herr_t (*close)(hid_t)) : id_(id), close_(close) {}
  Handle(const Handle&) = delete;
  Handle& operator=(const Handle&) = delete;
  ~Handle() {
    if (id_ >= 0) close_(id_);
  }
  hid_t get() const { return id_; }
  bool valid() const { return id_ >= 0; }

 private:
  hid_t id_;
  herr_t (*close_)(hid_t);
};

// Silences HDF5's automatic error printing for the duration of one bundle call and restores the previous handler,
// so that errors surface as libseq exceptions with our messages and other code keeps its own setting.
class QuietHdf5 {
 public:
  QuietHdf5() {
    H5Eget_auto2(H5E_DEFAULT, &function_, &data_);
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  }
  ~QuietHdf5() { H5Eset_auto2(H5E_DEFAULT, function_, data_); }

 private:
  H5E_auto2_t function_ = nullptr;
  void* data_ = nullptr;
};

void check_name(const std::string& name, const char* kind) {
  if (name.empty() || name.find('/') != std::string::npos || name.find('\0') != std::string::npos || name == ".") {
    throw DataError(std::string("model bundle ") + kind + " name '" + name +
                    "': expected a non-empty name without '/' or NUL");
  }
}

void require(bool ok, const std::filesystem::path& path, const std::string& what) {
  if (!ok) throw IoError("model bundle " + path.string() + ": cannot " + what);
}

void write_string_attribute(hid_t object, const char* name, const std::string& value,
                            const std::filesystem::path& path) {
  Handle type(H5Tcopy(H5T_C_S1), H5Tclose);
  H5Tset_size(type.get(), value.size() + 1);
  H5Tset_strpad(type.get(), H5T_STR_NULLTERM);
  H5Tset_cset(type.get(), H5T_CSET_UTF8);
  Handle space(H5Screate(H5S_SCALAR), H5Sclose);
  Handle attribute(H5Acreate2(object, name, type.get(), space.get(), H5P_DEFAULT, H5P_DEFAULT), H5Aclose);
  require(attribute.valid() && H5Awrite(attribute.get(), type.get(), value.c_str()) >= 0, path,
          std::string("write attribute ") + name);
}

void write_int_attribute(hid_t object, const char* name, int value, const std::filesystem::path& path) {
  Handle space(H5Screate(H5S_SCALAR), H5Sclose);
  Handle attribute(H5Acreate2(object, name, H5T_STD_I32LE, space.get(), H5P_DEFAULT, H5P_DEFAULT), H5Aclose);
  require(attribute.valid() && H5Awrite(attribute.get(), H5T_NATIVE_INT, &value) >= 0, path,
          std::string("write attribute ") + name);
}

void write_bundle_file(const std::filesystem::path& path, const ModelBundle& bundle) {
  Handle file(H5Fcreate(path.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT), H5Fclose);
  require(file.valid(), path, "create the file");
  write_string_attribute(file.get(), "format", bundle_format_name, path);
  write_int_attribute(file.get(), "format_version", bundle_format_version, path);

  Handle text_group(H5Gcreate2(file.get(), "text", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT), H5Gclose);
  require(text_group.valid(), path, "create group /text");
  // Variable-length UTF-8 strings: any length including empty, stored byte for byte.
  Handle string_type(H5Tcopy(H5T_C_S1), H5Tclose);
  H5Tset_size(string_type.get(), H5T_VARIABLE);
  H5Tset_cset(string_type.get(), H5T_CSET_UTF8);
  for (const auto& [name, value] : bundle.text) {
    Handle space(H5Screate(H5S_SCALAR), H5Sclose);
    Handle dataset(H5Dcreate2(text_group.get(), name.c_str(), string_type.get(), space.get(), H5P_DEFAULT,
                              H5P_DEFAULT, H5P_DEFAULT),
                   H5Dclose);
    const char* data = value.c_str();
    require(dataset.valid() && H5Dwrite(dataset.get(), string_type.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, &data) >= 0,
            path, "write text entry '" + name + "'");
  }

  Handle array_group(H5Gcreate2(file.get(), "arrays", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT), H5Gclose);
  require(array_group.valid(), path, "create group /arrays");
  for (const auto& [name, array] : bundle.arrays) {
    std::vector<hsize_t> dims(array.shape.begin(), array.shape.end());
    Handle space(dims.empty() ? H5Screate(H5S_SCALAR) : H5Screate_simple(static_cast<int>(dims.size()), dims.data(),
                                                                          nullptr),
                 H5Sclose);
    const hid_t file_type = array.is_float() ? H5T_IEEE_F32LE : H5T_IEEE_F64LE;
    const hid_t memory_type = array.is_float() ? H5T_NATIVE_FLOAT : H5T_NATIVE_DOUBLE;
    Handle dataset(H5Dcreate2(array_group.get(), name.c_str(), file_type, space.get(), H5P_DEFAULT, H5P_DEFAULT,
                              H5P_DEFAULT),
                   H5Dclose);
    require(dataset.valid(), path, "create array '" + name + "'");
    if (array.size() > 0) {
      const void* data = array.is_float() ? static_cast<const void*>(array.floats().data())
                                          : static_cast<const void*>(array.doubles().data());
      require(H5Dwrite(dataset.get(), memory_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, data) >= 0, path,
              "write array '" + name + "'");
    }
  }
  require(H5Fflush(file.get(), H5F_SCOPE_GLOBAL) >= 0, path, "flush the file");
}

std::vector<std::string> member_names(hid_t group, const std::filesystem::path& path, const char* group_name) {
  H5G_info_t info;
  if (H5Gget_info(group, &info) < 0) throw FormatError("model bundle " + path.string() + ": cannot list " + group_name);
  std::vector<std::string> names;
  for (hsize_t i = 0; i < info.nlinks; ++i) {
    const ssize_t length = H5Lget_name_by_idx(group, ".", H5_INDEX_NAME, H5_ITER_INC, i, nullptr, 0, H5P_DEFAULT);
    if (length < 0) throw FormatError("model bundle " + path.string() + ": cannot read a name in " + group_name);
    std::string name(static_cast<std::size_t>(length), '\0');
    H5Lget_name_by_idx(group, ".", H5_INDEX_NAME, H5_ITER_INC, i, name.data(), name.size() + 1, H5P_DEFAULT);
    names.push_back(std::move(name));
  }
  return names;
}

std::string read_string_attribute(hid_t object, const char* name, const std::filesystem::path& path) {
  if (H5Aexists(object, name) <= 0) {
    throw FormatError("model bundle " + path.string() + ": root attribute '" + name +
                      "' is missing; not a runnel model bundle");
  }
  Handle attribute(H5Aopen(object, name, H5P_DEFAULT), H5Aclose);
  Handle type(H5Aget_type(attribute.get()), H5Tclose);
  if (H5Tget_class(type.get()) != H5T_STRING || H5Tis_variable_str(type.get()) > 0) {
    throw FormatError("model bundle " + path.string() + ": attribute '" + name + "' is not a fixed-length string");
  }
  std::string value(H5Tget_size(type.get()), '\0');
  H5Aread(attribute.get(), type.get(), value.data());
  value.resize(std::strlen(value.c_str()));
  return value;
}

}  // namespace

NamedArray NamedArray::of_doubles(std::vector<std::size_t> shape, std::vector<double> values) {
  return make_array(std::move(shape), std::move(values));
}

NamedArray NamedArray::of_floats(std::vector<std::size_t> shape, std::vector<float> values) {
  return make_array(std::move(shape), std::move(values));
}

const std::vector<double>& NamedArray::doubles(const std::string& what) const {
  if (is_float()) throw DataError(what + ": expected double values, the array holds float");
  return std::get<0>(values);
}

const std::vector<float>& NamedArray::floats(const std::string& what) const {
  if (!is_float()) throw DataError(what + ": expected float values, the array holds double");
  return std::get<1>(values);
}

void save_bundle(const std::filesystem::path& path, const ModelBundle& bundle) {
  for (const auto& [name, value] : bundle.text) {
    check_name(name, "text");
    if (value.find('\0') != std::string::npos) {
      throw DataError("model bundle text entry '" + name + "': the value contains a NUL character");
    }
  }
  for (const auto& [name, array] : bundle.arrays) {
    check_name(name, "array");
    if (array.size() != array.element_count()) {
      throw DataError("model bundle array '" + name + "': " + std::to_string(array.size()) +
                      " values do not fill its shape of " + std::to_string(array.element_count()) + " elements");
    }
  }
  QuietHdf5 quiet;
  write_atomically(path, [&](const std::filesystem::path& temporary) { write_bundle_file(temporary, bundle); });
}

ModelBundle load_bundle(const std::filesystem::path& path) {
  QuietHdf5 quiet;
  if (!std::filesystem::exists(path)) throw IoError("model bundle " + path.string() + ": no such file");
  if (H5Fis_hdf5(path.c_str()) <= 0) {
    throw FormatError("model bundle " + path.string() + ": not an HDF5 file");
  }
  Handle file(H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT), H5Fclose);
  if (!file.valid()) throw IoError("model bundle " + path.string() + ": cannot open the file for reading");
  const std::string format = read_string_attribute(file.get(), "format", path);
  if (format != bundle_format_name) {
    throw FormatError("model bundle " + path.string() + ": root attribute format = '" + format + "', expected '" +
                      bundle_format_name + "'");
  }
  int version = 0;
  {
    if (H5Aexists(file.get(), "format_version") <= 0) {
      throw FormatError("model bundle " + path.string() + ": root attribute 'format_version' is missing");
    }
    Handle attribute(H5Aopen(file.get(), "format_version", H5P_DEFAULT), H5Aclose);
    H5Aread(attribute.get(), H5T_NATIVE_INT, &version);
  }
  if (version < 1 || version > bundle_format_version) {
    throw FormatError("model bundle " + path.string() + ": format_version " + std::to_string(version) +
                      " is not supported (this build reads versions 1 to " + std::to_string(bundle_format_version) +
                      ")");
  }

  ModelBundle bundle;
  Handle text_group(H5Gopen2(file.get(), "text", H5P_DEFAULT), H5Gclose);
  if (!text_group.valid()) throw FormatError("model bundle " + path.string() + ": group /text is missing");
  Handle string_type(H5Tcopy(H5T_C_S1), H5Tclose);
  H5Tset_size(string_type.get(), H5T_VARIABLE);
  H5Tset_cset(string_type.get(), H5T_CSET_UTF8);
  for (const std::string& name : member_names(text_group.get(), path, "/text")) {
    Handle dataset(H5Dopen2(text_group.get(), name.c_str(), H5P_DEFAULT), H5Dclose);
    Handle type(H5Dget_type(dataset.get()), H5Tclose);
    Handle space(H5Dget_space(dataset.get()), H5Sclose);
    if (H5Tget_class(type.get()) != H5T_STRING || H5Tis_variable_str(type.get()) <= 0 ||
        H5Sget_simple_extent_type(space.get()) != H5S_SCALAR) {
      throw FormatError("model bundle " + path.string() + ": text entry '" + name +
                        "' is not a scalar variable-length string");
    }
    char* data = nullptr;
    if (H5Dread(dataset.get(), string_type.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, &data) < 0) {
      throw FormatError("model bundle " + path.string() + ": cannot read text entry '" + name + "'");
    }
    bundle.text[name] = data != nullptr ? std::string(data) : std::string();
    H5Dvlen_reclaim(string_type.get(), space.get(), H5P_DEFAULT, &data);
  }

  Handle array_group(H5Gopen2(file.get(), "arrays", H5P_DEFAULT), H5Gclose);
  if (!array_group.valid()) throw FormatError("model bundle " + path.string() + ": group /arrays is missing");
  for (const std::string& name : member_names(array_group.get(), path, "/arrays")) {
    Handle dataset(H5Dopen2(array_group.get(), name.c_str(), H5P_DEFAULT), H5Dclose);
    Handle type(H5Dget_type(dataset.get()), H5Tclose);
    Handle space(H5Dget_space(dataset.get()), H5Sclose);
    if (H5Tget_class(type.get()) != H5T_FLOAT || (H5Tget_size(type.get()) != 4 && H5Tget_size(type.get()) != 8)) {
      throw FormatError("model bundle " + path.string() + ": array '" + name +
                        "' is not a 32- or 64-bit floating-point dataset");
    }
    const int rank = H5Sget_simple_extent_ndims(space.get());
    std::vector<hsize_t> dims(static_cast<std::size_t>(std::max(rank, 0)));
    if (rank > 0) H5Sget_simple_extent_dims(space.get(), dims.data(), nullptr);
    std::vector<std::size_t> shape(dims.begin(), dims.end());
    std::size_t count = 1;
    for (std::size_t extent : shape) count *= extent;
    const bool is_float = H5Tget_size(type.get()) == 4;
    NamedArray array;
    array.shape = shape;
    herr_t status = 0;
    if (is_float) {
      std::vector<float> values(count);
      if (count > 0) status = H5Dread(dataset.get(), H5T_NATIVE_FLOAT, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data());
      array.values = std::move(values);
    } else {
      std::vector<double> values(count);
      if (count > 0) status = H5Dread(dataset.get(), H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data());
      array.values = std::move(values);
    }
    if (status < 0) throw FormatError("model bundle " + path.string() + ": cannot read array '" + name + "'");
    bundle.arrays.emplace(name, std::move(array));
  }
  return bundle;
}

}  // namespace libseq::io
