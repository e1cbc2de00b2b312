// Night file writes under faults: a full disk and a read-only file system give one clear error,
// leave nothing at the output path and let the process exit normally (HDF5 keeps no file open
// for its exit handler).
//
// Each case runs in a child process with its own mount namespace holding a small tmpfs, so the
// fault is real (ENOSPC, EROFS) and nothing outside the child sees it. Needs the privilege to
// create a mount namespace (root, as in CI); skipped otherwise.
#include <gtest/gtest.h>
#include <sched.h>
#include <sys/mount.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <functional>
#include <string>

#include "wvr/wvr.hpp"

namespace wvr {
namespace {

namespace fs = std::filesystem;

constexpr int kNoNamespace = 77;

struct ChildOutcome {
  bool skipped = false;
  bool exited_normally = false;
  int exit_code = -1;
  int signal = 0;
  std::string message;
};

// Runs `body(directory)` in a child with `directory` a fresh tmpfs mounted with `options`;
// the child reports the message of any wvr::Error and then exits through exit(), which runs
// HDF5's exit handler.
ChildOutcome run_on_tmpfs(const std::string& options,
                          const std::function<void(const fs::path&)>& body) {
  const fs::path directory =
      fs::temp_directory_path() / ("wvr-fault-" + std::to_string(::getpid()));
  fs::create_directories(directory);
  int pipe_fds[2];
  if (::pipe(pipe_fds) != 0) return {};
  const pid_t child = ::fork();
  if (child == 0) {
    ::close(pipe_fds[0]);
    if (::unshare(CLONE_NEWNS) != 0 ||
        ::mount(nullptr, "/", nullptr, MS_REC | MS_PRIVATE, nullptr) != 0 ||
        ::mount("tmpfs", directory.c_str(), "tmpfs", 0, options.c_str()) != 0) {
      ::_exit(kNoNamespace);
    }
    std::string message;
    try {
      body(directory);
      message = "(no error)";
    } catch (const Error& e) {
      message = e.what();
    }
    // Anything left in the directory besides what the body made is reported too.
    for (const auto& entry : fs::directory_iterator(directory)) {
      message += "\nleft behind: " + entry.path().filename().string();
    }
    [[maybe_unused]] const auto written = ::write(pipe_fds[1], message.data(), message.size());
    ::close(pipe_fds[1]);
    std::exit(0);
  }
  ::close(pipe_fds[1]);
  ChildOutcome outcome;
  char buffer[4096];
  ssize_t n = 0;
  while ((n = ::read(pipe_fds[0], buffer, sizeof buffer)) > 0) {
    outcome.message.append(buffer, static_cast<std::size_t>(n));
  }
  ::close(pipe_fds[0]);
  int status = 0;
  ::waitpid(child, &status, 0);
  fs::remove_all(directory);
  outcome.exited_normally = WIFEXITED(status);
  if (WIFEXITED(status)) outcome.exit_code = WEXITSTATUS(status);
  if (WIFSIGNALED(status)) outcome.signal = WTERMSIG(status);
  outcome.skipped = outcome.exited_normally && outcome.exit_code == kNoNamespace;
  return outcome;
}

Night night_of(std::size_t antennas, std::size_t times) {
  Night night;
  night.time_epoch_utc = "2031-03-14T00:00:00Z";
  for (std::size_t a = 0; a < antennas; ++a) {
    night.array.antenna_names.push_back("A" + std::to_string(a));
    night.array.position_enu_m.push_back({10.0 * static_cast<double>(a), 0.0, 0.0});
    night.array.radiometer_ids.push_back("r" + std::to_string(a));
  }
  night.radiometer.config =
      load_radiometer_config(fs::path(WVR_TESTDATA_DIR) / "radiometers" / "demo-183-dsb.toml");
  const std::size_t channels = night.radiometer.config.channels.size();
  for (std::size_t t = 0; t < times; ++t) night.radiometer.time_s.push_back(static_cast<double>(t));
  // Values that do not compress: the file must really need the space.
  std::uint64_t state = 88172645463325252ull;
  auto next = [&] {
    state ^= state << 13;
    state ^= state >> 7;
    state ^= state << 17;
    return static_cast<double>(state % 1000000) * 1e-4;
  };
  for (std::size_t i = 0; i < antennas * times; ++i) {
    night.radiometer.valid.push_back(1);
    for (std::size_t c = 0; c < channels; ++c) night.radiometer.brightness_k.push_back(20 + next());
    night.pointing.elevation_deg.push_back(40.0 + 0.4 * next());
    night.pointing.azimuth_deg.push_back(3.0 * next());
  }
  return night;
}

TEST(NightFileFaults, FullDiskIsNamedAndTheProcessExitsCleanly) {
  const Night night = night_of(4, 20000);  // a few MB, on a 256 KiB file system
  const ChildOutcome outcome = run_on_tmpfs(
      "size=256k", [&](const fs::path& directory) { write_night(night, directory / "night.h5"); });
  if (outcome.skipped) GTEST_SKIP() << "no mount namespace (needs root)";
  EXPECT_TRUE(outcome.exited_normally) << "killed by signal " << outcome.signal;
  EXPECT_EQ(outcome.exit_code, 0);
  EXPECT_NE(outcome.message.find("night.h5: cannot be written: no space left on device"),
            std::string::npos)
      << outcome.message;
  EXPECT_EQ(outcome.message.find("left behind"), std::string::npos) << outcome.message;
}

TEST(NightFileFaults, FullDiskWhileAddingResultsLeavesTheInputAlone) {
  const Night night = night_of(2, 2000);
  const ChildOutcome outcome = run_on_tmpfs("size=512k", [&](const fs::path& directory) {
    write_night(night, directory / "input.h5");
    ResultGroup group;
    group.stage = "big";
    std::vector<double> values(2 * 60000);
    for (std::size_t i = 0; i < values.size(); ++i) values[i] = std::sin(static_cast<double>(i));
    group.datasets.push_back({"values", {2, 60000}, values, "m", {}});
    try {
      add_result_group(directory / "input.h5", directory / "output.h5", group);
    } catch (const Error&) {
      read_night(directory / "input.h5");  // still whole
      fs::remove(directory / "input.h5");
      throw;
    }
  });
  if (outcome.skipped) GTEST_SKIP() << "no mount namespace (needs root)";
  EXPECT_TRUE(outcome.exited_normally) << "killed by signal " << outcome.signal;
  EXPECT_NE(outcome.message.find("output.h5: cannot be written: no space left on device"),
            std::string::npos)
      << outcome.message;
  EXPECT_EQ(outcome.message.find("left behind"), std::string::npos) << outcome.message;
}

TEST(NightFileFaults, ReadOnlyFileSystemIsNamed) {
  const Night night = night_of(2, 100);
  const ChildOutcome outcome = run_on_tmpfs(
      "size=1m,ro", [&](const fs::path& directory) { write_night(night, directory / "night.h5"); });
  if (outcome.skipped) GTEST_SKIP() << "no mount namespace (needs root)";
  EXPECT_TRUE(outcome.exited_normally) << "killed by signal " << outcome.signal;
  EXPECT_NE(outcome.message.find("night.h5"), std::string::npos) << outcome.message;
  EXPECT_NE(outcome.message.find("Read-only file system"), std::string::npos) << outcome.message;
}

}  // namespace
}  // namespace wvr
