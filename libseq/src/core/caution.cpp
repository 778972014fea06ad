#include "libseq/caution.hpp"

namespace libseq {

const std::string& caution_text() {
  static const std::string text =
      "CAUTION: runnel forecasts are advisory. They support, and never replace, licensed engineering judgement, "
      "local codes and official warnings. Accuracy falls with lead time and outside the conditions seen in "
      "training; check every result against the records and local knowledge before acting on it.";
  return text;
}

}  // namespace libseq
