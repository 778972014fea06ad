// A run killed part-way and resumed with --resume gives the same results as an uninterrupted run, and does not
// retrain the models that had finished (issue: batch job, "killed run").
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <fstream>
#include <random>
#include <thread>

#include "libseq/io/results.hpp"
#include "support/paths.hpp"

namespace {

namespace fs = std::filesystem;

// Per-site models (3 sites), so that a kill leaves some models finished and some not.
std::string job_text(const fs::path& output) {
  return "[job]\nname = \"resume check\"\nseed = 7\nthreads = 2\n"
         "[data]\nfiles = [\"" + (libseq::test::source_dir() / "data-samples" / "catchments.nc").string() +
         "\"]\nsites = [\"SRN-TAR01\", \"SRN-OSK02\", \"SRN-VEL03\"]\n"
         "[target]\nvariable = \"discharge\"\ntransform = \"log\"\noffset = 0.01\n"
         "[inputs]\ndynamic = [\"precipitation\", \"air_temperature\"]\n"
         "[windows]\nlookback = 12\n"
         "[periods]\nfit = \"2008-01-01..2010-12-31\"\nvalidation = \"2011-01-01..2011-12-31\"\n"
         "calibration = \"2011-01-01..2011-12-31\"\ntest = \"2012-01-01..2012-12-31\"\n"
         "[network]\ncell = \"gru\"\nhidden = 6\n"
         "[training]\nscope = \"per_site\"\nepochs = 12\nbatch_size = 64\n"
         "[ensemble]\nmembers = 2\n"
         "[baselines]\nmethods = [\"persistence\"]\n"
         "[outputs]\ndirectory = \"" + output.string() + "\"\nnetcdf = false\ngeojson = false\nreport = false\n";
}

fs::path write_job(const fs::path& dir, const fs::path& output) {
  const fs::path path = dir / "job.toml";
  std::ofstream(path) << job_text(output);
  return path;
}

// Starts `runnel run JOB [--resume]` in a child process; returns its pid.
pid_t start_run(const fs::path& job, bool resume, const fs::path& stdout_path = "/dev/null") {
  const pid_t pid = fork();
  if (pid == 0) {
    if (!std::freopen(stdout_path.c_str(), "w", stdout)) _exit(126);
    const std::string exe = libseq::test::runnel_exe().string();
    if (resume) {
      execl(exe.c_str(), exe.c_str(), "run", job.c_str(), "--quiet", "--resume", static_cast<char*>(nullptr));
    } else {
      execl(exe.c_str(), exe.c_str(), "run", job.c_str(), "--quiet", static_cast<char*>(nullptr));
    }
    _exit(127);
  }
  return pid;
}

int wait_exit(pid_t pid) {
  int status = 0;
  waitpid(pid, &status, 0);
  return WIFEXITED(status) ? WEXITSTATUS(status) : -WTERMSIG(status);
}

void expect_same_results(const libseq::io::RunResults& a, const libseq::io::RunResults& b) {
  ASSERT_EQ(a.sites.size(), b.sites.size());
  for (std::size_t s = 0; s < a.sites.size(); ++s) {
    ASSERT_EQ(a.sites[s].methods.size(), b.sites[s].methods.size());
    for (std::size_t m = 0; m < a.sites[s].methods.size(); ++m) {
      EXPECT_EQ(a.sites[s].methods[m].mean, b.sites[s].methods[m].mean) << a.sites[s].site.id;
      EXPECT_EQ(a.sites[s].methods[m].quantiles, b.sites[s].methods[m].quantiles) << a.sites[s].site.id;
    }
  }
  ASSERT_EQ(a.metrics.size(), b.metrics.size());
  for (std::size_t i = 0; i < a.metrics.size(); ++i) {
    const bool both_nan = std::isnan(a.metrics[i].value) && std::isnan(b.metrics[i].value);
    EXPECT_TRUE(both_nan || a.metrics[i].value == b.metrics[i].value) << a.metrics[i].metric;
  }
  ASSERT_EQ(a.training.size(), b.training.size());
  for (std::size_t i = 0; i < a.training.size(); ++i) {
    EXPECT_EQ(a.training[i].train_loss, b.training[i].train_loss);
    EXPECT_EQ(a.training[i].seed, b.training[i].seed);
  }
}

}  // namespace

TEST(CliResume, KilledRunResumesToTheUninterruptedResults) {
  const fs::path dir = libseq::test::scratch_dir("cli_resume");
  const fs::path reference_out = dir / "reference";
  const fs::path killed_out = dir / "killed";
  fs::create_directories(dir / "a");
  fs::create_directories(dir / "b");
  const fs::path reference_job = write_job(dir / "a", reference_out);
  const fs::path killed_job = write_job(dir / "b", killed_out);

  const auto started = std::chrono::steady_clock::now();
  ASSERT_EQ(wait_exit(start_run(reference_job, false)), 0);
  const double full_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();

  // Kill at a random point of the run (between 20 % and 90 % of the uninterrupted time).
  std::mt19937_64 random{std::random_device{}()};
  const double kill_after = std::uniform_real_distribution<double>(0.2, 0.9)(random) * full_seconds;
  const pid_t victim = start_run(killed_job, false);
  std::this_thread::sleep_for(std::chrono::duration<double>(kill_after));
  kill(victim, SIGKILL);
  wait_exit(victim);
  std::size_t finished_models = 0;
  if (fs::exists(killed_out / ".resume")) {
    for (const auto& entry : fs::directory_iterator(killed_out / ".resume")) {
      finished_models += entry.path().extension() == ".h5" ? 1 : 0;
    }
  }
  RecordProperty("kill_after_seconds", std::to_string(kill_after));
  RecordProperty("models_finished_before_kill", std::to_string(finished_models));

  ASSERT_EQ(wait_exit(start_run(killed_job, true, dir / "resumed.txt")), 0);
  EXPECT_FALSE(fs::exists(killed_out / ".resume")) << "checkpoints are removed once the run completes";
  const auto reference = libseq::io::read_results_hdf5(reference_out / "results.h5");
  const auto resumed = libseq::io::read_results_hdf5(killed_out / "results.h5");
  expect_same_results(reference, resumed);
  // Models finished before the kill were taken from their checkpoints, not trained again.
  std::ifstream in(dir / "resumed.txt");
  const std::string printed((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  if (finished_models > 0) {
    EXPECT_NE(printed.find(std::to_string(finished_models) + " resumed"), std::string::npos) << printed;
  }
}

TEST(CliResume, EveryFinishedModelIsTakenFromItsCheckpoint) {
  // Kill right after the first checkpoint appears: the resumed run must report at least that model as resumed.
  const fs::path dir = libseq::test::scratch_dir("cli_resume_first");
  const fs::path out = dir / "out";
  const fs::path job = write_job(dir, out);
  const pid_t victim = start_run(job, false);
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::seconds(120);
  bool seen = false;
  while (!seen && std::chrono::steady_clock::now() < deadline) {
    seen = fs::exists(out / ".resume" / "model_00000.h5");
    if (!seen) std::this_thread::sleep_for(std::chrono::milliseconds(2));
  }
  kill(victim, SIGKILL);
  wait_exit(victim);
  ASSERT_TRUE(seen) << "the first model's checkpoint never appeared";
  ASSERT_EQ(wait_exit(start_run(job, true, dir / "resumed.txt")), 0);
  std::ifstream in(dir / "resumed.txt");
  const std::string printed((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_NE(printed.find(" resumed"), std::string::npos) << printed;
}

TEST(CliResume, CheckpointsOfAnotherJobAreNotUsed) {
  const fs::path dir = libseq::test::scratch_dir("cli_resume_skip");
  const fs::path out = dir / "out";
  const fs::path job = write_job(dir, out);
  ASSERT_EQ(wait_exit(start_run(job, false)), 0);
  const auto first = libseq::io::read_results_hdf5(out / "results.h5");
  // A checkpoint whose fingerprint does not match is not used (and is said so).
  fs::create_directories(out / ".resume");
  libseq::io::RunResults stale;
  stale.summary = "another job";
  stale.leads = {1};
  libseq::io::write_results_hdf5(out / ".resume" / "model_00000.h5", stale);
  ASSERT_EQ(wait_exit(start_run(job, true)), 0);
  const auto second = libseq::io::read_results_hdf5(out / "results.h5");
  expect_same_results(first, second);
  bool warned = false;
  for (const auto& w : second.warnings) warned = warned || w.find("checkpoint belongs to another job") != std::string::npos;
  EXPECT_TRUE(warned);
}
