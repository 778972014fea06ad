#pragma once
/// @file json_text.hpp
/// JSON text of strings and numbers for the writers that emit JSON (GeoJSON station tables, `inspect --json`).

#include <string>

namespace libseq::io {

/// A JSON string literal of `text` with the escapes RFC 8259 section 7 requires; bytes that are not valid UTF-8
/// become U+FFFD so that the output is valid JSON whatever encoding the input used.
std::string json_string(const std::string& text);

/// A JSON number with 10 significant digits, or `null` for NaN and infinities (JSON has neither).
std::string json_number(double value);

}  // namespace libseq::io
