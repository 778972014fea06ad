// Throughput of one training step (forward + loss + BPTT [+ Adam]) and of inference, float32, on 1 and 2 threads
// (Network::set_threads: the batch slices of one network in parallel), for the configurations of
// docs/performance-engine.md; an ensemble of 2 members trained side by side on 2 threads (OpenMP over members, each
// member single-threaded, as libseq::uncertainty does); and the single-thread float32 GEMM rate Eigen reaches here.
// FLOP counts (common practice, no source): forward = 2·B·T·G·H·(D+H) (input and recurrent products), training
// = 3 × forward (backward ≈ twice the forward products). Every timed loop follows one untimed warm-up call, so the
// figures are for the steady state of training (workspaces already allocated), not for the first call.

#include <benchmark/benchmark.h>

#include <Eigen/Dense>
#include <array>
#include <random>

#include "libseq/nn/network.hpp"
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
#include "libseq/train/optimizer.hpp"
#endif

namespace {

using libseq::nn::CellType;

libseq::nn::NetworkOptions options_for(CellType cell, std::int64_t d, std::int64_t h) {
  libseq::nn::NetworkOptions o;
  o.cell = cell;
  o.input_size = static_cast<std::size_t>(d);
  o.hidden_size = static_cast<std::size_t>(h);
  return o;
}

libseq::nn::SequenceBatch<float> batch_for(const libseq::nn::NetworkOptions& o, std::size_t t, std::size_t b) {
  std::mt19937_64 rng(1);
  std::normal_distribution<float> normal(0.0F, 1.0F);
  libseq::nn::SequenceBatch<float> batch;
  batch.steps = t;
  batch.batch = b;
  batch.inputs.resize(t * b * o.input_size);
  for (auto& v : batch.inputs) v = normal(rng);
  batch.targets.resize(b * o.horizon);
  for (auto& v : batch.targets) v = normal(rng);
  return batch;
}

double forward_flops(const libseq::nn::NetworkOptions& o, std::int64_t t, std::int64_t b) {
  return 2.0 * static_cast<double>(b * t) * static_cast<double>(o.gates() * o.hidden_size) *
         static_cast<double>(o.input_size + o.hidden_size);
}

// Arguments: cell, D, H, T, B, threads.
void train_step(benchmark::State& state) {
  const auto cell = static_cast<CellType>(state.range(0));
  const auto o = options_for(cell, state.range(1), state.range(2));
  const auto t = static_cast<std::size_t>(state.range(3)), b = static_cast<std::size_t>(state.range(4));
  libseq::nn::Network<float> net(o);
  net.initialize(7);
  net.set_threads(static_cast<std::size_t>(state.range(5)));
  const auto batch = batch_for(o, t, b);
  const libseq::nn::Loss loss{libseq::nn::LossType::squared_mean, {}};
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
  libseq::train::Optimizer<float> adam(libseq::train::OptimizerOptions{}, net.parameter_count());
#endif
  benchmark::DoNotOptimize(net.loss_and_gradient(batch, loss, libseq::nn::DropoutMode::off, nullptr));  // warm-up
  for (auto _ : state) {
    benchmark::DoNotOptimize(net.loss_and_gradient(batch, loss, libseq::nn::DropoutMode::off, nullptr));
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
    adam.step(net.parameters(), net.gradients());
#endif
  }
  const double iterations = static_cast<double>(state.iterations());
  state.counters["seq_per_s"] = benchmark::Counter(iterations * static_cast<double>(b), benchmark::Counter::kIsRate);
  state.counters["GFLOP_per_s"] = benchmark::Counter(
      iterations * 3.0 * forward_flops(o, state.range(3), state.range(4)) * 1e-9, benchmark::Counter::kIsRate);
  state.counters["workspace_MB"] = static_cast<double>(net.workspace_bytes()) / 1e6;
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
  state.SetLabel(libseq::nn::to_string(cell) + " fwd+bwd+adam");
#else
  state.SetLabel(libseq::nn::to_string(cell) + " fwd+bwd");
#endif
}

// Two members (distinct seeds, their own optimiser each) trained side by side: one training step of each member per
// iteration, members spread over 2 OpenMP threads, each member single-threaded. Arguments: cell, D, H, T, B.
// seq_per_s counts the sequences of both members, to be divided by train_step's 1-thread seq_per_s.
void ensemble_train(benchmark::State& state) {
  const auto cell = static_cast<CellType>(state.range(0));
  const auto o = options_for(cell, state.range(1), state.range(2));
  const auto t = static_cast<std::size_t>(state.range(3)), b = static_cast<std::size_t>(state.range(4));
  constexpr int members = 2;
  std::vector<libseq::nn::Network<float>> nets(members, libseq::nn::Network<float>(o));
  for (int m = 0; m < members; ++m) nets[static_cast<std::size_t>(m)].initialize(7 + static_cast<std::uint64_t>(m));
  const auto batch = batch_for(o, t, b);
  const libseq::nn::Loss loss{libseq::nn::LossType::squared_mean, {}};
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
  std::vector<libseq::train::Optimizer<float>> adams;
  for (int m = 0; m < members; ++m) adams.emplace_back(libseq::train::OptimizerOptions{}, nets[0].parameter_count());
#endif
  const auto train_all = [&] {
#pragma omp parallel for num_threads(2) schedule(dynamic, 1)
    for (int m = 0; m < members; ++m) {
      auto& net = nets[static_cast<std::size_t>(m)];
      benchmark::DoNotOptimize(net.loss_and_gradient(batch, loss, libseq::nn::DropoutMode::off, nullptr));
#ifdef LIBSEQ_BENCHMARK_WITH_ADAM
      adams[static_cast<std::size_t>(m)].step(net.parameters(), net.gradients());
#endif
    }
  };
  train_all();  // warm-up
  for (auto _ : state) train_all();
  const double iterations = static_cast<double>(state.iterations());
  state.counters["seq_per_s"] =
      benchmark::Counter(iterations * members * static_cast<double>(b), benchmark::Counter::kIsRate);
  state.counters["GFLOP_per_s"] = benchmark::Counter(
      iterations * members * 3.0 * forward_flops(o, state.range(3), state.range(4)) * 1e-9, benchmark::Counter::kIsRate);
  state.SetLabel(libseq::nn::to_string(cell) + " 2 members on 2 threads");
}

void inference(benchmark::State& state) {
  const auto cell = static_cast<CellType>(state.range(0));
  const auto o = options_for(cell, state.range(1), state.range(2));
  const auto t = static_cast<std::size_t>(state.range(3)), b = static_cast<std::size_t>(state.range(4));
  libseq::nn::Network<float> net(o);
  net.initialize(7);
  net.set_threads(static_cast<std::size_t>(state.range(5)));
  const auto batch = batch_for(o, t, b);
  std::vector<float> outputs(b * o.horizon);
  net.predict(batch, outputs, libseq::nn::DropoutMode::off, nullptr);  // warm-up
  for (auto _ : state) {
    net.predict(batch, outputs, libseq::nn::DropoutMode::off, nullptr);
    benchmark::DoNotOptimize(outputs.data());
  }
  const double iterations = static_cast<double>(state.iterations());
  state.counters["seq_per_s"] = benchmark::Counter(iterations * static_cast<double>(b), benchmark::Counter::kIsRate);
  state.counters["GFLOP_per_s"] = benchmark::Counter(
      iterations * forward_flops(o, state.range(3), state.range(4)) * 1e-9, benchmark::Counter::kIsRate);
  state.SetLabel(libseq::nn::to_string(cell) + " predict");
}

// Single-thread float32 GEMM, n × n times n × n, row-major as the kernels use.
void eigen_gemm(benchmark::State& state) {
  const auto n = static_cast<Eigen::Index>(state.range(0));
  using Mat = Eigen::Matrix<float, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  Eigen::setNbThreads(1);
  const Mat a = Mat::Random(n, n), b = Mat::Random(n, n);
  Mat c(n, n);
  for (auto _ : state) {
    c.noalias() = a * b;
    benchmark::DoNotOptimize(c.data());
  }
  state.counters["GFLOP_per_s"] =
      benchmark::Counter(static_cast<double>(state.iterations()) * 2.0 * static_cast<double>(n * n * n) * 1e-9,
                         benchmark::Counter::kIsRate);
}

// cell, D, H, T, B of the engine issue.
constexpr std::array<std::array<std::int64_t, 5>, 7> shapes{{
    {static_cast<std::int64_t>(CellType::lstm), 5, 64, 365, 256},
    {static_cast<std::int64_t>(CellType::lstm), 5, 128, 365, 256},
    {static_cast<std::int64_t>(CellType::lstm), 5, 256, 365, 256},
    {static_cast<std::int64_t>(CellType::lstm), 16, 128, 168, 128},
    {static_cast<std::int64_t>(CellType::lstm), 1, 8, 50, 32},
    {static_cast<std::int64_t>(CellType::gru), 5, 128, 365, 256},
    {static_cast<std::int64_t>(CellType::elman), 5, 128, 365, 256},
}};

void configurations(benchmark::internal::Benchmark* b) {
  b->ArgNames({"cell", "D", "H", "T", "B", "threads"});
  for (const auto& s : shapes) {
    for (std::int64_t threads : {1, 2}) b->Args({s[0], s[1], s[2], s[3], s[4], threads});
  }
  b->Unit(benchmark::kMillisecond)->UseRealTime();
}

void ensemble_configurations(benchmark::internal::Benchmark* b) {
  b->ArgNames({"cell", "D", "H", "T", "B"});
  for (const auto& s : shapes) b->Args({s[0], s[1], s[2], s[3], s[4]});
  b->Unit(benchmark::kMillisecond)->UseRealTime();
}

}  // namespace

BENCHMARK(train_step)->Apply(configurations);
BENCHMARK(inference)->Apply(configurations);
BENCHMARK(ensemble_train)->Apply(ensemble_configurations);
BENCHMARK(eigen_gemm)->Arg(256)->Arg(512)->Unit(benchmark::kMillisecond);

BENCHMARK_MAIN();
