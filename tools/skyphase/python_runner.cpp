#include "python_runner.hpp"

#include <spawn.h>
#include <sys/wait.h>

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
  pid_t pid = 0;
  if (posix_spawn(&pid, argv[0], nullptr, nullptr, argv.data(), envp.data()) != 0) {
    throw wvr::Error("cannot start " + args[0] +
                     " (set WVR_PYTHON to a Python with the wvr package's dependencies)");
  }
  int status = 0;
  waitpid(pid, &status, 0);
  return WIFEXITED(status) ? WEXITSTATUS(status) : 1;
}

}  // namespace skyphase
