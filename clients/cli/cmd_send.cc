// send: observations from CSV / JSON Lines to the daemon, as IngestFrame messages over PUSH
// (connected to the daemon's PULL, lossless and backpressured) or over XPUB (`--pub-bind`, for a
// daemon configured with sub_connect; sending starts once a subscriber is there).
//
// A regular file that is not followed is read and checked completely before anything is sent, so
// a bad line sends nothing. From stdin or with --follow, records are sent as they come, and a bad
// line stops the command (what came before it was sent).
#include <chrono>
#include <iostream>
#include <memory>
#include <thread>

#include "bayline/v1/observation.pb.h"
#include "clients/cli/command_support.h"
#include "clients/cli/commands.h"
#include "clients/cli/mapping_options.h"
#include "clients/cli/record_reader.h"
#include "daemon/defaults.h"

namespace bayline::cli {
namespace {

struct SendOptions {
  std::string input;
  MappingFlags flags;
  bool follow = false;
  std::string connect = kDefaultIngestEndpoint;
  std::string pub_bind;
  double rate = 0;
  int batch = 1;
  double timeout_s = 10;
  bool quiet = false;
};

class FrameSender {
 public:
  explicit FrameSender(const SendOptions& o)
      : o_(o),
        socket_(ZmqContext(),
                o.pub_bind.empty() ? zmq::socket_type::push : zmq::socket_type::xpub) {
    int timeout_ms = static_cast<int>(o.timeout_s * 1000);
    socket_.set(zmq::sockopt::sndtimeo, timeout_ms);
    socket_.set(zmq::sockopt::linger, timeout_ms);
    try {
      if (o.pub_bind.empty()) {
        // Queue only on a completed connection: with no daemon, send times out (exit 2)
        // instead of queueing frames that would be dropped silently at exit.
        socket_.set(zmq::sockopt::immediate, true);
        socket_.connect(o.connect);
        endpoint_ = o.connect;
      } else {
        socket_.set(zmq::sockopt::sndhwm, 100000);
        socket_.bind(o.pub_bind);
        endpoint_ = socket_.get(zmq::sockopt::last_endpoint);
        WaitForSubscriber(timeout_ms);
      }
    } catch (const zmq::error_t& e) {
      throw CommandError(kExitBadInput, "cannot use endpoint '" +
                                            (o.pub_bind.empty() ? o.connect : o.pub_bind) +
                                            "': " + e.what());
    }
    start_ = std::chrono::steady_clock::now();
  }

  // Queues one observation; sends a frame when the batch is full.
  void Add(const bayline::v1::Observation& obs) {
    if (o_.rate > 0) {
      auto due = start_ + std::chrono::duration<double>(static_cast<double>(added_) / o_.rate);
      std::this_thread::sleep_until(
          std::chrono::time_point_cast<std::chrono::steady_clock::duration>(due));
    }
    ++added_;
    if (o_.batch <= 1) {
      *frame_.mutable_observation() = obs;
      SendFrame();
      return;
    }
    *frame_.mutable_batch()->add_observations() = obs;
    if (frame_.batch().observations_size() >= o_.batch) Flush();
  }

  void Flush() {
    if (frame_.has_batch() && frame_.batch().observations_size() > 0) SendFrame();
  }

  uint64_t observations() const { return added_; }
  uint64_t frames() const { return frames_; }
  const std::string& endpoint() const { return endpoint_; }

 private:
  void WaitForSubscriber(int timeout_ms) {
    // XPUB passes subscription messages up: the first one says a subscriber is connected.
    socket_.set(zmq::sockopt::rcvtimeo, timeout_ms);
    zmq::message_t m;
    if (!socket_.recv(m, zmq::recv_flags::none)) {
      throw CommandError(kExitNoDaemon, "no subscriber connected to " + endpoint_ + " within " +
                                            std::to_string(o_.timeout_s) + " s");
    }
  }

  void SendFrame() {
    frame_.SerializeToString(&bytes_);
    frame_.Clear();
    if (!socket_.send(zmq::buffer(bytes_), zmq::send_flags::none)) {
      throw CommandError(kExitNoDaemon, "the daemon at " + endpoint_ +
                                            " did not take observations within " +
                                            std::to_string(o_.timeout_s) + " s");
    }
    ++frames_;
  }

  const SendOptions& o_;
  zmq::socket_t socket_;
  std::string endpoint_;
  bayline::v1::IngestFrame frame_;
  std::string bytes_;
  uint64_t added_ = 0, frames_ = 0;
  std::chrono::steady_clock::time_point start_;
};

int RunSend(const SendOptions& o) {
  const auto& stop = StopRequested();
  RecordReader reader(o.input, ParseInputFormat(o.flags.format), o.follow, &stop);
  ObservationMapper mapper(ResolveMapping(o.flags, o.input, SeqPolicy::kUnnumbered),
                           reader.display_name());
  if (reader.is_csv()) mapper.CheckHeader(reader.header());

  const bool check_first = o.input != "-" && !o.follow;
  std::vector<bayline::v1::Observation> checked;
  Record record;
  bayline::v1::Observation obs;
  if (check_first) {
    while (reader.Next(&record)) {
      mapper.Map(record, &obs);
      checked.push_back(obs);
    }
  }
  FrameSender sender(o);
  if (check_first) {
    for (const auto& c : checked) {
      if (stop.load()) break;
      sender.Add(c);
    }
  } else {
    reader.set_on_idle([&sender] { sender.Flush(); });
    while (!stop.load() && reader.Next(&record)) {
      mapper.Map(record, &obs);
      sender.Add(obs);
    }
  }
  sender.Flush();
  if (!o.quiet) {
    std::cerr << "sent " << sender.observations() << " observations in " << sender.frames()
              << " frames to " << sender.endpoint() << "\n";
  }
  return 0;
}

}  // namespace

Subcommand AddSendCommand(CLI::App& app) {
  auto o = std::make_shared<SendOptions>();
  CLI::App* sub = app.add_subcommand("send", "send observations from a CSV or JSON Lines file");
  sub->add_option("input", o->input, "CSV file with a header row, .jsonl file, or - for stdin")
      ->required();
  AddMappingOptions(sub, &o->flags);
  sub->add_flag("--follow", o->follow, "keep sending lines appended to the file (Ctrl-C stops)");
  sub->add_option("--connect", o->connect, "daemon ingest endpoint (PUSH to its PULL)")
      ->capture_default_str();
  sub->add_option("--pub-bind", o->pub_bind,
                  "publish instead, bound here, for a daemon's sub_connect (waits for it)");
  sub->add_option("--rate", o->rate, "observations per second (0 = as fast as possible)")
      ->check(CLI::NonNegativeNumber);
  sub->add_option("--batch", o->batch, "observations per frame (ObservationBatch when > 1)")
      ->check(CLI::Range(1, 100000))
      ->capture_default_str();
  sub->add_option("--timeout", o->timeout_s,
                  "seconds to wait for the daemon to take data (or for a subscriber)")
      ->check(CLI::PositiveNumber)
      ->capture_default_str();
  sub->add_flag("--quiet", o->quiet, "no summary line on stderr");
  return {sub, [o] { return RunSend(*o); }};
}

}  // namespace bayline::cli
