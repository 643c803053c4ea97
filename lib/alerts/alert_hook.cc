#include "alerts/alert_hook.h"

#include <fcntl.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cerrno>
#include <chrono>
#include <cmath>
#include <cstring>
#include <sstream>
#include <thread>

extern char** environ;

namespace seston {
namespace {

// How often a running hook is polled. waitpid has no timeout; a short poll keeps the
// code portable (no pidfd) at the cost of up to this much extra latency.
constexpr auto kPollInterval = std::chrono::milliseconds(5);

// Owns the posix_spawn attribute objects so every exit path destroys them.
struct SpawnSetup {
  posix_spawn_file_actions_t actions;
  posix_spawnattr_t attributes;
  SpawnSetup() {
    posix_spawn_file_actions_init(&actions);
    posix_spawnattr_init(&attributes);
  }
  ~SpawnSetup() {
    posix_spawn_file_actions_destroy(&actions);
    posix_spawnattr_destroy(&attributes);
  }
  SpawnSetup(const SpawnSetup&) = delete;
  SpawnSetup& operator=(const SpawnSetup&) = delete;
};

std::string Describe(int wait_status) {
  if (WIFEXITED(wait_status))
    return "exited with status " + std::to_string(WEXITSTATUS(wait_status));
  if (WIFSIGNALED(wait_status))
    return "was killed by signal " + std::to_string(WTERMSIG(wait_status));
  return "ended with wait status " + std::to_string(wait_status);
}

}  // namespace

Result<AlertHook> AlertHook::Create(const std::string& command, double timeout_seconds,
                                    const Clock& clock) {
  if (!(timeout_seconds > 0 && std::isfinite(timeout_seconds))) {
    return Status::InvalidArgument("alerts.hook_timeout_seconds is " +
                                   std::to_string(timeout_seconds) +
                                   "; must be a finite number of seconds > 0");
  }
  std::vector<std::string> argv;
  std::istringstream words(command);
  for (std::string word; words >> word;) argv.push_back(word);
  return AlertHook(std::move(argv), timeout_seconds, clock);
}

Status AlertHook::Run(const std::filesystem::path& alert_file) const {
  if (!enabled()) return Status::Ok();
  const std::string& program = argv_.front();
  std::vector<std::string> arguments = argv_;
  arguments.push_back(alert_file.string());
  std::vector<char*> raw;
  for (std::string& argument : arguments) raw.push_back(argument.data());
  raw.push_back(nullptr);

  SpawnSetup setup;
  posix_spawn_file_actions_addopen(&setup.actions, STDIN_FILENO, "/dev/null", O_RDONLY, 0);
  posix_spawnattr_setflags(&setup.attributes, POSIX_SPAWN_SETPGROUP);
  posix_spawnattr_setpgroup(&setup.attributes, 0);  // its own group, led by the child
  pid_t pid = 0;
  const int spawned =
      posix_spawnp(&pid, program.c_str(), &setup.actions, &setup.attributes, raw.data(), environ);
  if (spawned != 0) {
    return Status::IoError("alert hook \"" + program +
                           "\" could not start: " + std::strerror(spawned));
  }

  const double deadline = clock_->MonotonicSeconds() + timeout_seconds_;
  int wait_status = 0;
  while (true) {
    const pid_t done = ::waitpid(pid, &wait_status, WNOHANG);
    if (done == pid) break;
    if (done < 0 && errno != EINTR) {
      const int error = errno;
      ::kill(-pid, SIGKILL);
      return Status::IoError("alert hook \"" + program +
                             "\": cannot wait for it: " + std::strerror(error));
    }
    if (clock_->MonotonicSeconds() >= deadline) {
      ::kill(-pid, SIGKILL);
      while (::waitpid(pid, &wait_status, 0) < 0 && errno == EINTR) {
      }
      return Status::Unavailable("alert hook \"" + program + "\" did not finish within " +
                                 std::to_string(timeout_seconds_) + " s and was killed");
    }
    std::this_thread::sleep_for(kPollInterval);
  }
  if (WIFEXITED(wait_status) && WEXITSTATUS(wait_status) == 0) return Status::Ok();
  return Status::IoError("alert hook \"" + program + "\" on " + alert_file.string() + " " +
                         Describe(wait_status));
}

}  // namespace seston
