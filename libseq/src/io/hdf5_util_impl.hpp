#pragma once
// Private RAII helpers over the HDF5 C API for the results files: handles that close themselves, and typed
// writes/reads of attributes and datasets whose failures name the file and the object.

#include <hdf5.h>

#include <cstdint>
#include <filesystem>
#include <string>
#include <vector>

namespace libseq::io::detail {

/// An HDF5 identifier closed with the matching H5*close on destruction.
class H5Handle {
 public:
  using Closer = herr_t (*)(hid_t);
  H5Handle() = default;
  H5Handle(hid_t id, Closer closer) : id_(id), closer_(closer) {}
  H5Handle(const H5Handle&) = delete;
  H5Handle& operator=(const H5Handle&) = delete;
  H5Handle(H5Handle&& other) noexcept : id_(other.id_), closer_(other.closer_) { other.id_ = -1; }
  H5Handle& operator=(H5Handle&& other) noexcept;
  ~H5Handle();
  hid_t get() const { return id_; }
  bool valid() const { return id_ >= 0; }
  /// Gives up ownership without closing.
  hid_t release() {
    hid_t id = id_;
    id_ = -1;
    return id;
  }

 private:
  hid_t id_ = -1;
  Closer closer_ = nullptr;
};

/// Context for messages: the file, and helpers that throw IoError/FormatError naming it and the object.
class H5File {
 public:
  /// Creates (truncating) `path` for writing.
  static H5File create(const std::filesystem::path& path);
  /// Opens `path` read-only.
  static H5File open(const std::filesystem::path& path);
  hid_t root() const { return file_.get(); }
  const std::filesystem::path& path() const { return path_; }
  void close();

  H5Handle create_group(hid_t parent, const std::string& name) const;
  H5Handle open_group(hid_t parent, const std::string& name) const;
  bool exists(hid_t parent, const std::string& name) const;
  std::vector<std::string> children(hid_t group) const;

  void attr_string(hid_t object, const std::string& name, const std::string& value) const;
  void attr_double(hid_t object, const std::string& name, double value) const;
  void attr_int(hid_t object, const std::string& name, std::int64_t value) const;
  void attr_uint64(hid_t object, const std::string& name, std::uint64_t value) const;
  void attr_doubles(hid_t object, const std::string& name, const std::vector<double>& values) const;
  std::string read_attr_string(hid_t object, const std::string& name) const;
  double read_attr_double(hid_t object, const std::string& name) const;
  std::int64_t read_attr_int(hid_t object, const std::string& name) const;
  std::uint64_t read_attr_uint64(hid_t object, const std::string& name) const;
  bool has_attr(hid_t object, const std::string& name) const;

  void write_floats(hid_t parent, const std::string& name, const std::vector<hsize_t>& dims,
                    const std::vector<float>& values) const;
  void write_doubles(hid_t parent, const std::string& name, const std::vector<hsize_t>& dims,
                     const std::vector<double>& values) const;
  void write_int64s(hid_t parent, const std::string& name, const std::vector<std::int64_t>& values) const;
  void write_uint64s(hid_t parent, const std::string& name, const std::vector<std::uint64_t>& values) const;
  void write_strings(hid_t parent, const std::string& name, const std::vector<std::string>& values) const;

  std::vector<float> read_floats(hid_t parent, const std::string& name, std::vector<hsize_t>* dims = nullptr) const;
  std::vector<double> read_doubles(hid_t parent, const std::string& name, std::vector<hsize_t>* dims = nullptr) const;
  std::vector<std::int64_t> read_int64s(hid_t parent, const std::string& name) const;
  std::vector<std::uint64_t> read_uint64s(hid_t parent, const std::string& name) const;
  std::vector<std::string> read_strings(hid_t parent, const std::string& name) const;

  [[noreturn]] void fail(const std::string& what) const;

 private:
  H5File(std::filesystem::path path, H5Handle file) : path_(std::move(path)), file_(std::move(file)) {}
  template <typename T>
  std::vector<T> read_numeric(hid_t parent, const std::string& name, hid_t memory_type,
                              std::vector<hsize_t>* dims) const;
  void write_numeric(hid_t parent, const std::string& name, const std::vector<hsize_t>& dims, hid_t file_type,
                     hid_t memory_type, const void* data) const;
  std::filesystem::path path_;
  H5Handle file_;
};

}  // namespace libseq::io::detail
