#include "daemon/server/control_service.h"

#include <algorithm>
#include <limits>

#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/counters.h"
#include "daemon/pipeline/glob.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/server/routing.h"

namespace bayline::server {
namespace {

bayline::v1::Reply Error(std::string message) {
  bayline::v1::Reply reply;
  reply.set_ok(false);
  reply.set_error(std::move(message));
  return reply;
}

}  // namespace

ControlService::ControlService(const std::vector<std::unique_ptr<Worker>>& workers,
                               const Ingest& ingest, Shard shard, DaemonActions& actions)
    : workers_(workers), ingest_(ingest), shard_(shard), actions_(actions) {}

void ControlService::HandleBytes(std::string_view bytes, ReplyFn reply) {
  bayline::v1::Request request;
  if (bytes.size() > size_t(std::numeric_limits<int>::max()) ||
      !request.ParseFromArray(bytes.data(), int(bytes.size()))) {
    CountRejected("malformed_request");
    reply(Error("malformed request: not a bayline.v1.Request (" + std::to_string(bytes.size()) +
                " bytes)"));
    return;
  }
  Handle(request, std::move(reply));
}

bayline::v1::Reply ControlService::RejectMultipart(size_t parts) {
  CountRejected("multipart_request");
  return Error("malformed request: " + std::to_string(parts) +
               " message parts; a request is one part holding a bayline.v1.Request");
}

void ControlService::Handle(const bayline::v1::Request& request, ReplyFn reply) {
  if (request.op_case() != bayline::v1::Request::kSnapshot) {
    reply(HandleNow(request));
    return;
  }
  actions_.RequestSnapshot([reply = std::move(reply)](bool ok,
                                                      const bayline::v1::SnapshotInfo& info,
                                                      const std::string& error) {
    if (!ok) {
      reply(Error(error));
      return;
    }
    bayline::v1::Reply written;
    written.set_ok(true);
    *written.mutable_snapshot() = info;
    reply(std::move(written));
  });
}

bayline::v1::Reply ControlService::HandleNow(const bayline::v1::Request& request) {
  using R = bayline::v1::Request;
  switch (request.op_case()) {
    case R::kList:
      return List(request.list().glob());
    case R::kAsk:
      return Ask(request.ask().channel());
    case R::kReset:
      return Reset(request.reset().channel());
    case R::kStats:
      return Stats();
    case R::kReload: {
      std::string message;
      if (!actions_.Reload(&message)) return Error(message);
      bayline::v1::Reply reply;
      reply.set_ok(true);
      reply.set_message(message);
      return reply;
    }
    default:
      return Error("empty request: set one of list, ask, reset, stats, snapshot, reload");
  }
}

Worker* ControlService::OwnerOf(std::string_view channel) const {
  const uint64_t h = pipeline::ChannelHash(channel);
  if (!InShard(h, shard_)) return nullptr;
  return workers_[WorkerOf(h, shard_, workers_.size())].get();
}

bayline::v1::Reply ControlService::List(const std::string& glob) {
  if (glob.size() > pipeline::kMaxGlobBytes) {
    return Error("list: glob of " + std::to_string(glob.size()) + " bytes exceeds the limit of " +
                 std::to_string(pipeline::kMaxGlobBytes) + " bytes");
  }
  bayline::v1::Reply reply;
  auto* channels = reply.mutable_channels()->mutable_channels();
  for (const auto& worker : workers_) {
    bayline::v1::ChannelList part =
        worker->Call([&glob](pipeline::Pipeline& p) { return p.List(glob); });
    for (auto& info : *part.mutable_channels()) channels->Add()->Swap(&info);
  }
  std::sort(channels->begin(), channels->end(),
            [](const auto& a, const auto& b) { return a.name() < b.name(); });
  reply.set_ok(true);
  return reply;
}

bayline::v1::Reply ControlService::Ask(const std::string& channel) {
  Worker* owner = OwnerOf(channel);
  std::optional<bayline::v1::ChannelReport> report;
  if (owner != nullptr) {
    report = owner->Call([&channel](pipeline::Pipeline& p) { return p.Ask(channel); });
  }
  if (!report) return Error("unknown channel: \"" + channel + "\"");
  bayline::v1::Reply reply;
  reply.set_ok(true);
  *reply.mutable_channel() = std::move(*report);
  return reply;
}

bayline::v1::Reply ControlService::Reset(const std::string& channel) {
  Worker* owner = OwnerOf(channel);
  const bool known = owner != nullptr &&
                     owner->Call([&channel](pipeline::Pipeline& p) { return p.Reset(channel); });
  if (!known) return Error("unknown channel: \"" + channel + "\"");
  bayline::v1::Reply reply;
  reply.set_ok(true);
  reply.set_message("channel \"" + channel + "\" reset");
  return reply;
}

bayline::v1::Reply ControlService::Stats() {
  bayline::v1::Reply reply;
  auto* stats = reply.mutable_stats();
  const auto now = std::chrono::steady_clock::now();
  stats->set_uptime_s(std::chrono::duration<double>(now - started_).count());
  for (const auto& worker : workers_) {
    stats->add_worker_queue_depth(worker->queue_depth());
    const pipeline::Counters c = worker->counters();
    stats->set_observations_accepted(stats->observations_accepted() + c.accepted);
    stats->set_channels(stats->channels() + c.channels);
    stats->set_publications(stats->publications() + c.publications);
    stats->set_seq_gaps(stats->seq_gaps() + c.seq_gaps);
    stats->set_seq_duplicates(stats->seq_duplicates() + c.seq_duplicates);
    stats->set_seq_reordered(stats->seq_reordered() + c.seq_reordered);
    stats->set_channels_not_restored(stats->channels_not_restored() + c.channels_not_restored);
    auto& by_reason = *stats->mutable_rejected_by_reason();
    for (const auto& [reason, count] : c.rejected_by_reason) by_reason[reason] += count;
  }
  // The ingest counters are read after the workers' counters: the hand-over to a worker orders the
  // ingest's count of a frame before the worker's count of its observations, so the reply never
  // shows observations of a frame it does not count as received.
  stats->set_frames_received(ingest_.frames_received());
  const uint64_t received = ingest_.observations_received();
  stats->set_observations_received(received);
  stats->set_snapshots_written(actions_.snapshots_written());
  for (const auto& [reason, count] : rejected_by_reason_) {
    (*stats->mutable_control_rejected_by_reason())[reason] = count;
  }
  const double interval = std::chrono::duration<double>(now - last_stats_time_).count();
  if (interval > 0) {
    stats->set_observations_per_second(double(received - last_stats_observations_) / interval);
  }
  last_stats_time_ = now;
  last_stats_observations_ = received;
  reply.set_ok(true);
  return reply;
}

}  // namespace bayline::server
