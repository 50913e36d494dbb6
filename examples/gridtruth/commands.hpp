// The gridtruth tool's commands: each lives in its own examples/gridtruth/<name>.cpp. `audit` is set up first by
// main() (set_up_audit(), so that it leads the command list); every other command registers itself at start-up,
// so adding one touches neither main() nor the build files.
#pragma once

#include <CLI/CLI.hpp>

#include <functional>
#include <iostream>
#include <string>
#include <utility>
#include <vector>

namespace gridtruth::cli {

/// What a command's set-up returns: its CLI11 subcommand, and what to run when the user chose it (returns the
/// exit status: 0 fine, 1 findings, 2 nothing could be done, as for audit).
struct Command {
  CLI::App* app = nullptr;
  std::function<int()> run;
  /// The description the command's own --help opens with; empty: the summary line the command list shows.
  std::string help_description;
  /// Whether a bad option's message points at the command's own help ("see 'gridtruth audit --help'") rather
  /// than the tool's.
  bool own_help_hint = false;
};

/// The caution every command's --help and the audit's summaries print.
inline constexpr const char* caution_text =
    "Caution: these figures support, and do not replace, licensed survey practice and local codes.";

/// The exit statuses every command shares.
constexpr int exit_ok = 0;        ///< done; no findings
constexpr int exit_findings = 1;  ///< done, with findings (a failed tolerance, an invalid or unmeasurable feature)
constexpr int exit_unusable = 2;  ///< nothing could be done: a bad option, an unreadable input, an unknown CRS

/// One line on standard error, "gridtruth: <reason>"; returns exit_unusable.
inline int fail_run(const std::string& reason) {
  std::cerr << "gridtruth: " << reason << "\n";
  return exit_unusable;
}

/// Declares `gridtruth audit` on the tool's app (examples/gridtruth/audit.cpp).
Command set_up_audit(CLI::App& tool);

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
