#include "libseq/io/hdf5_reader.hpp"

#include <hdf5.h>

#include <algorithm>
#include <cmath>
#include <optional>
#include <set>
#include <utility>

#include "hdf5_reader_impl.hpp"
#include "libseq/error.hpp"
#include "reader_impl.hpp"

namespace libseq::io {

namespace {

// HDF5 prints its error stack to stderr by default; the reader reports through exceptions instead, so the
// automatic printing is switched off for the duration of one call and restored afterwards.
class QuietHdf5 {
 public:
  QuietHdf5() {
    H5Eget_auto2(H5E_DEFAULT, &function_, &data_);
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  }
  ~QuietHdf5() { H5Eset_auto2(H5E_DEFAULT, function_, data_); }
  QuietHdf5(const QuietHdf5&) = delete;
  QuietHdf5& operator=(const QuietHdf5&) = delete;

 private:
  H5E_auto2_t function_ = nullptr;
  void* data_ = nullptr;
};

// Owns one HDF5 identifier and closes it with the matching H5?close.
class Handle {
 public:
  Handle() = default;
  Handle(hid_t id, herr_t (*close)(hid_t)) : id_(id), close_(close) {}
  ~Handle() { reset(); }
  Handle(Handle&& other) noexcept : id_(std::exchange(other.id_, H5I_INVALID_HID)), close_(other.close_) {}
  Handle& operator=(Handle&& other) noexcept {
    if (this != &other) {
      reset();
      id_ = std::exchange(other.id_, H5I_INVALID_HID);
      close_ = other.close_;
    }
    return *this;
  }
  Handle(const Handle&) = delete;
  Handle& operator=(const Handle&) = delete;
  hid_t get() const { return id_; }
  bool valid() const { return id_ >= 0; }

 private:
  void reset() {
    if (id_ >= 0 && close_ != nullptr) close_(id_);
    id_ = H5I_INVALID_HID;
  }
  hid_t id_ = H5I_INVALID_HID;
  herr_t (*close_)(hid_t) = nullptr;
};

// Everything about one open file that messages need.
struct File {
  std::string source;  // the path as given, for messages
  Handle file;

  [[noreturn]] void format_error(const std::string& object, const std::string& why) const {
    throw FormatError(source + ": " + object + ": " + why +
                      " (runnel panel layout, version 1; see "
                      "docs/input-formats.md)");
  }
  [[noreturn]] void io_error(const std::string& object, const std::string& what) const {
    throw IoError(source + ": " + object + ": " + what + " failed (file truncated or damaged?)");
  }

  bool exists(const std::string& object) const {
    // H5Lexists needs every intermediate group to exist, so walk the path one component at a time.
    std::size_t pos = 1;
    while (pos <= object.size()) {
      std::size_t next = object.find('/', pos);
      if (next == std::string::npos) next = object.size();
      if (H5Lexists(file.get(), object.substr(0, next).c_str(), H5P_DEFAULT) <= 0) return false;
      pos = next + 1;
    }
    return true;
  }

  Handle open_dataset(const std::string& object) const {
    if (!exists(object)) format_error(object, "dataset missing");
    Handle object_handle(H5Oopen(file.get(), object.c_str(), H5P_DEFAULT), H5Oclose);
    if (!object_handle.valid()) io_error(object, "opening");
    if (H5Iget_type(object_handle.get()) != H5I_DATASET) format_error(object, "is not a dataset");
    Handle dataset(H5Dopen2(file.get(), object.c_str(), H5P_DEFAULT), H5Dclose);
    if (!dataset.valid()) io_error(object, "opening");
    return dataset;
  }

  std::vector<hsize_t> dimensions(hid_t dataset, const std::string& object) const {
    Handle space(H5Dget_space(dataset), H5Sclose);
    if (!space.valid()) io_error(object, "reading the dataspace");
    const int rank = H5Sget_simple_extent_ndims(space.get());
    if (rank < 0) io_error(object, "reading the dataspace");
    std::vector<hsize_t> dims(static_cast<std::size_t>(rank));
    if (rank > 0) H5Sget_simple_extent_dims(space.get(), dims.data(), nullptr);
    return dims;
  }

  std::vector<std::string> names_in_group(const std::string& group) const {
    std::vector<std::string> names;
    if (!exists(group)) return names;
    Handle g(H5Gopen2(file.get(), group.c_str(), H5P_DEFAULT), H5Gclose);
    if (!g.valid()) format_error(group, "is not a group");
    auto collect = [](hid_t, const char* name, const H5L_info_t*, void* out) -> herr_t {
      static_cast<std::vector<std::string>*>(out)->emplace_back(name);
      return 0;
    };
    hsize_t index = 0;
    if (H5Literate(g.get(), H5_INDEX_NAME, H5_ITER_INC, &index, collect, &names) < 0) {
      io_error(group, "listing the members");
    }
    return names;
  }
};

std::string describe_dims(const std::vector<hsize_t>& dims) {
  std::string out = std::to_string(dims.size()) + " dimension(s) [";
  for (std::size_t i = 0; i < dims.size(); ++i) out += (i ? ", " : "") + std::to_string(dims[i]);
  return out + "]";
}

// Reads the values of a string dataset or attribute, variable-length or fixed-length alike. `read` performs the
// H5Dread / H5Aread into the buffer with the given memory type.
template <typename Read>
std::vector<std::string> read_strings(hid_t file_type, hid_t space, std::size_t count, Read read) {
  std::vector<std::string> out;
  out.reserve(count);
  Handle memory_type(H5Tcopy(H5T_C_S1), H5Tclose);
  H5Tset_cset(memory_type.get(), H5Tget_cset(file_type));
  if (H5Tis_variable_str(file_type) > 0) {
    H5Tset_size(memory_type.get(), H5T_VARIABLE);
    std::vector<char*> buffer(count, nullptr);
    if (!read(memory_type.get(), static_cast<void*>(buffer.data()))) return {};
    for (char* text : buffer) out.emplace_back(text ? text : "");
    H5Dvlen_reclaim(memory_type.get(), space, H5P_DEFAULT, buffer.data());
  } else {
    const std::size_t width = H5Tget_size(file_type);
    H5Tset_size(memory_type.get(), width);
    H5Tset_strpad(memory_type.get(), H5Tget_strpad(file_type));
    std::vector<char> buffer(count * width + 1, '\0');
    if (!read(memory_type.get(), static_cast<void*>(buffer.data()))) return {};
    for (std::size_t i = 0; i < count; ++i) {
      std::string text(buffer.data() + i * width, width);
      text.erase(std::find(text.begin(), text.end(), '\0'), text.end());
      if (H5Tget_strpad(file_type) == H5T_STR_SPACEPAD) text.erase(text.find_last_not_of(' ') + 1);
      out.push_back(std::move(text));
    }
  }
  return out;
}

std::vector<std::string> read_string_dataset(const File& f, const std::string& object, std::size_t expected) {
  Handle dataset = f.open_dataset(object);
  const auto dims = f.dimensions(dataset.get(), object);
  if (dims.size() != 1 || (expected && dims[0] != expected)) {
    std::string wanted = "expected 1 dimension [site";
    if (expected) wanted += std::string("=").append(std::to_string(expected));
    f.format_error(object, "has " + describe_dims(dims) + ", " + wanted + "]");
  }
  Handle type(H5Dget_type(dataset.get()), H5Tclose);
  if (H5Tget_class(type.get()) != H5T_STRING) f.format_error(object, "is not a string dataset");
  Handle space(H5Dget_space(dataset.get()), H5Sclose);
  bool ok = true;
  auto strings = read_strings(type.get(), space.get(), dims[0], [&](hid_t memory_type, void* buffer) {
    ok = H5Dread(dataset.get(), memory_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, buffer) >= 0;
    return ok;
  });
  if (!ok) f.io_error(object, "reading");
  return strings;
}

std::vector<double> read_double_dataset(const File& f, const std::string& object, std::size_t expected) {
  Handle dataset = f.open_dataset(object);
  const auto dims = f.dimensions(dataset.get(), object);
  if (dims.size() != 1 || dims[0] != expected) {
    f.format_error(object,
                   "has " + describe_dims(dims) + ", expected 1 dimension [site=" + std::to_string(expected) + "]");
  }
  Handle type(H5Dget_type(dataset.get()), H5Tclose);
  const H5T_class_t type_class = H5Tget_class(type.get());
  if (type_class != H5T_FLOAT && type_class != H5T_INTEGER) f.format_error(object, "is not numeric");
  std::vector<double> values(expected);
  if (expected && H5Dread(dataset.get(), H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data()) < 0) {
    f.io_error(object, "reading");
  }
  return values;
}

// Attribute helpers: absent attributes give std::nullopt; present ones of the wrong kind are a FormatError.
std::optional<std::string> string_attribute(const File& f, hid_t object, const std::string& object_name,
                                            const char* name) {
  if (H5Aexists(object, name) <= 0) return std::nullopt;
  Handle attribute(H5Aopen(object, name, H5P_DEFAULT), H5Aclose);
  if (!attribute.valid()) f.io_error(object_name + " attribute " + name, "opening");
  Handle type(H5Aget_type(attribute.get()), H5Tclose);
  Handle space(H5Aget_space(attribute.get()), H5Sclose);
  if (H5Tget_class(type.get()) != H5T_STRING || H5Sget_simple_extent_npoints(space.get()) != 1) {
    f.format_error(object_name, std::string("attribute '") + name + "' must be one string");
  }
  bool ok = true;
  auto strings = read_strings(type.get(), space.get(), 1, [&](hid_t memory_type, void* buffer) {
    ok = H5Aread(attribute.get(), memory_type, buffer) >= 0;
    return ok;
  });
  if (!ok) f.io_error(object_name + " attribute " + name, "reading");
  return strings.at(0);
}

std::optional<double> number_attribute(const File& f, hid_t object, const std::string& object_name, const char* name) {
  if (H5Aexists(object, name) <= 0) return std::nullopt;
  Handle attribute(H5Aopen(object, name, H5P_DEFAULT), H5Aclose);
  if (!attribute.valid()) f.io_error(object_name + " attribute " + name, "opening");
  Handle type(H5Aget_type(attribute.get()), H5Tclose);
  Handle space(H5Aget_space(attribute.get()), H5Sclose);
  const H5T_class_t type_class = H5Tget_class(type.get());
  if ((type_class != H5T_INTEGER && type_class != H5T_FLOAT) || H5Sget_simple_extent_npoints(space.get()) != 1) {
    f.format_error(object_name, std::string("attribute '") + name + "' must be one number");
  }
  double value = 0;
  if (H5Aread(attribute.get(), H5T_NATIVE_DOUBLE, &value) < 0)
    f.io_error(object_name + " attribute " + name, "reading");
  return value;
}

Handle open_file(const std::filesystem::path& path) {
  std::error_code ec;
  if (!std::filesystem::exists(path, ec)) throw IoError(path.string() + ": file not found");
  if (std::filesystem::is_directory(path, ec)) throw IoError(path.string() + ": is a directory, expected a file");
  Handle file(H5Fopen(path.string().c_str(), H5F_ACC_RDONLY, H5P_DEFAULT), H5Fclose);
  if (!file.valid()) {
    throw IoError(path.string() + ": cannot open as an HDF5 file (truncated, damaged, unreadable or not HDF5)");
  }
  return file;
}

void check_time_units(const File& f, hid_t time_dataset) {
  const auto units = string_attribute(f, time_dataset, "/time", "units");
  if (!units) f.format_error("/time", "attribute 'units' missing; expected \"seconds since 1970-01-01T00:00:00Z\"");
  const std::string prefix = "seconds since ";
  bool epoch = units->rfind(prefix, 0) == 0;
  if (epoch) {
    try {
      epoch = data::parse_iso8601(std::string_view(*units).substr(prefix.size()), "/time units") == 0;
    } catch (const DataError&) {
      epoch = false;
    }
  }
  if (!epoch) {
    f.format_error("/time", "units '" + *units +
                                "' are not supported; expected \"seconds since "
                                "1970-01-01T00:00:00Z\"");
  }
}

}  // namespace

namespace detail {

bool hdf5_has_runnel_layout(const std::filesystem::path& path) {
  QuietHdf5 quiet;
  Handle file = open_file(path);
  return H5Aexists(file.get(), "runnel_layout") > 0;
}

}  // namespace detail

ReadResult read_hdf5(const std::filesystem::path& path, const ReadOptions& options) {
  QuietHdf5 quiet;
  File f{path.string(), open_file(path)};
  const hid_t root = f.file.get();

  // Root attributes name the layout and its version.
  const auto layout = string_attribute(f, root, "/", "runnel_layout");
  if (!layout) f.format_error("/", "root attribute 'runnel_layout' missing; not a runnel panel file");
  if (*layout != "panel") f.format_error("/", "root attribute runnel_layout is '" + *layout + "', expected 'panel'");
  const auto version = number_attribute(f, root, "/", "runnel_layout_version");
  if (!version) f.format_error("/", "root attribute 'runnel_layout_version' missing");
  if (*version != 1) {
    f.format_error("/", "runnel_layout_version " + std::to_string(static_cast<long long>(*version)) +
                            " is not supported; this reader "
                            "reads version 1");
  }

  // Time axis.
  Handle time_dataset = f.open_dataset("/time");
  const auto time_dims = f.dimensions(time_dataset.get(), "/time");
  if (time_dims.size() != 1) f.format_error("/time", "has " + describe_dims(time_dims) + ", expected 1 [time]");
  {
    Handle type(H5Dget_type(time_dataset.get()), H5Tclose);
    if (H5Tget_class(type.get()) != H5T_INTEGER) f.format_error("/time", "must be an integer (int64) dataset");
  }
  check_time_units(f, time_dataset.get());
  std::vector<data::UtcSeconds> times(time_dims[0]);
  if (!times.empty() &&
      H5Dread(time_dataset.get(), H5T_NATIVE_INT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, times.data()) < 0) {
    f.io_error("/time", "reading");
  }
  const data::TimeAxis axis =
      detail::regular_axis(times, f.source + ": /time", [](std::size_t i) { return "index " + std::to_string(i); });

  // Sites.
  const std::vector<std::string> ids = read_string_dataset(f, "/sites/id", 0);
  const std::size_t file_sites = ids.size();
  if (file_sites == 0) throw DataError(f.source + ": /sites/id: no sites");
  {
    std::set<std::string> seen;
    for (const auto& id : ids) {
      if (id.empty()) f.format_error("/sites/id", "a site id is empty");
      if (!seen.insert(id).second) f.format_error("/sites/id", "site id '" + id + "' appears twice");
    }
  }
  const auto chosen_sites = detail::select_sites(ids, options.sites, f.source);
  std::vector<std::string> names;
  if (f.exists("/sites/name")) names = read_string_dataset(f, "/sites/name", file_sites);
  auto optional_doubles = [&](const std::string& object) {
    return f.exists(object) ? read_double_dataset(f, object, file_sites) : std::vector<double>();
  };
  const auto latitude = optional_doubles("/sites/latitude");
  const auto longitude = optional_doubles("/sites/longitude");
  const auto elevation = optional_doubles("/sites/elevation");
  std::vector<std::pair<std::string, std::vector<double>>> static_attributes;
  for (const auto& name : f.names_in_group("/sites/attributes")) {
    static_attributes.emplace_back(name, read_double_dataset(f, "/sites/attributes/" + name, file_sites));
  }
  std::vector<data::SiteInfo> sites;
  for (std::size_t s : chosen_sites) {
    data::SiteInfo site;
    site.id = ids[s];
    if (!names.empty()) site.name = names[s];
    if (!latitude.empty()) site.latitude = latitude[s];
    if (!longitude.empty()) site.longitude = longitude[s];
    if (!elevation.empty()) site.elevation = elevation[s];
    for (const auto& [name, values] : static_attributes) site.attributes[name] = values[s];
    sites.push_back(std::move(site));
  }

  // Variables: metadata of every dataset under /variables first, so that selection by standard_name works.
  const auto variable_names = f.names_in_group("/variables");
  if (variable_names.empty()) f.format_error("/variables", "group missing or empty; at least one variable needed");
  std::vector<data::VariableInfo> available;
  for (const auto& name : variable_names) {
    Handle dataset = f.open_dataset("/variables/" + name);
    data::VariableInfo info;
    info.name = name;
    const std::string object = "/variables/" + name;
    info.units = string_attribute(f, dataset.get(), object, "units").value_or("");
    info.standard_name = string_attribute(f, dataset.get(), object, "standard_name").value_or("");
    info.long_name = string_attribute(f, dataset.get(), object, "long_name").value_or("");
    available.push_back(std::move(info));
  }
  const auto chosen_variables = detail::select_variables(available, options.variables, f.source);
  std::vector<data::VariableInfo> variables;
  for (std::size_t v : chosen_variables) variables.push_back(available[v]);

  ReadResult result;
  result.panel = data::Panel(axis, std::move(sites), std::move(variables));
  result.panel.add_source(f.source);
  data::Panel& panel = result.panel;
  const std::size_t variable_count = panel.variable_count();
  const auto panel_values = static_cast<hsize_t>(panel.site_count() * axis.length() * variable_count);
  float* storage = panel.site_values(0).data();

  for (std::size_t j = 0; j < chosen_variables.size(); ++j) {
    const std::string object = "/variables/" + panel.variables()[j].name;
    Handle dataset = f.open_dataset(object);
    const auto dims = f.dimensions(dataset.get(), object);
    if (dims.size() != 2 || dims[0] != file_sites || dims[1] != axis.length()) {
      f.format_error(object, "has " + describe_dims(dims) + ", expected 2 [site=" + std::to_string(file_sites) +
                                 ", time=" + std::to_string(axis.length()) + "]");
    }
    Handle type(H5Dget_type(dataset.get()), H5Tclose);
    if (H5Tget_class(type.get()) != H5T_FLOAT) f.format_error(object, "must be float32 or float64");

    // The memory side is the panel itself: variable j of every (site, time) lies at stride variable_count,
    // so one strided selection lets HDF5 write the values in place, converting float64 to float32 on the way.
    Handle memory_space(H5Screate_simple(1, &panel_values, nullptr), H5Sclose);
    const hsize_t memory_start = j;
    const hsize_t memory_stride = variable_count;
    const hsize_t memory_count = panel.site_count() * axis.length();
    H5Sselect_hyperslab(memory_space.get(), H5S_SELECT_SET, &memory_start, &memory_stride, &memory_count, nullptr);
    // The file side: the chosen site rows. A row selection iterates in file order, matching the sorted
    // chosen_sites and hence the panel's site order.
    Handle file_space(H5Dget_space(dataset.get()), H5Sclose);
    if (chosen_sites.size() == file_sites) {
      H5Sselect_all(file_space.get());
    } else {
      H5Sselect_none(file_space.get());
      for (std::size_t s : chosen_sites) {
        const hsize_t start[2] = {s, 0};
        const hsize_t count[2] = {1, axis.length()};
        H5Sselect_hyperslab(file_space.get(), H5S_SELECT_OR, start, nullptr, count, nullptr);
      }
    }
    if (H5Dread(dataset.get(), H5T_NATIVE_FLOAT, memory_space.get(), file_space.get(), H5P_DEFAULT, storage) < 0) {
      f.io_error(object, "reading");
    }
    if (const auto fill = number_attribute(f, dataset.get(), object, "_FillValue"); fill && !std::isnan(*fill)) {
      const auto fill_value = static_cast<float>(*fill);
      for (std::size_t s = 0; s < panel.site_count(); ++s) {
        for (std::size_t t = 0; t < axis.length(); ++t) {
          float& x = panel.at(s, t, j);
          if (x == fill_value) x = data::missing_value;
        }
      }
    }
  }
  detail::finish_panel(result, options, f.source);
  return result;
}

}  // namespace libseq::io
