#pragma once
/// @file caution.hpp
/// The advisory caution that every output carries (console summaries, result files, reports). It lives here and
/// only here, so that every writer and every command prints the same words.

#include <string>

namespace libseq {

/// The full caution paragraph, plain text, one line.
const std::string& caution_text();

}  // namespace libseq
