#pragma once
// Progress on stderr: a redrawn bar with elapsed time and ETA when stderr is a terminal, plain log lines at most
// every few seconds (and at each stage change) when it is not.

#include <string>

#include "libseq/pipeline/run.hpp"

namespace runnel_app {

class ProgressPrinter {
 public:
  explicit ProgressPrinter(bool quiet);
  void operator()(const libseq::pipeline::Progress& progress);
  /// Ends a redrawn line before other output.
  void finish();

 private:
  bool quiet_;
  bool terminal_;
  bool line_open_ = false;
  std::string last_stage_;
  double last_print_ = -1e9;
};

}  // namespace runnel_app
