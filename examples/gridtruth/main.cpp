// gridtruth — the command-line tool: how wrong do lengths and areas become on the grid of a projected CRS?
// main() only dispatches: it sets up the commands (one file each beside this one, commands.hpp), parses the
// arguments and runs the command chosen.
//
//   gridtruth COMMAND [options]      (gridtruth --help lists the commands)
//
// Exit status: as the command says (0 fine, 1 findings); 2 when nothing could be done, with a one-line reason.
#include <fcntl.h>
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <cerrno>
#include <exception>
#include <iostream>
#include <string>
#include <vector>

#include "commands.hpp"
#include "gridtruth/crs.hpp"

#ifndef GRIDTRUTH_VERSION
#define GRIDTRUTH_VERSION "unknown"
#endif

namespace {

using namespace gridtruth;
using cli::fail_run;

/// A closed standard descriptor would be taken by the next file opened (PROJ's database, an output), which would
/// then be read as the input or written with the rows: hold each on /dev/null, and remember a closed input.
void hold_closed_standard_descriptors() {
  for (const int fd : {STDIN_FILENO, STDOUT_FILENO, STDERR_FILENO}) {
    if (fcntl(fd, F_GETFD) != -1 || errno != EBADF) continue;
    if (open("/dev/null", fd == STDIN_FILENO ? O_RDONLY : O_WRONLY) == fd && fd == STDIN_FILENO)
      cli::standard_input_closed() = true;
  }
}

/// Every command on `app`: audit first, then the registered ones in registration order.
std::vector<cli::Command> set_up_commands(CLI::App& app) {
  std::vector<cli::Command> commands = {cli::set_up_audit(app)};
  for (const cli::CommandSpec& spec : cli::command_registry()) commands.push_back(spec.setup(app));
  return commands;
}

/// "" when argv[1] is an option or a command's name, else the reason to stop (CLI11 would say less).
std::string unknown_command_problem(int argc, char** argv, const std::vector<cli::Command>& commands) {
  if (argc < 2 || argv[1][0] == '-') return "";
  std::string command_names;
  for (const cli::Command& command : commands) {
    if (command.app->get_name() == argv[1]) return "";
    command_names += (command_names.empty() ? "" : ", ") + command.app->get_name();
  }
  return "unknown command \"" + std::string(argv[1]) + "\" (the commands are " + command_names +
         "; see 'gridtruth --help')";
}

/// The exit status for a CLI11 parse error: --help and --version print and succeed; a bad option is one line.
int parse_error_status(const CLI::App& app, const std::vector<cli::Command>& commands, const CLI::ParseError& e) {
  const cli::Command* chosen = nullptr;
  for (const cli::Command& command : commands)
    if (app.got_subcommand(command.app)) chosen = &command;
  if (e.get_exit_code() == 0) {  // --help, --version
    // A command's own help may open with a long description (the command list keeps the short one).
    if (chosen && !chosen->help_description.empty()) chosen->app->description(chosen->help_description);
    return app.exit(e);
  }
  std::string what = e.what();
  for (auto& c : what)
    if (c == '\n') c = ' ';
  const std::string command = chosen && chosen->own_help_hint ? chosen->app->get_name() + " " : "";
  return fail_run(what + " (see 'gridtruth " + command + "--help')");
}

}  // namespace

int main(int argc, char** argv) {
  hold_closed_standard_descriptors();
  std::ios::sync_with_stdio(false);
  CLI::App app{"gridtruth: how wrong do lengths and areas become on the grid of a projected CRS?"};
  app.name("gridtruth");
  app.set_version_flag("--version", std::string("gridtruth ") + GRIDTRUTH_VERSION);
  app.require_subcommand(1);
  app.footer(std::string("\nRun 'gridtruth COMMAND --help' for a command's options.\n\n") + cli::caution_text + "\n");

  const std::vector<cli::Command> commands = set_up_commands(app);
  if (const std::string problem = unknown_command_problem(argc, argv, commands); !problem.empty())
    return fail_run(problem);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return parse_error_status(app, commands, e);
  }
  // CRS definitions come from the command line and input files: PROJ opens only its own data files unless told.
  set_crs_file_access(cli::trusted_crs_given() ? CrsFileAccess::any : CrsFileAccess::data_directories);
  for (const cli::Command& command : commands) {
    if (!app.got_subcommand(command.app)) continue;
    try {
      return command.run();
    } catch (const std::exception& e) {
      return fail_run(e.what());
    }
  }
  return fail_run("no command given (see 'gridtruth --help')");
}
