// ask / list / reset / stats / snapshot / reload: one control request each, a readable table by
// default, JSON Lines (protobuf JSON mapping, proto field names) with --json.
#include <iostream>
#include <memory>

#include "bayline/v1/control.pb.h"
#include "clients/cli/command_support.h"
#include "clients/cli/commands.h"
#include "clients/cli/control_client.h"
#include "clients/cli/control_format.h"
#include "clients/cli/json_render.h"
#include "daemon/defaults.h"

namespace bayline::cli {
namespace {

struct ControlOptions {
  std::string endpoint = kDefaultControlEndpoint;
  double timeout_s = 5.0;
  bool json = false;
  std::string channel;
  std::string glob;
};

void AddCommonOptions(CLI::App* sub, ControlOptions* o) {
  sub->add_option("--control", o->endpoint, "daemon control endpoint")->capture_default_str();
  sub->add_option("--timeout", o->timeout_s, "seconds to wait for the reply")
      ->capture_default_str()
      ->check(CLI::PositiveNumber);
  sub->add_flag("--json", o->json,
                "print JSON Lines (protobuf JSON mapping, proto field names) instead of a table");
}

// Sends, checks ok, prints with `table` or as JSON; returns the exit status.
int Exchange(const ControlOptions& o, const bayline::v1::Request& request,
             const std::function<void(const bayline::v1::Reply&)>& print) {
  bayline::v1::Reply reply =
      CallDaemon(o.endpoint, request, static_cast<int>(o.timeout_s * 1000.0));
  if (!reply.ok()) {
    throw CommandError(kExitBadInput, "daemon refused: " + reply.error());
  }
  print(reply);
  return 0;
}

}  // namespace

std::vector<Subcommand> AddControlCommands(CLI::App& app) {
  std::vector<Subcommand> out;
  auto o = std::make_shared<ControlOptions>();

  CLI::App* ask = app.add_subcommand("ask", "show a channel's estimates and detector states");
  ask->add_option("channel", o->channel, "channel name")->required();
  AddCommonOptions(ask, o.get());
  out.push_back({ask, [o] {
                   bayline::v1::Request r;
                   r.mutable_ask()->set_channel(o->channel);
                   return Exchange(*o, r, [&](const bayline::v1::Reply& reply) {
                     if (o->json) {
                       std::cout << MessageJsonLine(reply.channel()) << "\n";
                     } else {
                       std::cout << FormatChannelReport(reply.channel());
                     }
                   });
                 }});

  CLI::App* list = app.add_subcommand("list", "list channels (optionally matching a glob)");
  list->add_option("glob", o->glob, "channel glob ('*' one segment, '**' any depth, '?')");
  AddCommonOptions(list, o.get());
  out.push_back({list, [o] {
                   bayline::v1::Request r;
                   r.mutable_list()->set_glob(o->glob);
                   return Exchange(*o, r, [&](const bayline::v1::Reply& reply) {
                     if (o->json) {
                       for (const auto& c : reply.channels().channels()) {
                         std::cout << MessageJsonLine(c) << "\n";
                       }
                     } else {
                       std::cout << FormatChannelList(reply.channels());
                     }
                   });
                 }});

  CLI::App* reset =
      app.add_subcommand("reset", "forget a channel's state (restarts from its rule)");
  reset->add_option("channel", o->channel, "channel name")->required();
  AddCommonOptions(reset, o.get());
  out.push_back({reset, [o] {
                   bayline::v1::Request r;
                   r.mutable_reset()->set_channel(o->channel);
                   return Exchange(*o, r, [&](const bayline::v1::Reply& reply) {
                     if (o->json) {
                       std::cout << MessageJsonLine(reply) << "\n";
                     } else {
                       std::cout << (reply.message().empty() ? "reset " + o->channel
                                                             : reply.message())
                                 << "\n";
                     }
                   });
                 }});

  CLI::App* stats = app.add_subcommand("stats", "show the daemon's counters");
  AddCommonOptions(stats, o.get());
  out.push_back({stats, [o] {
                   bayline::v1::Request r;
                   r.mutable_stats();
                   return Exchange(*o, r, [&](const bayline::v1::Reply& reply) {
                     if (o->json) {
                       std::cout << MessageJsonLine(reply.stats()) << "\n";
                     } else {
                       std::cout << FormatStats(reply.stats());
                     }
                   });
                 }});

  CLI::App* snapshot = app.add_subcommand("snapshot", "ask the daemon to write a snapshot now");
  AddCommonOptions(snapshot, o.get());
  out.push_back({snapshot, [o] {
                   bayline::v1::Request r;
                   r.mutable_snapshot();
                   return Exchange(*o, r, [&](const bayline::v1::Reply& reply) {
                     if (o->json) {
                       std::cout << MessageJsonLine(reply.snapshot()) << "\n";
                     } else {
                       std::cout << FormatSnapshotInfo(reply.snapshot());
                     }
                   });
                 }});

  CLI::App* reload = app.add_subcommand("reload", "ask the daemon to re-read its config file");
  AddCommonOptions(reload, o.get());
  out.push_back({reload, [o] {
                   bayline::v1::Request r;
                   r.mutable_reload();
                   return Exchange(*o, r, [&](const bayline::v1::Reply& reply) {
                     if (o->json) {
                       std::cout << MessageJsonLine(reply) << "\n";
                     } else {
                       std::cout << (reply.message().empty() ? "reloaded" : reply.message())
                                 << "\n";
                     }
                   });
                 }});
  return out;
}

}  // namespace bayline::cli
