// follow: subscribe to the daemon's publications. Kinds and channel globs become ZeroMQ prefix
// subscriptions "<kind>/<literal prefix of the glob>"; the full glob is then checked on each
// publication's channel. On a terminal: a live table redrawn in place (at most 5 times a second);
// otherwise (or with --json): one JSON line per publication, flushed as it arrives.
#include <unistd.h>

#include <cerrno>
#include <chrono>
#include <cstdio>
#include <iostream>
#include <memory>
#include <set>
#include <zmq_addon.hpp>

#include "bayline/v1/publication.pb.h"
#include "clients/cli/channel_glob.h"
#include "clients/cli/command_support.h"
#include "clients/cli/commands.h"
#include "clients/cli/json_line.h"
#include "clients/cli/live_table.h"
#include "daemon/defaults.h"

namespace bayline::cli {
namespace {

struct FollowOptions {
  std::vector<std::string> endpoints = {kDefaultPublishEndpoint};
  std::vector<std::string> kinds;
  std::string channel_glob;
  uint64_t count = 0;
  double seconds = 0;
  bool json = false;
};

const std::vector<std::string> kAllKinds = {"estimate", "alarm", "input_error", "prediction"};

std::string ChannelOf(const bayline::v1::Publication& p) {
  switch (p.kind_case()) {
    case bayline::v1::Publication::kEstimate:
      return p.estimate().channel();
    case bayline::v1::Publication::kAlarm:
      return p.alarm().channel();
    case bayline::v1::Publication::kInputError:
      return p.input_error().channel();
    case bayline::v1::Publication::kPrediction:
      return p.prediction().channel();
    default:
      return {};
  }
}

int RunFollow(const FollowOptions& o) {
  const auto& stop = StopRequested();
  zmq::socket_t socket(ZmqContext(), zmq::socket_type::sub);
  socket.set(zmq::sockopt::linger, 0);
  socket.set(zmq::sockopt::rcvhwm, 100000);
  const std::vector<std::string>& kinds = o.kinds.empty() ? kAllKinds : o.kinds;
  const std::string prefix = LiteralPrefix(o.channel_glob);
  for (const auto& kind : kinds) socket.set(zmq::sockopt::subscribe, kind + "/" + prefix);
  for (const auto& endpoint : o.endpoints) {
    try {
      socket.connect(endpoint);
    } catch (const zmq::error_t& e) {
      throw CommandError(kExitBadInput, "bad publish endpoint '" + endpoint + "': " + e.what());
    }
  }

  const bool table = !o.json && isatty(STDOUT_FILENO);
  LiveTable live;
  Painter painter(stdout);
  std::string title = "bayline follow " + o.endpoints.front();
  using Clock = std::chrono::steady_clock;
  const auto start = Clock::now();
  auto next_paint = start;
  uint64_t shown = 0;
  bool dirty = table;
  bayline::v1::Publication publication;
  std::vector<zmq::message_t> parts;

  while (!stop.load()) {
    if (o.count > 0 && shown >= o.count) break;
    auto now = Clock::now();
    if (o.seconds > 0 && now - start >= std::chrono::duration<double>(o.seconds)) break;
    if (table && dirty && now >= next_paint) {
      auto [width, height] = TerminalSize(STDOUT_FILENO);
      painter.Paint(live.Render(title, width, height - 1));
      dirty = false;
      next_paint = now + std::chrono::milliseconds(200);
    }
    zmq::pollitem_t item{socket.handle(), 0, ZMQ_POLLIN, 0};
    try {
      zmq::poll(&item, 1, std::chrono::milliseconds(100));  // wakes up to check stop and deadlines
    } catch (const zmq::error_t& e) {
      if (e.num() == EINTR) continue;  // a signal: the loop condition looks at the stop flag
      throw;
    }
    if ((item.revents & ZMQ_POLLIN) == 0) continue;
    while (o.count == 0 || shown < o.count) {
      parts.clear();
      try {
        if (!zmq::recv_multipart(socket, std::back_inserter(parts), zmq::recv_flags::dontwait)) {
          break;
        }
      } catch (const zmq::error_t& e) {
        if (e.num() == EINTR) break;
        throw;
      }
      if (parts.size() != 2 ||
          !publication.ParseFromArray(parts[1].data(), static_cast<int>(parts[1].size()))) {
        std::cerr << "bayline follow: skipped an undecodable publication\n";
        continue;
      }
      if (!GlobMatch(o.channel_glob, ChannelOf(publication))) continue;
      ++shown;
      if (table) {
        live.Absorb(publication);
        dirty = true;
      } else {
        std::string line = ToJsonLine(publication) + "\n";
        std::fwrite(line.data(), 1, line.size(), stdout);
        std::fflush(stdout);
      }
    }
  }
  if (table) {
    auto [width, height] = TerminalSize(STDOUT_FILENO);
    painter.Paint(live.Render(title, width, height - 1));
  }
  return 0;
}

}  // namespace

Subcommand AddFollowCommand(CLI::App& app) {
  auto o = std::make_shared<FollowOptions>();
  CLI::App* sub = app.add_subcommand(
      "follow", "show the daemon's publications: a live table on a terminal, else JSON Lines");
  sub->add_option("--endpoint", o->endpoints,
                  "daemon publish endpoint(s); repeat to follow several (sharded) daemons")
      ->capture_default_str();
  sub->add_option("--kind", o->kinds, "estimate, alarm, input_error or prediction (repeatable)")
      ->check(CLI::IsMember(kAllKinds));
  sub->add_option("--channel", o->channel_glob,
                  "channel glob ('*' one segment, '**' any depth, '?' one character)");
  sub->add_option("--count", o->count, "stop after N publications")->check(CLI::PositiveNumber);
  sub->add_option("--seconds", o->seconds, "stop after S seconds")->check(CLI::PositiveNumber);
  sub->add_flag("--json", o->json, "JSON Lines even on a terminal");
  return {sub, [o] { return RunFollow(*o); }};
}

}  // namespace bayline::cli
