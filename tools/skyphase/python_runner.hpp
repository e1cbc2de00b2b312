#pragma once
// Commands that the Python package implements (the night report's figures, the survey on a
// dask cluster) run as `python -m <module>` with the package on PYTHONPATH: the build tree's,
// then the install tree's. WVR_PYTHON names another interpreter.
#include <string>
#include <vector>

namespace skyphase {

// Runs `<python> -m module arguments...` and returns its exit status (1 when it died of a
// signal). The child receives SIGTERM if this process dies first, so that it never keeps
// running without us. Throws wvr::Error when the interpreter cannot be started.
int run_python_module(const std::string& module, const std::vector<std::string>& arguments);

}  // namespace skyphase
