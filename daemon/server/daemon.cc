#include "daemon/server/daemon.h"

#include <signal.h>
#include <spdlog/spdlog.h>

#include <thread>

#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/resource_limits.h"
#include "daemon/server/config_loader.h"
#include "daemon/server/persistence.h"

namespace bayline::server {
namespace {

constexpr size_t kWorkerQueueCapacity = 64;  // batches of up to Ingest::kMaxBatch observations
constexpr int kControlReceiveMessages = 64;   // requests queued per control client
constexpr double kDefaultSnapshotEveryS = 60;

std::string Join(const std::vector<std::string>& items) {
  std::string out;
  for (const auto& s : items) out += (out.empty() ? "" : ",") + s;
  return out.empty() ? "-" : out;
}

}  // namespace

Daemon::Daemon(DaemonOptions options) : options_(std::move(options)), context_(1) {}

Daemon::~Daemon() {
  // Threads end before their sockets and the context go away.
  if (ingest_) ingest_->Stop();
  for (auto& w : workers_) w->Stop();
}

void Daemon::ApplyRuntimeSettings() {
  spdlog::set_level(spdlog::level::from_str(config_.log_level().empty() ? "info"
                                                                        : config_.log_level()));
  const double every = config_.snapshot_every_s() > 0 ? config_.snapshot_every_s()
                                                      : kDefaultSnapshotEveryS;
  snapshot_period_ = std::chrono::duration_cast<std::chrono::steady_clock::duration>(
      std::chrono::duration<double>(every));
  next_snapshot_ = std::chrono::steady_clock::now() + snapshot_period_;
}

bool Daemon::Start() {
  std::string error;
  if (!LoadDaemonConfig(options_, options_.config_file, &config_, &error)) {
    spdlog::error("configuration: {}", error);
    return false;
  }
  ParseShard(config_.shard(), &shard_, &error);  // validated by LoadDaemonConfig
  ApplyRuntimeSettings();
  if (signals_.fd() < 0) spdlog::warn("signalfd unavailable: signals keep their default action");

  store_ = std::make_unique<SnapshotStore>(config_.state_dir());
  if (!store_->Open(&error)) {
    spdlog::error("state directory: {}", error);
    return false;
  }
  const size_t worker_count =
      config_.workers() > 0 ? config_.workers() : std::max(1u, std::thread::hardware_concurrency());
  // Every pipeline keeps all it is given: routing (and the shard) is the daemon's job.
  std::vector<std::unique_ptr<pipeline::Pipeline>> pipelines(worker_count);
  for (auto& p : pipelines) p = std::make_unique<pipeline::Pipeline>(config_);
  const RestoreOutcome restored = RestoreNewestGood(*store_, config_, shard_, &pipelines);
  for (const auto& why : restored.skipped) spdlog::error("snapshot not used: {}", why);
  for (const auto& name : restored.reset_channels) {
    spdlog::warn("channel \"{}\" restarts from its rule: its spec changed since the snapshot", name);
  }
  if (restored.path.empty()) {
    spdlog::info("no usable snapshot in {}: starting empty", store_->dir().string());
  } else {
    spdlog::info("restored {} channels from {}{}", restored.channels, restored.path,
                 restored.other_shard ? " (" + std::to_string(restored.other_shard) +
                                            " channels of other shards ignored)"
                                      : std::string());
  }

  publisher_ = std::make_unique<Publisher>(context_);
  std::string publish_endpoint;
  if (!publisher_->Bind(config_.endpoints().publish_bind(), &publish_endpoint, &error)) {
    spdlog::error("{}", error);
    return false;
  }
  const pipeline::ResourceLimits limits =
      pipeline::EffectiveResourceLimits(config_.limits(), worker_count);
  std::vector<Worker*> raw_workers;
  for (size_t i = 0; i < worker_count; ++i) {
    workers_.push_back(std::make_unique<Worker>(int(i), std::move(pipelines[i]), *publisher_,
                                                kWorkerQueueCapacity,
                                                limits.queued_bytes_per_worker));
    raw_workers.push_back(workers_.back().get());
  }
  ingest_ = std::make_unique<Ingest>(context_, raw_workers, shard_,
                                     config_.limits().max_frame_bytes(),
                                     limits.ingest_message_bytes, limits.ingest_receive_messages);
  IngestEndpoints endpoints;
  for (const auto& e : config_.endpoints().pull_bind()) endpoints.pull_bind.push_back(e);
  for (const auto& e : config_.endpoints().sub_connect()) endpoints.sub_connect.push_back(e);
  std::vector<std::string> ingest_bound;
  if (!ingest_->Bind(endpoints, &ingest_bound, &error)) {
    spdlog::error("{}", error);
    return false;
  }
  control_ = std::make_unique<zmq::socket_t>(context_, zmq::socket_type::rep);
  std::string control_endpoint;
  try {
    control_->set(zmq::sockopt::linger, 0);
    control_->set(zmq::sockopt::maxmsgsize, int64_t(limits.control_message_bytes));
    control_->set(zmq::sockopt::rcvhwm, kControlReceiveMessages);
    control_->bind(config_.endpoints().control_bind());
    control_endpoint = control_->get(zmq::sockopt::last_endpoint);
  } catch (const zmq::error_t& e) {
    spdlog::error("control_bind {}: {}", config_.endpoints().control_bind(), e.what());
    return false;
  }
  control_service_ = std::make_unique<ControlService>(workers_, *ingest_, shard_, *this);

  for (auto& w : workers_) w->Start();
  ingest_->Start();
  std::vector<std::string> pulls(ingest_bound.begin(),
                                 ingest_bound.begin() + endpoints.pull_bind.size());
  // Printed at every log level: it is how `*` ports are discovered.
  const auto level = spdlog::get_level();
  if (level > spdlog::level::info) spdlog::set_level(spdlog::level::info);
  spdlog::info("ready: pull={} sub={} publish={} control={} workers={} shard={}/{} state_dir={}",
               Join(pulls), Join(endpoints.sub_connect), publish_endpoint, control_endpoint,
               worker_count, shard_.index, shard_.count, store_->dir().string());
  spdlog::set_level(level);
  return true;
}

int Daemon::Run() {
  if (!Start()) return 1;
  Serve();
  Shutdown();
  return 0;
}

void Daemon::Serve() {
  zmq::pollitem_t items[] = {{control_->handle(), 0, ZMQ_POLLIN, 0},
                             {nullptr, signals_.fd(), ZMQ_POLLIN, 0}};
  const int count = signals_.fd() >= 0 ? 2 : 1;
  while (!stop_requested_) {
    const auto now = std::chrono::steady_clock::now();
    const auto wait = std::chrono::duration_cast<std::chrono::milliseconds>(next_snapshot_ - now);
    zmq::poll(items, size_t(count), std::max(wait, std::chrono::milliseconds(0)));
    if (count == 2 && (items[1].revents & ZMQ_POLLIN)) {
      for (int signal : signals_.TakePending()) {
        if (signal == SIGHUP) {
          std::string message;
          Reload(&message);
        } else {
          spdlog::info("signal {}: stopping", signal == SIGTERM ? "SIGTERM" : "SIGINT");
          stop_requested_ = true;
        }
      }
    }
    if (items[0].revents & ZMQ_POLLIN) HandleControl();
    if (!stop_requested_ && std::chrono::steady_clock::now() >= next_snapshot_) {
      bayline::v1::SnapshotInfo info;
      std::string error;
      SnapshotNow(&info, &error);  // logs either way
    }
  }
}

void Daemon::HandleControl() {
  zmq::message_t request;
  if (!control_->recv(request, zmq::recv_flags::dontwait)) return;
  while (request.more()) {  // a REP request is one frame; drop any extra parts
    zmq::message_t extra;
    if (!control_->recv(extra, zmq::recv_flags::none)) break;
  }
  bayline::v1::Reply reply = control_service_->HandleBytes(request.to_string_view());
  // Errors and messages quote outside bytes (config files, requests): clients parse them as UTF-8.
  if (!pipeline::IsValidUtf8(reply.error())) {
    reply.set_error(pipeline::ReplaceInvalidUtf8(reply.error()));
  }
  if (!pipeline::IsValidUtf8(reply.message())) {
    reply.set_message(pipeline::ReplaceInvalidUtf8(reply.message()));
  }
  const std::string bytes = reply.SerializeAsString();
  control_->send(zmq::buffer(bytes), zmq::send_flags::none);
}

bool Daemon::SnapshotNow(bayline::v1::SnapshotInfo* info, std::string* error) {
  next_snapshot_ = std::chrono::steady_clock::now() + snapshot_period_;
  if (!WriteSnapshot(workers_, *store_, config_, info, error)) {
    spdlog::error("snapshot failed: {}", *error);
    return false;
  }
  ++snapshots_written_;
  spdlog::info("snapshot {}: {} channels, {} bytes", info->path(), info->channels(), info->bytes());
  return true;
}

bool Daemon::Reload(std::string* message) {
  if (options_.config_file.empty()) {
    *message = "no --config file: nothing to reload";
    spdlog::info("reload: {}", *message);
    return true;
  }
  bayline::v1::DaemonConfig next;
  std::string error;
  if (!LoadDaemonConfig(options_, options_.config_file, &next, &error)) {
    *message = "reload rejected, configuration unchanged: " + error;
    spdlog::error("{}", *message);
    return false;
  }
  // Settings fixed at start.
  std::string later;
  if (next.endpoints().SerializeAsString() != config_.endpoints().SerializeAsString())
    later += " endpoints";
  if (next.workers() != config_.workers()) later += " workers";
  if (next.state_dir() != config_.state_dir()) later += " state_dir";
  if (next.shard() != config_.shard()) later += " shard";
  if (!later.empty()) spdlog::warn("reload: changes to{} take effect at the next start", later);

  // The first worker validates and calibrates; the others see the same config and so agree.
  std::vector<std::string> reset;
  for (auto& worker : workers_) {
    bayline::est::Status status = worker->Call([&next, &reset](pipeline::Pipeline& p) {
      return p.Reconfigure(next, &reset);
    });
    if (!status.ok()) {
      *message = "reload rejected, configuration unchanged: " + status.ToString();
      spdlog::error("{}", *message);
      return false;
    }
  }
  for (const auto& name : reset) spdlog::warn("reload: channel \"{}\" reset: its spec changed", name);
  const std::string keep_dir = config_.state_dir();
  config_ = next;
  config_.set_state_dir(keep_dir);
  ingest_->set_max_frame_bytes(config_.limits().max_frame_bytes());
  ApplyRuntimeSettings();
  *message = "reloaded " + options_.config_file + ": " + std::to_string(reset.size()) +
             " channels reset";
  spdlog::info("{}", *message);
  return true;
}

void Daemon::Shutdown() {
  ingest_->Stop();  // hands its partial batches to the workers
  for (auto& w : workers_) w->Drain();  // control calls overtake the queues: drain them first
  bayline::v1::SnapshotInfo info;
  std::string error;
  SnapshotNow(&info, &error);  // queued behind every batch: the workers drain first
  for (auto& w : workers_) w->Stop();  // each sends its last publications before it ends
  spdlog::info("stopped");
}

}  // namespace bayline::server
