// The `bayline` subcommands. Each Add*Command registers its options on `app` and returns the
// subcommand plus the function main() calls when that subcommand was given; the function returns
// the exit status or throws InputError / CommandError (see command_support.h).
#pragma once

#include <CLI/CLI.hpp>
#include <functional>
#include <vector>

namespace bayline::cli {

struct Subcommand {
  CLI::App* app;
  std::function<int()> run;
};

Subcommand AddSendCommand(CLI::App& app);
Subcommand AddFollowCommand(CLI::App& app);
// ask, list, reset, stats, snapshot, reload.
std::vector<Subcommand> AddControlCommands(CLI::App& app);
Subcommand AddReplayCommand(CLI::App& app);
Subcommand AddThresholdCommand(CLI::App& app);
Subcommand AddPlotCommand(CLI::App& app);

}  // namespace bayline::cli
