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

/// `static const CommandRegistrar registrar{"rank", set_up_rank};` in a command's .cpp registers it.
struct CommandRegistrar {
  CommandRegistrar(std::string name, CommandSetup setup) {
    command_registry().push_back({std::move(name), std::move(setup)});
  }
};

}  // namespace gridtruth::cli
