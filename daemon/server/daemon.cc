#include "daemon/server/daemon.h"

#include <signal.h>
#include <spdlog/spdlog.h>

#include <algorithm>
#include <cstdlib>
#include <thread>

#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/resource_limits.h"
#include "daemon/server/config_loader.h"
#include "daemon/server/persistence.h"

namespace bayline::server {
namespace {

constexpr size_t kWorkerQueueCapacity = 64;  // batches of up to Ingest::kMaxBatch observations
constexpr int kControlReceiveMessages = 64;  // requests queued per control client
constexpr double kDefaultSnapshotEveryS = 60;
// How often the supervisor looks for the end of a snapshot write in progress.
constexpr std::chrono::milliseconds kSnapshotWriterPoll{5};

bool JournalPolicyOf(const bayline::v1::Journal& journal, JournalPolicy* policy) {
  const std::string& sync = journal.sync();
  if (sync.empty() || sync == "off") return false;
  policy->sync = sync == "interval" ? JournalSync::kInterval
                 : sync == "size"   ? JournalSync::kSize
                                    : JournalSync::kEveryFrame;
  if (journal.interval_ms() > 0) policy->interval_ms = journal.interval_ms();
  if (journal.sync_bytes() > 0) policy->sync_bytes = journal.sync_bytes();
  return true;
}

const char* SignalName(int signal) { return signal == SIGTERM ? "SIGTERM" : "SIGINT"; }

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
  spdlog::set_level(
      spdlog::level::from_str(config_.log_level().empty() ? "info" : config_.log_level()));
  const double every =
      config_.snapshot_every_s() > 0 ? config_.snapshot_every_s() : kDefaultSnapshotEveryS;
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
  snapshot_writer_ = std::make_unique<SnapshotWriter>(*store_);
  if (!store_->Open(&error)) {
    spdlog::error("state directory: {}", error);
    return false;
  }
  const size_t worker_count =
      config_.workers() > 0 ? config_.workers() : std::max(1u, std::thread::hardware_concurrency());
  uint64_t journal_covered = 0;
  std::vector<std::unique_ptr<pipeline::Pipeline>> pipelines =
      MakeWorkerPipelines(config_, worker_count);
  if (!RestoreAtStart(*store_, config_, shard_, options_.strict_state, &pipelines,
                      &journal_covered))
    return false;

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
  ingest_ =
      std::make_unique<Ingest>(context_, raw_workers, shard_, config_.limits().max_frame_bytes(),
                               limits.ingest_message_bytes, limits.ingest_receive_messages);
  IngestEndpoints endpoints;
  for (const auto& e : config_.endpoints().pull_bind()) endpoints.pull_bind.push_back(e);
  for (const auto& e : config_.endpoints().sub_connect()) endpoints.sub_connect.push_back(e);
  std::vector<std::string> ingest_bound;
  if (!ingest_->Bind(endpoints, &ingest_bound, &error)) {
    spdlog::error("{}", error);
    return false;
  }
  control_message_bytes_ = limits.control_message_bytes;
  if (!BindControl(config_.endpoints().control_bind(), &error)) {
    spdlog::error("{}", error);
    return false;
  }
  control_service_ = std::make_unique<ControlService>(workers_, *ingest_, shard_, *this);

  for (auto& w : workers_) w->Start();
  JournalPolicy policy;
  if (JournalPolicyOf(config_.journal(), &policy)) {
    journal_ = std::make_unique<JournalWriter>(store_->dir(), policy);
    ingest_->set_journal(journal_.get());
  }
  if (!ReplayJournal(journal_covered, &error)) {
    spdlog::error("journal: {}", error);
    return false;
  }
  ingest_->Start();
  std::vector<std::string> pulls(ingest_bound.begin(),
                                 ingest_bound.begin() + endpoints.pull_bind.size());
  // Printed at every log level: it is how `*` ports are discovered.
  const auto level = spdlog::get_level();
  if (level > spdlog::level::info) spdlog::set_level(spdlog::level::info);
  spdlog::info("ready: pull={} sub={} publish={} control={} workers={} shard={}/{} state_dir={}",
               Join(pulls), Join(endpoints.sub_connect), publish_endpoint, control_endpoint_,
               worker_count, shard_.index, shard_.count, store_->dir().string());
  spdlog::set_level(level);
  return true;
}

int Daemon::Run() {
  if (!Start()) return 1;
  Serve();
  signals_.ForceExitOnStopSignal(ForcedExit);
  return Shutdown() ? 0 : kExitFinalSnapshotFailed;
}

void Daemon::ForcedExit(int signal) {
  spdlog::warn("signal {} during shutdown: exiting now with code {}, without the final snapshot",
               SignalName(signal), SignalWatcher::ForcedExitCode(signal));
  std::_Exit(SignalWatcher::ForcedExitCode(signal));
}

void Daemon::Serve() {
  while (!stop_requested_) {
    const auto now = std::chrono::steady_clock::now();
    // While a snapshot is being written the loop looks for its end every few milliseconds.
    const auto wait =
        snapshot_writer_->busy()
            ? kSnapshotWriterPoll
            : std::chrono::duration_cast<std::chrono::milliseconds>(next_snapshot_ - now);
    // Rebuilt each turn: HandleControl may have replaced the control socket (or, if that failed,
    // left none; signals and snapshots still run).
    zmq::pollitem_t items[] = {{nullptr, signals_.fd(), ZMQ_POLLIN, 0},
                               {control_ ? control_->handle() : nullptr, 0, ZMQ_POLLIN, 0}};
    const size_t first = signals_.fd() >= 0 ? 0 : 1;
    const size_t end = control_ ? 2 : 1;
    try {
      zmq::poll(items + first, end - first, std::max(wait, std::chrono::milliseconds(0)));
    } catch (const zmq::error_t& e) {
      if (control_log_.Allow("poll")) spdlog::error("supervisor poll: {}", e.what());
      continue;
    }
    if (first == 0 && (items[0].revents & ZMQ_POLLIN)) {
      for (int signal : signals_.TakePending()) {
        if (signal == SIGHUP) {
          std::string message;
          Reload(&message);
        } else if (stop_requested_) {  // a second one read in the same batch
          ForcedExit(signal);
        } else {
          spdlog::info("signal {}: stopping (send it again to exit at once)", SignalName(signal));
          stop_requested_ = true;
        }
      }
    }
    if (end == 2 && (items[1].revents & ZMQ_POLLIN)) HandleControl();
    PollSnapshotWriter();
    if (!stop_requested_ && !snapshot_writer_->busy() &&
        std::chrono::steady_clock::now() >= next_snapshot_) {
      std::string error;
      if (!StartSnapshot(/*prompt=*/true, &error)) spdlog::error("snapshot failed: {}", error);
    }
  }
}

void Daemon::HandleControl() {
  // A ROUTER socket delivers a request's parts together, behind the peer's routing id and (from a
  // REQ peer) an empty delimiter; the reply goes back behind the same envelope, at once or, for a
  // snapshot, when its file is written. Every part is read and every addressable request is
  // answered (a request of several parts with an error). Nothing a peer sends makes the socket
  // throw in that order; any ZeroMQ error that does occur is logged and counted, and the socket is
  // replaced so that its next request starts in a known state.
  try {
    std::vector<zmq::message_t> parts;
    for (;;) {
      zmq::message_t part;
      if (!control_->recv(part, zmq::recv_flags::dontwait)) break;
      const bool more = part.more();
      parts.push_back(std::move(part));
      if (!more) break;
    }
    if (parts.empty()) return;  // woken without a request: nothing to answer
    size_t delimiter = 1;
    while (delimiter < parts.size() && parts[delimiter].size() != 0) ++delimiter;
    if (delimiter >= parts.size()) {  // not a REQ-style envelope: no way to address a reply
      control_service_->CountRejected("no_envelope");
      if (control_log_.Allow("no_envelope")) {
        spdlog::warn("control: a message of {} parts without an empty delimiter dropped",
                     parts.size());
      }
      return;
    }
    std::vector<std::string> envelope;
    for (size_t i = 0; i <= delimiter; ++i) envelope.push_back(parts[i].to_string());
    auto reply = [this, envelope = std::move(envelope)](bayline::v1::Reply r) {
      SendControlReply(envelope, std::move(r));
    };
    const size_t request_parts = parts.size() - delimiter - 1;
    if (request_parts == 1) {
      control_service_->HandleBytes(parts.back().to_string_view(), std::move(reply));
    } else {
      reply(control_service_->RejectMultipart(request_parts));
    }
  } catch (const zmq::error_t& e) {
    control_service_->CountRejected("zmq_error");
    if (control_log_.Allow("zmq_error")) spdlog::error("control socket: {}", e.what());
    std::string error;
    if (!BindControl(control_endpoint_, &error)) spdlog::error("control socket: {}", error);
  }
}

void Daemon::SendControlReply(const std::vector<std::string>& envelope, bayline::v1::Reply reply) {
  if (!control_) return;  // replaced and not bound again: its peers are gone
  // Errors and messages quote outside bytes (config files, requests): clients parse them as UTF-8.
  if (!pipeline::IsValidUtf8(reply.error())) {
    reply.set_error(pipeline::ReplaceInvalidUtf8(reply.error()));
  }
  if (!pipeline::IsValidUtf8(reply.message())) {
    reply.set_message(pipeline::ReplaceInvalidUtf8(reply.message()));
  }
  const std::string bytes = reply.SerializeAsString();
  try {
    // ROUTER: never blocks; a message to a peer that has gone is dropped.
    for (const std::string& part : envelope) {
      control_->send(zmq::buffer(part), zmq::send_flags::sndmore);
    }
    control_->send(zmq::buffer(bytes), zmq::send_flags::none);
  } catch (const zmq::error_t& e) {
    control_service_->CountRejected("zmq_error");
    if (control_log_.Allow("zmq_error")) spdlog::error("control reply: {}", e.what());
  }
}

bool Daemon::BindControl(const std::string& endpoint, std::string* error) {
  try {
    control_.reset();  // an old socket closes before its endpoint is bound again
    control_ = std::make_unique<zmq::socket_t>(context_, zmq::socket_type::router);
    control_->set(zmq::sockopt::linger, 0);
    control_->set(zmq::sockopt::maxmsgsize, int64_t(control_message_bytes_));
    control_->set(zmq::sockopt::rcvhwm, kControlReceiveMessages);
    control_->bind(endpoint);
    control_endpoint_ = control_->get(zmq::sockopt::last_endpoint);
  } catch (const zmq::error_t& e) {
    *error = "control_bind " + endpoint + ": " + e.what();
    return false;
  }
  return true;
}

bool Daemon::ReplayJournal(uint64_t covered, std::string* error) {
  const std::vector<uint64_t> segments = ListJournalSegments(store_->dir());
  uint64_t frames = 0;
  for (uint64_t segment : segments) {
    if (segment < covered) continue;  // in the snapshot already; removed by the next one
    const auto path = JournalSegmentPath(store_->dir(), segment);
    JournalReadResult result;
    std::string read_error;
    const bool ok = ReadJournalSegment(
        path, segment,
        [this, &frames](int64_t arrival_ns, std::string_view frame) {
          ingest_->ReplayFrame(frame, arrival_ns);
          ++frames;
        },
        &result, &read_error);
    if (!ok) {
      spdlog::error("journal segment not replayed: {}", read_error);
    } else if (result.torn_tail) {
      spdlog::warn(
          "journal {}: {} frames, then an incomplete record ({}): the frame being written "
          "when the process ended was not applied",
          path.string(), result.records, result.tail_reason);
    }
  }
  ingest_->FlushReplayed();
  // Recovery ends before `ready`: a control request (which overtakes queued batches) then sees
  // every replayed frame applied.
  if (frames > 0) {
    for (auto& worker : workers_) worker->Drain();
  }
  if (!segments.empty()) {
    spdlog::info("journal: replayed {} frames from {} segments after the snapshot", frames,
                 std::count_if(segments.begin(), segments.end(),
                               [covered](uint64_t s) { return s >= covered; }));
  }
  journal_next_segment_ = std::max(covered, segments.empty() ? 1 : segments.back() + 1);
  if (journal_ && !journal_->StartSegment(journal_next_segment_, error)) return false;
  return true;
}

bool Daemon::StartSnapshot(bool prompt, std::string* error) {
  next_snapshot_ = std::chrono::steady_clock::now() + snapshot_period_;
  // The cut: every frame before it is in the capture and in journal segments below `covered`.
  SnapshotCapture capture;
  bool rotated = true;
  ingest_->RunAtFrameBoundary([&] {
    if (journal_) {
      rotated = journal_->StartSegment(journal_->segment() + 1, error);
      if (!rotated) return;
      journal_next_segment_ = journal_->segment();
    }
    // Without a journal nothing depends on the cut, and a prompt capture keeps `snapshot` answered
    // under load; with one, the capture must hold exactly the frames before the new segment.
    capture = PostSnapshotCapture(workers_, /*urgent=*/prompt && journal_ == nullptr);
  });
  if (!rotated) return false;
  snapshot_writer_->Start(std::move(capture), config_, journal_next_segment_);
  return true;
}

void Daemon::RequestSnapshot(SnapshotDone done) {
  if (snapshot_writer_->busy()) {  // this one may have cut before the request: take the next
    snapshot_next_.push_back(std::move(done));
    return;
  }
  std::string error;
  if (!StartSnapshot(/*prompt=*/true, &error)) {
    spdlog::error("snapshot failed: {}", error);
    done(false, {}, error);
    return;
  }
  snapshot_waiting_.push_back(std::move(done));
}

void Daemon::PollSnapshotWriter() {
  const std::optional<SnapshotResult> result = snapshot_writer_->TakeResult();
  if (!result) return;
  FinishSnapshot(*result);
  if (snapshot_next_.empty()) return;
  std::string error;
  if (!StartSnapshot(/*prompt=*/true, &error)) {
    FinishSnapshot(SnapshotResult{false, {}, error});
    return;
  }
  snapshot_waiting_.swap(snapshot_next_);
}

void Daemon::FinishSnapshot(const SnapshotResult& result) {
  if (result.ok) {
    ++snapshots_written_;
    spdlog::info("snapshot {}: {} channels, {} bytes", result.info.path(), result.info.channels(),
                 result.info.bytes());
  } else {
    spdlog::error("snapshot failed: {}", result.error);
  }
  std::vector<SnapshotDone> waiting;
  waiting.swap(snapshot_waiting_);
  for (auto& done : waiting) done(result.ok, result.info, result.error);
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
  if (next.journal().SerializeAsString() != config_.journal().SerializeAsString())
    later += " journal";
  if (!later.empty()) spdlog::warn("reload: changes to{} take effect at the next start", later);

  // The first worker validates and calibrates; the others see the same config and so agree.
  std::vector<std::string> reset;
  for (auto& worker : workers_) {
    bayline::est::Status status = worker->Call(
        [&next, &reset](pipeline::Pipeline& p) { return p.Reconfigure(next, &reset); });
    if (!status.ok()) {
      *message = "reload rejected, configuration unchanged: " + status.ToString();
      spdlog::error("{}", *message);
      return false;
    }
  }
  for (const auto& name : reset)
    spdlog::warn("reload: channel \"{}\" reset: its spec changed", name);
  const std::string keep_dir = config_.state_dir();
  config_ = next;
  config_.set_state_dir(keep_dir);
  ingest_->set_max_frame_bytes(config_.limits().max_frame_bytes());
  ApplyRuntimeSettings();
  *message =
      "reloaded " + options_.config_file + ": " + std::to_string(reset.size()) + " channels reset";
  spdlog::info("{}", *message);
  return true;
}

bool Daemon::Shutdown() {
  ingest_->Stop();                      // hands its partial batches to the workers
  for (auto& w : workers_) w->Drain();  // control calls overtake the queues: drain them first
  if (std::optional<SnapshotResult> running = snapshot_writer_->Wait()) FinishSnapshot(*running);
  snapshot_waiting_.swap(snapshot_next_);  // asked during that write: the final one answers them
  // Queued behind every batch: the workers drain first.
  SnapshotResult final_result;
  if (StartSnapshot(/*prompt=*/false, &final_result.error)) {
    final_result = *snapshot_writer_->Wait();
  }
  FinishSnapshot(final_result);
  for (auto& w : workers_) w->Stop();  // each sends its last publications before it ends
  if (!final_result.ok) {
    spdlog::error(
        "final snapshot failed: {}; the next start restores the newest snapshot left "
        "in {}",
        final_result.error, store_->dir().string());
    spdlog::info("stopped (exit {})", kExitFinalSnapshotFailed);
    return false;
  }
  spdlog::info("stopped");
  return true;
}

}  // namespace bayline::server
