// bayline: the command line of the bayline daemon: send observations, follow publications, ask
// the control API, replay files offline, choose alarm thresholds, plot a channel's history.
#include <google/protobuf/stubs/common.h>

#include <CLI/CLI.hpp>
#include <iostream>

#include "clients/cli/command_support.h"
#include "clients/cli/commands.h"
#include "clients/cli/input_error.h"

int main(int argc, char** argv) {
  using namespace bayline::cli;
  CLI::App app{
      "bayline: feed, follow and query the bayline estimation daemon; replay files "
      "offline; choose alarm thresholds; plot"};
  app.require_subcommand(1);
  app.footer(
      "Endpoints default to the daemon's built-in loopback ones. Exit status: 0 ok, 1 bad input "
      "or an error reply, 2 the daemon did not answer, 3 python3 failed (plot).\n"
      "Run 'bayline <command> --help' for a command's options.");
  std::vector<Subcommand> commands = {AddSendCommand(app), AddFollowCommand(app)};
  for (auto& c : AddControlCommands(app)) commands.push_back(c);
  commands.push_back(AddReplayCommand(app));
  commands.push_back(AddThresholdCommand(app));
  commands.push_back(AddPlotCommand(app));

  CLI11_PARSE(app, argc, argv);
  for (const Subcommand& c : commands) {
    if (!c.app->parsed()) continue;
    const std::string name = "bayline " + c.app->get_name();
    try {
      int status = c.run();
      google::protobuf::ShutdownProtobufLibrary();
      return status;
    } catch (const InputError& e) {
      std::cerr << name << ": " << e.what() << "\n";
      return kExitBadInput;
    } catch (const CommandError& e) {
      std::cerr << name << ": " << e.what() << "\n";
      return e.exit_status();
    } catch (const std::exception& e) {
      std::cerr << name << ": " << e.what() << "\n";
      return kExitBadInput;
    }
  }
  return kExitBadInput;
}
