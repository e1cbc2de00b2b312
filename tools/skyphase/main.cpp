// skyphase: the libwvr command-line program.
//
// Exit status: 0 success, 2 bad input (the message names the field and value), 3 nothing usable
// (valid input holding nothing a stage can use; the message says why), 1 any other failure.
// Errors are one line on stderr; with --format json, stdout also gets {"status", "reason"}.
#include <CLI/CLI.hpp>
#include <exception>
#include <filesystem>
#include <iostream>
#include <new>
#include <nlohmann/json.hpp>
#include <string_view>

#include "commands.hpp"
#include "huge_page_malloc.hpp"
#include "output.hpp"
#include "wvr/error.hpp"

namespace {

// Read from the command line itself: the parsed --format option holds its mapped value.
bool json_requested(int argc, char** argv) {
  for (int i = 1; i < argc; ++i) {
    const std::string_view arg = argv[i];
    if (arg == "--format=json" ||
        (arg == "--format" && i + 1 < argc && std::string_view(argv[i + 1]) == "json"))
      return true;
  }
  return false;
}

}  // namespace

int main(int argc, char** argv) {
  skyphase::reexec_with_huge_page_malloc(argv);
  CLI::App app{"skyphase: water-vapour radiometer sky model and phase correction (libwvr)"};
  app.require_subcommand(1);
  app.set_version_flag("--version", "skyphase 0.1.0");
  skyphase::add_spectrum_command(app);
  skyphase::add_absorption_command(app);
  skyphase::add_channels_command(app);
  skyphase::add_simulate_command(app);
  skyphase::add_inspect_command(app);
  skyphase::add_retrieve_command(app);
  skyphase::add_calibrate_command(app);
  skyphase::add_correct_command(app);
  skyphase::add_diagnose_command(app);
  skyphase::add_process_command(app);
  skyphase::add_report_command(app);
  skyphase::add_survey_command(app);
#ifdef WVR_HAVE_ARCHIVE
  skyphase::add_import_command(app);
  skyphase::add_export_command(app);
#endif
  skyphase::add_crosscal_command(app);
  skyphase::add_dip_command(app);
  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    std::cerr << "skyphase: error: " << e.what() << "\n";
    return 2;
  } catch (const wvr::NothingUsable& e) {
    std::cerr << "skyphase: " << e.what() << "\n";
    if (json_requested(argc, argv)) {
      skyphase::print_json({{"status", "nothing_usable"}, {"reason", e.what()}});
    }
    return 3;
  } catch (const wvr::InvalidInput& e) {
    std::cerr << "skyphase: error: " << e.what() << "\n";
    return 2;
  } catch (const wvr::Error& e) {
    std::cerr << "skyphase: error: " << e.what() << "\n";
    return 1;
  } catch (const std::filesystem::filesystem_error& e) {
    // In the project's words: the path and the system's reason, not the library's wording.
    std::cerr << "skyphase: error: " << e.path1().string() << ": " << e.code().message() << "\n";
    return 1;
  } catch (const std::bad_alloc&) {
    std::cerr << "skyphase: error: out of memory (the input is larger than this machine can "
                 "hold; try fewer threads or a shorter night)\n";
    return 1;
  } catch (const std::exception& e) {
    // A failure inside a library we use: say so rather than print its bare message.
    std::cerr << "skyphase: error: internal failure (" << e.what()
              << "); please report it with the command line\n";
    return 1;
  }
  return 0;
}
