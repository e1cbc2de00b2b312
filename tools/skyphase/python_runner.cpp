#include "python_runner.hpp"

#include <fcntl.h>
#include <sys/prctl.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cerrno>
#include <csignal>
#include <cstdlib>

#include "wvr/error.hpp"

extern char** environ;

namespace skyphase {

int run_python_module(const std::string& module, const std::vector<std::string>& arguments) {
  const char* python = std::getenv("WVR_PYTHON");
  std::vector<std::string> args{python != nullptr ? python : WVR_PYTHON_EXECUTABLE, "-m", module};
  args.insert(args.end(), arguments.begin(), arguments.end());
  std::vector<std::string> env_strings;
  for (char** e = environ; *e != nullptr; ++e) {
    if (std::string(*e).rfind("PYTHONPATH=", 0) != 0) env_strings.emplace_back(*e);
  }
  const char* existing = std::getenv("PYTHONPATH");
  env_strings.push_back(std::string("PYTHONPATH=") + WVR_PYTHON_PACKAGE_PATH +
                        (existing ? std::string(":") + existing : ""));
  std::vector<char*> argv, envp;
  for (const std::string& a : args) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  for (std::string& e : env_strings) envp.push_back(e.data());
  envp.push_back(nullptr);

  // A pipe whose write end closes at exec tells the parent whether exec worked.
  int exec_check[2];
  if (pipe2(exec_check, O_CLOEXEC) != 0) throw wvr::Error("cannot create a pipe for " + args[0]);
  const pid_t parent = getpid();
  const pid_t pid = fork();
  if (pid < 0) {
    close(exec_check[0]);
    close(exec_check[1]);
    throw wvr::Error("cannot start " + args[0] + " (fork failed)");
  }
  if (pid == 0) {
    // The child gets SIGTERM when this process dies (killed or crashed), so that no renderer
    // outlives the command; if that already happened, it must not start at all. Only
    // async-signal-safe calls between fork and exec.
    if (prctl(PR_SET_PDEATHSIG, SIGTERM) != 0 || getppid() != parent) _exit(127);
    execve(argv[0], argv.data(), envp.data());
    const int error = errno;
    (void)!write(exec_check[1], &error, sizeof error);
    _exit(127);
  }
  close(exec_check[1]);
  int exec_error = 0;
  ssize_t got = 0;
  do {
    got = read(exec_check[0], &exec_error, sizeof exec_error);
  } while (got < 0 && errno == EINTR);
  close(exec_check[0]);
  int status = 0;
  while (waitpid(pid, &status, 0) < 0 && errno == EINTR) {
  }
  if (got > 0) {
    throw wvr::Error("cannot start " + args[0] +
                     " (set WVR_PYTHON to a Python with the wvr package's dependencies)");
  }
  return WIFEXITED(status) ? WEXITSTATUS(status) : 1;
}

}  // namespace skyphase
