#pragma once
/// @file error.hpp
/// The one exception hierarchy of libseq. Every message names the file, variable or key at fault and what was
/// expected, so that a user can fix the input without reading the source.

#include <stdexcept>
#include <string>

namespace libseq {

/// Root of every exception libseq throws.
class Error : public std::runtime_error {
 public:
  explicit Error(const std::string& message) : std::runtime_error(message) {}
};

/// A configuration key or option value is missing, of the wrong type or out of range.
class ConfigError : public Error {
 public:
  using Error::Error;
};

/// A file cannot be opened, read or written (missing, unreadable, truncated, disk full).
class IoError : public Error {
 public:
  using Error::Error;
};

/// A file opens but its structure is not what the format requires (dimensions, attributes, time units).
class FormatError : public Error {
 public:
  using Error::Error;
};

/// The values themselves are unusable (non-monotonic time, irregular step, a variable that is all missing).
class DataError : public Error {
 public:
  using Error::Error;
};

}  // namespace libseq
