// skyphase survey: the night pipeline over many nights on a dask cluster, the season report
// and the season generator, all implemented by the Python package (python -m wvr.survey);
// every argument after `survey` goes to it unchanged, and its exit status is skyphase's.
#include <cstdlib>
#include <iostream>
#include <vector>

#include "commands.hpp"
#include "python_runner.hpp"

namespace skyphase {

void add_survey_command(CLI::App& app) {
  CLI::App* cmd = app.add_subcommand(
      "survey",
      "Many nights on a dask cluster into a catalogue; season report; season generator "
      "(python -m wvr.survey: run | report | generate, see `skyphase survey -- --help`)");
  cmd->prefix_command();  // every remaining argument belongs to python -m wvr.survey
  cmd->set_help_flag();   // so that `skyphase survey run --help` reaches it too
  cmd->callback([cmd] {
    const int status = run_python_module("wvr.survey", cmd->remaining());
    std::cout.flush();
    // The Python command's status (0 ok, 1 some nights failed, 2 bad input) is ours; it has
    // already printed its own messages.
    std::exit(status);
  });
}

}  // namespace skyphase
