// Read time and peak resident memory of read_netcdf on a generated CF file: 1,000 stations x 14,610 days
// (1981-01-01 .. 2020-12-31) x 3 float variables, (station, time) order, chunked one station per chunk.
//
// Timing uses Google Benchmark in this process. Peak RSS is measured in fresh child processes (this executable
// re-run with --rss-child), each reading once; the parent takes the child's ru_maxrss from wait4(). Linux carries
// the high-water mark of the spawning process's memory across exec into ru_maxrss, so the children are spawned
// first, before this process has read anything; the child also prints its own VmHWM (/proc/self/status, reset by
// exec) as a cross-check. See docs/performance-io.md for the figures.
#include <benchmark/benchmark.h>
#include <netcdf.h>
#include <spawn.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <stdexcept>
#include <string>
#include <vector>

#include "libseq/io/netcdf_reader.hpp"

extern char** environ;

namespace {

constexpr std::size_t station_count = 1000;
constexpr std::size_t day_count = 14610;  // 40 years of days, 1981-01-01 .. 2020-12-31
constexpr std::size_t variable_count = 3;

void ok(int status) {
  if (status != NC_NOERR) throw std::runtime_error(std::string("benchmark file writer: ") + nc_strerror(status));
}

std::string site_id(std::size_t s) {
  char buffer[16];
  std::snprintf(buffer, sizeof buffer, "G%05zu", s);
  return buffer;
}

// Writes the benchmark file once per process into a temporary directory (main removes it at the end).
const std::filesystem::path& bench_file() {
  static const std::filesystem::path path = [] {
    const auto dir = std::filesystem::temp_directory_path() / ("runnel-netcdf-bench-" + std::to_string(getpid()));
    std::filesystem::create_directories(dir);
    const auto file = dir / "stations_40y_daily.nc";
    int nc, station, time, strlen_dim, id_var, time_var;
    ok(nc_create(file.c_str(), NC_NETCDF4 | NC_CLOBBER, &nc));
    ok(nc_put_att_text(nc, NC_GLOBAL, "featureType", 10, "timeSeries"));
    ok(nc_def_dim(nc, "station", station_count, &station));
    ok(nc_def_dim(nc, "time", day_count, &time));
    ok(nc_def_dim(nc, "id_strlen", 6, &strlen_dim));
    const int id_dims[2] = {station, strlen_dim};
    ok(nc_def_var(nc, "station_id", NC_CHAR, 2, id_dims, &id_var));
    ok(nc_put_att_text(nc, id_var, "cf_role", 13, "timeseries_id"));
    ok(nc_def_var(nc, "time", NC_DOUBLE, 1, &time, &time_var));
    ok(nc_put_att_text(nc, time_var, "units", 21, "days since 1981-01-01"));
    ok(nc_put_att_text(nc, time_var, "calendar", 8, "standard"));
    const char* names[variable_count] = {"discharge", "precipitation", "air_temperature"};
    int vars[variable_count];
    const int dims[2] = {station, time};
    const std::size_t chunk[2] = {1, day_count};
    for (std::size_t v = 0; v < variable_count; ++v) {
      ok(nc_def_var(nc, names[v], NC_FLOAT, 2, dims, &vars[v]));
      ok(nc_def_var_chunking(nc, vars[v], NC_CHUNKED, chunk));
      const float fill = -9999.0f;
      ok(nc_def_var_fill(nc, vars[v], 0, &fill));
    }
    ok(nc_enddef(nc));
    std::vector<double> days(day_count);
    for (std::size_t t = 0; t < day_count; ++t) days[t] = static_cast<double>(t);
    ok(nc_put_var_double(nc, time_var, days.data()));
    std::vector<float> row(day_count);
    for (std::size_t s = 0; s < station_count; ++s) {
      const std::string id = site_id(s);
      const std::size_t id_start[2] = {s, 0};
      const std::size_t id_count[2] = {1, 6};
      ok(nc_put_vara_text(nc, id_var, id_start, id_count, id.c_str()));
      for (std::size_t v = 0; v < variable_count; ++v) {
        for (std::size_t t = 0; t < day_count; ++t) row[t] = static_cast<float>((s + 1) * (v + 1)) + 0.001f * t;
        const std::size_t start[2] = {s, 0};
        const std::size_t count[2] = {1, day_count};
        ok(nc_put_vara_float(nc, vars[v], start, count, row.data()));
      }
    }
    ok(nc_close(nc));
    return file;
  }();
  return path;
}

libseq::io::ReadOptions options_for(bool one_site) {
  libseq::io::ReadOptions options;
  if (one_site) options.sites = {site_id(station_count / 2)};
  return options;
}

struct ChildMemory {
  double ru_maxrss_mb = -1.0;  // from wait4()
  double vm_hwm_mb = -1.0;     // printed by the child
};
ChildMemory memory_all, memory_one, memory_none;
double parent_rss_at_spawn_mb = -1.0;

double own_status_mb(const char* key) {
  std::FILE* status = std::fopen("/proc/self/status", "r");
  if (status == nullptr) return -1.0;
  char line[256];
  double kb = -1.0;
  while (std::fgets(line, sizeof line, status)) {
    if (std::strncmp(line, key, std::strlen(key)) == 0) kb = std::atof(line + std::strlen(key));
  }
  std::fclose(status);
  return kb / 1e3;
}

// Runs this executable with --rss-child <file> <mode>; mode "all", "one" or "none" (start and exit).
ChildMemory measure_child(const std::string& mode) {
  std::string self = std::filesystem::read_symlink("/proc/self/exe").string();
  std::string flag = "--rss-child";
  std::string file = bench_file().string();
  std::string mode_text = mode;
  char* argv[] = {self.data(), flag.data(), file.data(), mode_text.data(), nullptr};
  int pipe_fds[2];
  if (pipe(pipe_fds) != 0) return {};
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_adddup2(&actions, pipe_fds[1], STDOUT_FILENO);
  posix_spawn_file_actions_addclose(&actions, pipe_fds[0]);
  pid_t pid = 0;
  const int spawned = posix_spawn(&pid, self.c_str(), &actions, nullptr, argv, environ);
  posix_spawn_file_actions_destroy(&actions);
  close(pipe_fds[1]);
  ChildMemory out;
  if (spawned != 0) return out;
  char buffer[64] = {0};
  const ssize_t got = read(pipe_fds[0], buffer, sizeof buffer - 1);
  close(pipe_fds[0]);
  int status = 0;
  rusage usage{};
  wait4(pid, &status, 0, &usage);
  if (!WIFEXITED(status) || WEXITSTATUS(status) != 0) return out;
  out.ru_maxrss_mb = static_cast<double>(usage.ru_maxrss) / 1e3;  // ru_maxrss is in kilobytes on Linux
  if (got > 0) out.vm_hwm_mb = std::atof(buffer);
  return out;
}

void report(benchmark::State& state, bool one_site, const ChildMemory& memory) {
  const double panel_bytes =
      static_cast<double>((one_site ? 1 : station_count) * day_count * variable_count * sizeof(float));
  state.counters["panel_MB"] = panel_bytes / 1e6;
  state.counters["child_maxrss_MB"] = memory.ru_maxrss_mb;
  state.counters["child_VmHWM_MB"] = memory.vm_hwm_mb;
  state.counters["baseline_maxrss_MB"] = memory_none.ru_maxrss_mb;
  state.counters["baseline_VmHWM_MB"] = memory_none.vm_hwm_mb;
  state.counters["parent_rss_at_spawn_MB"] = parent_rss_at_spawn_mb;
}

void BM_ReadAllSites(benchmark::State& state) {
  const auto& file = bench_file();
  for (auto _ : state) {
    auto result = libseq::io::read_netcdf(file, options_for(false));
    benchmark::DoNotOptimize(result.panel.site_values(0).data());
  }
  report(state, false, memory_all);
}
BENCHMARK(BM_ReadAllSites)->Unit(benchmark::kMillisecond)->Iterations(3);

void BM_ReadOneSite(benchmark::State& state) {
  const auto& file = bench_file();
  for (auto _ : state) {
    auto result = libseq::io::read_netcdf(file, options_for(true));
    benchmark::DoNotOptimize(result.panel.site_values(0).data());
  }
  report(state, true, memory_one);
}
BENCHMARK(BM_ReadOneSite)->Unit(benchmark::kMillisecond);

}  // namespace

int main(int argc, char** argv) {
  if (argc == 4 && std::strcmp(argv[1], "--rss-child") == 0) {
    if (std::strcmp(argv[3], "none") == 0) {
      std::printf("%.3f\n", own_status_mb("VmHWM:"));
      return 0;
    }
    try {
      const bool one = std::strcmp(argv[3], "one") == 0;
      auto result = libseq::io::read_netcdf(argv[2], options_for(one));
      std::printf("%.3f\n", own_status_mb("VmHWM:"));
      return result.panel.site_count() == (one ? 1u : station_count) ? 0 : 2;
    } catch (const std::exception& e) {
      std::fprintf(stderr, "%s\n", e.what());
      return 1;
    }
  }
  bench_file();
  parent_rss_at_spawn_mb = own_status_mb("VmHWM:");
  memory_none = measure_child("none");
  memory_one = measure_child("one");
  memory_all = measure_child("all");
  benchmark::Initialize(&argc, argv);
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  std::filesystem::remove_all(bench_file().parent_path());
  return 0;
}
