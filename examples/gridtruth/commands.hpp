// The gridtruth tool's commands besides `audit`: each lives in its own examples/cmd_<name>.cpp and registers
// itself at start-up, so adding a command touches neither main() nor the build files.
#pragma once

#include <CLI/CLI.hpp>

#include <functional>
#include <string>
#include <utility>
#include <vector>

namespace gridtruth::cli {

/// What a command's set-up returns: its CLI11 subcommand, and what to run when the user chose it (returns the
/// exit status: 0 fine, 1 findings, 2 nothing could be done, as for audit).
struct Command {
  CLI::App* app = nullptr;
  std::function<int()> run;
};

/// Declares a command on the tool's app (options bound to storage the function keeps alive).
using CommandSetup = std::function<Command(CLI::App& tool)>;

struct CommandSpec {
  std::string name;
  CommandSetup setup;
};

/// Every registered command, in registration order.
inline std::vector<CommandSpec>& command_registry() {
  static std::vector<CommandSpec> commands;
  return commands;
}

/// Whether the tool started with standard input closed (main() then holds descriptor 0 on /dev/null, so that no
/// file it opens later is mistaken for standard input).
inline bool& standard_input_closed() {
  static bool closed = false;
  return closed;
}

/// Whether --trusted-crs was given to the command being run (every command has the flag).
inline bool& trusted_crs_given() {
  static bool given = false;
  return given;
}

/// Adds --trusted-crs to a command. Without it, PROJ may open grid and init files only inside its data
/// directories (gridtruth::CrsFileAccess::data_directories); main() applies the choice before the command runs.
inline void add_trusted_crs_flag(CLI::App* app) {
  app->add_flag("--trusted-crs", trusted_crs_given(),
                "let CRS definitions name any grid or init file (+nadgrids=, +grids=, +geoidgrids=, +init=); "
                "without it only regular files in PROJ's data directories are opened");
}

/// `static const CommandRegistrar registrar{"rank", set_up_rank};` in a command's .cpp registers it.
struct CommandRegistrar {
  CommandRegistrar(std::string name, CommandSetup setup) {
    command_registry().push_back({std::move(name), std::move(setup)});
  }
};

}  // namespace gridtruth::cli
