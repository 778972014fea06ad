#include "hdf5_util_impl.hpp"

#include "libseq/error.hpp"

namespace libseq::io::detail {

H5Handle& H5Handle::operator=(H5Handle&& other) noexcept {
  if (this != &other) {
    if (id_ >= 0 && closer_) closer_(id_);
    id_ = other.id_;
    closer_ = other.closer_;
    other.id_ = -1;
  }
  return *this;
}

H5Handle::~H5Handle() {
  if (id_ >= 0 && closer_) closer_(id_);
}

namespace {

// Silences the HDF5 library's own error printing; our exceptions say what failed.
void quiet_hdf5() {
  static const bool done = [] {
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
    return true;
  }();
  (void)done;
}

H5Handle string_type() {
  hid_t type = H5Tcopy(H5T_C_S1);
  H5Tset_size(type, H5T_VARIABLE);
  H5Tset_cset(type, H5T_CSET_UTF8);
  return {type, H5Tclose};
}

}  // namespace

H5File H5File::create(const std::filesystem::path& path) {
  quiet_hdf5();
  hid_t file = H5Fcreate(path.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
  if (file < 0) throw IoError(path.string() + ": cannot create the HDF5 file (check the folder exists and is writable)");
  return H5File(path, H5Handle(file, H5Fclose));
}

H5File H5File::open(const std::filesystem::path& path) {
  quiet_hdf5();
  if (!std::filesystem::exists(path)) throw IoError(path.string() + ": no such file");
  hid_t file = H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
  if (file < 0) throw IoError(path.string() + ": cannot open as HDF5 (not HDF5, truncated or damaged)");
  return H5File(path, H5Handle(file, H5Fclose));
}

void H5File::close() {
  if (file_.valid()) {
    if (H5Fclose(file_.release()) < 0) fail("closing the file failed (disk full?)");
  }
}

void H5File::fail(const std::string& what) const { throw IoError(path_.string() + ": " + what); }

H5Handle H5File::create_group(hid_t parent, const std::string& name) const {
  hid_t group = H5Gcreate2(parent, name.c_str(), H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
  if (group < 0) fail("cannot create group '" + name + "'");
  return {group, H5Gclose};
}

H5Handle H5File::open_group(hid_t parent, const std::string& name) const {
  if (!exists(parent, name)) throw FormatError(path_.string() + ": group '" + name + "' is missing");
  hid_t group = H5Gopen2(parent, name.c_str(), H5P_DEFAULT);
  if (group < 0) throw FormatError(path_.string() + ": '" + name + "' is not a group");
  return {group, H5Gclose};
}

bool H5File::exists(hid_t parent, const std::string& name) const { return H5Lexists(parent, name.c_str(), H5P_DEFAULT) > 0; }

std::vector<std::string> H5File::children(hid_t group) const {
  H5G_info_t info;
  if (H5Gget_info(group, &info) < 0) fail("cannot list a group");
  std::vector<std::string> names;
  for (hsize_t i = 0; i < info.nlinks; ++i) {
    const ssize_t size = H5Lget_name_by_idx(group, ".", H5_INDEX_CRT_ORDER, H5_ITER_INC, i, nullptr, 0, H5P_DEFAULT);
    if (size < 0) {
      // Creation order is not tracked in this file: fall back to name order.
      const ssize_t by_name = H5Lget_name_by_idx(group, ".", H5_INDEX_NAME, H5_ITER_INC, i, nullptr, 0, H5P_DEFAULT);
      std::string name(static_cast<std::size_t>(by_name), '\0');
      H5Lget_name_by_idx(group, ".", H5_INDEX_NAME, H5_ITER_INC, i, name.data(), name.size() + 1, H5P_DEFAULT);
      names.push_back(name);
      continue;
    }
    std::string name(static_cast<std::size_t>(size), '\0');
    H5Lget_name_by_idx(group, ".", H5_INDEX_CRT_ORDER, H5_ITER_INC, i, name.data(), name.size() + 1, H5P_DEFAULT);
    names.push_back(name);
  }
  return names;
}

void H5File::attr_string(hid_t object, const std::string& name, const std::string& value) const {
  H5Handle type = string_type();
  H5Handle space(H5Screate(H5S_SCALAR), H5Sclose);
  H5Handle attr(H5Acreate2(object, name.c_str(), type.get(), space.get(), H5P_DEFAULT, H5P_DEFAULT), H5Aclose);
  const char* text = value.c_str();
  if (!attr.valid() || H5Awrite(attr.get(), type.get(), &text) < 0) fail("cannot write attribute '" + name + "'");
}

void H5File::attr_double(hid_t object, const std::string& name, double value) const {
  attr_doubles(object, name, {value});
}

void H5File::attr_int(hid_t object, const std::string& name, std::int64_t value) const {
  H5Handle space(H5Screate(H5S_SCALAR), H5Sclose);
  H5Handle attr(H5Acreate2(object, name.c_str(), H5T_STD_I64LE, space.get(), H5P_DEFAULT, H5P_DEFAULT), H5Aclose);
  if (!attr.valid() || H5Awrite(attr.get(), H5T_NATIVE_INT64, &value) < 0) {
    fail("cannot write attribute '" + name + "'");
  }
}

void H5File::attr_uint64(hid_t object, const std::string& name, std::uint64_t value) const {
  H5Handle space(H5Screate(H5S_SCALAR), H5Sclose);
  H5Handle attr(H5Acreate2(object, name.c_str(), H5T_STD_U64LE, space.get(), H5P_DEFAULT, H5P_DEFAULT), H5Aclose);
  if (!attr.valid() || H5Awrite(attr.get(), H5T_NATIVE_UINT64, &value) < 0) {
    fail("cannot write attribute '" + name + "'");
  }
}

std::uint64_t H5File::read_attr_uint64(hid_t object, const std::string& name) const {
  if (!has_attr(object, name)) throw FormatError(path_.string() + ": attribute '" + name + "' is missing");
  H5Handle attr(H5Aopen(object, name.c_str(), H5P_DEFAULT), H5Aclose);
  std::uint64_t value = 0;
  if (H5Aread(attr.get(), H5T_NATIVE_UINT64, &value) < 0) fail("cannot read attribute '" + name + "'");
  return value;
}

void H5File::attr_doubles(hid_t object, const std::string& name, const std::vector<double>& values) const {
  const hsize_t count = values.size();
  H5Handle space(values.size() == 1 ? H5Screate(H5S_SCALAR) : H5Screate_simple(1, &count, nullptr), H5Sclose);
  H5Handle attr(H5Acreate2(object, name.c_str(), H5T_IEEE_F64LE, space.get(), H5P_DEFAULT, H5P_DEFAULT), H5Aclose);
  if (!attr.valid() || H5Awrite(attr.get(), H5T_NATIVE_DOUBLE, values.data()) < 0) {
    fail("cannot write attribute '" + name + "'");
  }
}

bool H5File::has_attr(hid_t object, const std::string& name) const { return H5Aexists(object, name.c_str()) > 0; }

std::string H5File::read_attr_string(hid_t object, const std::string& name) const {
  if (!has_attr(object, name)) throw FormatError(path_.string() + ": attribute '" + name + "' is missing");
  H5Handle attr(H5Aopen(object, name.c_str(), H5P_DEFAULT), H5Aclose);
  H5Handle type(H5Aget_type(attr.get()), H5Tclose);
  if (H5Tget_class(type.get()) != H5T_STRING) {
    throw FormatError(path_.string() + ": attribute '" + name + "' is not a string");
  }
  if (H5Tis_variable_str(type.get()) > 0) {
    H5Handle memory = string_type();
    char* text = nullptr;
    if (H5Aread(attr.get(), memory.get(), &text) < 0) fail("cannot read attribute '" + name + "'");
    std::string value = text ? text : "";
    H5Handle space(H5Aget_space(attr.get()), H5Sclose);
    H5Dvlen_reclaim(memory.get(), space.get(), H5P_DEFAULT, &text);
    return value;
  }
  const std::size_t size = H5Tget_size(type.get());
  std::string value(size, '\0');
  if (H5Aread(attr.get(), type.get(), value.data()) < 0) fail("cannot read attribute '" + name + "'");
  value.resize(value.find('\0') == std::string::npos ? size : value.find('\0'));
  return value;
}

double H5File::read_attr_double(hid_t object, const std::string& name) const {
  if (!has_attr(object, name)) throw FormatError(path_.string() + ": attribute '" + name + "' is missing");
  H5Handle attr(H5Aopen(object, name.c_str(), H5P_DEFAULT), H5Aclose);
  double value = 0.0;
  if (H5Aread(attr.get(), H5T_NATIVE_DOUBLE, &value) < 0) fail("cannot read attribute '" + name + "'");
  return value;
}

std::int64_t H5File::read_attr_int(hid_t object, const std::string& name) const {
  if (!has_attr(object, name)) throw FormatError(path_.string() + ": attribute '" + name + "' is missing");
  H5Handle attr(H5Aopen(object, name.c_str(), H5P_DEFAULT), H5Aclose);
  std::int64_t value = 0;
  if (H5Aread(attr.get(), H5T_NATIVE_INT64, &value) < 0) fail("cannot read attribute '" + name + "'");
  return value;
}

void H5File::write_numeric(hid_t parent, const std::string& name, const std::vector<hsize_t>& dims, hid_t file_type,
                           hid_t memory_type, const void* data) const {
  H5Handle space(H5Screate_simple(static_cast<int>(dims.size()), dims.data(), nullptr), H5Sclose);
  H5Handle properties(H5Pcreate(H5P_DATASET_CREATE), H5Pclose);
  hsize_t total = 1;
  for (auto d : dims) total *= d;
  // Compress larger arrays (chunked by whole rows of the first dimension); small ones stay contiguous.
  if (total >= 4096 && !dims.empty() && dims[0] > 0) {
    std::vector<hsize_t> chunk(dims);
    chunk[0] = std::max<hsize_t>(1, std::min<hsize_t>(dims[0], 65536 / std::max<hsize_t>(1, total / dims[0])));
    H5Pset_chunk(properties.get(), static_cast<int>(chunk.size()), chunk.data());
    H5Pset_deflate(properties.get(), 4);
  }
  H5Handle dataset(H5Dcreate2(parent, name.c_str(), file_type, space.get(), H5P_DEFAULT, properties.get(), H5P_DEFAULT),
                   H5Dclose);
  if (!dataset.valid()) fail("cannot create dataset '" + name + "'");
  if (total > 0 && H5Dwrite(dataset.get(), memory_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, data) < 0) {
    fail("cannot write dataset '" + name + "'");
  }
}

void H5File::write_floats(hid_t parent, const std::string& name, const std::vector<hsize_t>& dims,
                          const std::vector<float>& values) const {
  write_numeric(parent, name, dims, H5T_IEEE_F32LE, H5T_NATIVE_FLOAT, values.data());
}

void H5File::write_doubles(hid_t parent, const std::string& name, const std::vector<hsize_t>& dims,
                           const std::vector<double>& values) const {
  write_numeric(parent, name, dims, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data());
}

void H5File::write_int64s(hid_t parent, const std::string& name, const std::vector<std::int64_t>& values) const {
  write_numeric(parent, name, {values.size()}, H5T_STD_I64LE, H5T_NATIVE_INT64, values.data());
}

void H5File::write_uint64s(hid_t parent, const std::string& name, const std::vector<std::uint64_t>& values) const {
  write_numeric(parent, name, {values.size()}, H5T_STD_U64LE, H5T_NATIVE_UINT64, values.data());
}

void H5File::write_strings(hid_t parent, const std::string& name, const std::vector<std::string>& values) const {
  H5Handle type = string_type();
  const hsize_t count = values.size();
  H5Handle space(H5Screate_simple(1, &count, nullptr), H5Sclose);
  H5Handle dataset(H5Dcreate2(parent, name.c_str(), type.get(), space.get(), H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT),
                   H5Dclose);
  if (!dataset.valid()) fail("cannot create dataset '" + name + "'");
  std::vector<const char*> pointers;
  for (const auto& v : values) pointers.push_back(v.c_str());
  if (count > 0 && H5Dwrite(dataset.get(), type.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, pointers.data()) < 0) {
    fail("cannot write dataset '" + name + "'");
  }
}

template <typename T>
std::vector<T> H5File::read_numeric(hid_t parent, const std::string& name, hid_t memory_type,
                                    std::vector<hsize_t>* dims) const {
  if (!exists(parent, name)) throw FormatError(path_.string() + ": dataset '" + name + "' is missing");
  H5Handle dataset(H5Dopen2(parent, name.c_str(), H5P_DEFAULT), H5Dclose);
  if (!dataset.valid()) throw FormatError(path_.string() + ": '" + name + "' is not a dataset");
  H5Handle space(H5Dget_space(dataset.get()), H5Sclose);
  const int rank = H5Sget_simple_extent_ndims(space.get());
  std::vector<hsize_t> shape(static_cast<std::size_t>(std::max(rank, 0)));
  H5Sget_simple_extent_dims(space.get(), shape.data(), nullptr);
  hsize_t total = 1;
  for (auto d : shape) total *= d;
  std::vector<T> values(total);
  if (total > 0 && H5Dread(dataset.get(), memory_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data()) < 0) {
    fail("cannot read dataset '" + name + "'");
  }
  if (dims) *dims = shape;
  return values;
}

std::vector<float> H5File::read_floats(hid_t parent, const std::string& name, std::vector<hsize_t>* dims) const {
  return read_numeric<float>(parent, name, H5T_NATIVE_FLOAT, dims);
}

std::vector<double> H5File::read_doubles(hid_t parent, const std::string& name, std::vector<hsize_t>* dims) const {
  return read_numeric<double>(parent, name, H5T_NATIVE_DOUBLE, dims);
}

std::vector<std::int64_t> H5File::read_int64s(hid_t parent, const std::string& name) const {
  return read_numeric<std::int64_t>(parent, name, H5T_NATIVE_INT64, nullptr);
}

std::vector<std::uint64_t> H5File::read_uint64s(hid_t parent, const std::string& name) const {
  return read_numeric<std::uint64_t>(parent, name, H5T_NATIVE_UINT64, nullptr);
}

std::vector<std::string> H5File::read_strings(hid_t parent, const std::string& name) const {
  if (!exists(parent, name)) throw FormatError(path_.string() + ": dataset '" + name + "' is missing");
  H5Handle dataset(H5Dopen2(parent, name.c_str(), H5P_DEFAULT), H5Dclose);
  H5Handle space(H5Dget_space(dataset.get()), H5Sclose);
  const hssize_t count = H5Sget_simple_extent_npoints(space.get());
  H5Handle type = string_type();
  std::vector<char*> pointers(static_cast<std::size_t>(count), nullptr);
  if (count > 0 && H5Dread(dataset.get(), type.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, pointers.data()) < 0) {
    fail("cannot read string dataset '" + name + "'");
  }
  std::vector<std::string> values;
  for (char* p : pointers) values.emplace_back(p ? p : "");
  if (count > 0) H5Dvlen_reclaim(type.get(), space.get(), H5P_DEFAULT, pointers.data());
  return values;
}

}  // namespace libseq::io::detail
