// Peak memory of a training step against the lower bound of what full BPTT must hold. Run one configuration per
// fresh process (compare.py does): nn_memory_probe <cell elman|lstm|gru> <D> <H> <T> <B> [threads]
// Prints one JSON line. The bound, in floats (what any BPTT implementation must keep; common practice, no source):
//   per step and sequence the layer's states (h; h and c for LSTM) and its G gate activations: T·B·(S+G)·H,
//   the inputs T·B·D (the input-weight gradient needs them), and per parameter the weight, its gradient and
//   Adam's two moments: 4·P.
// Measured: the peak resident set (getrusage ru_maxrss) minus the resident set before the batch, network and
// optimiser exist (/proc/self/statm), i.e. what the step added; the process total is printed too.

#include <sys/resource.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <random>
#include <string>

#include "libseq/nn/network.hpp"
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
#include "libseq/train/optimizer.hpp"
#endif

namespace {

double resident_mb() {
  std::ifstream statm("/proc/self/statm");
  std::size_t size = 0, resident = 0;
  statm >> size >> resident;
  return static_cast<double>(resident) * static_cast<double>(sysconf(_SC_PAGESIZE)) / 1e6;
}

double peak_mb() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return static_cast<double>(usage.ru_maxrss) * 1024.0 / 1e6;  // ru_maxrss is in KiB on Linux
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 6 || argc > 7) {
    std::fprintf(stderr, "usage: %s <cell elman|lstm|gru> <D> <H> <T> <B> [threads]\n", argv[0]);
    return 1;
  }
  const double start_mb = resident_mb();
  libseq::nn::NetworkOptions o;
  try {
    o.cell = libseq::nn::parse_cell_type(argv[1], "cell");
  } catch (const std::exception& e) {
    std::fprintf(stderr, "%s\n", e.what());
    return 1;
  }
  o.input_size = std::strtoul(argv[2], nullptr, 10);
  o.hidden_size = std::strtoul(argv[3], nullptr, 10);
  const std::size_t t = std::strtoul(argv[4], nullptr, 10), b = std::strtoul(argv[5], nullptr, 10);
  const std::size_t threads = argc == 7 ? std::strtoul(argv[6], nullptr, 10) : 1;
  if (o.input_size == 0 || o.hidden_size == 0 || t == 0 || b == 0 || threads == 0) {
    std::fprintf(stderr, "D, H, T, B and threads must be positive integers\n");
    return 1;
  }

  libseq::nn::SequenceBatch<float> batch;
  batch.steps = t;
  batch.batch = b;
  std::mt19937_64 rng(1);
  std::normal_distribution<float> normal(0.0F, 1.0F);
  batch.inputs.resize(t * b * o.input_size);
  for (auto& v : batch.inputs) v = normal(rng);
  batch.targets.resize(b * o.horizon);
  for (auto& v : batch.targets) v = normal(rng);

  libseq::nn::Network<float> net(o);
  net.initialize(7);
  net.set_threads(threads);
  const libseq::nn::Loss loss{libseq::nn::LossType::squared_mean, {}};
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
  libseq::train::Optimizer<float> adam(libseq::train::OptimizerOptions{}, net.parameter_count());
#endif
  float value = 0.0F;
  for (int step = 0; step < 2; ++step) {
    value += net.loss_and_gradient(batch, loss, libseq::nn::DropoutMode::off, nullptr);
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
    adam.step(net.parameters(), net.gradients());
#endif
  }

  const std::size_t g = o.gates(), h = o.hidden_size, states = o.cell == libseq::nn::CellType::lstm ? 2 : 1;
  const double bound_floats = static_cast<double>(t * b) * static_cast<double>((states + g) * h * o.layers) +
                              static_cast<double>(t * b * o.input_size) +
                              4.0 * static_cast<double>(net.parameter_count());
  const double bound_mb = bound_floats * sizeof(float) / 1e6;
  const double peak = peak_mb();
  std::printf(
      "{\"cell\": \"%s\", \"D\": %zu, \"H\": %zu, \"T\": %zu, \"B\": %zu, \"threads\": %zu, \"bound_MB\": %.1f, "
      "\"start_MB\": %.1f, \"peak_MB\": %.1f, \"step_peak_MB\": %.1f, \"workspace_MB\": %.1f, \"ratio\": %.3f, "
      "\"loss\": %g}\n",
      argv[1], o.input_size, h, t, b, threads, bound_mb, start_mb, peak, peak - start_mb,
      static_cast<double>(net.workspace_bytes()) / 1e6, (peak - start_mb) / bound_mb, static_cast<double>(value));
  return 0;
}
