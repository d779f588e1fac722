#include "tests/bench/e2e/relay_floor.h"

#include <atomic>
#include <chrono>
#include <cstring>
#include <thread>
#include <vector>

#include "daemon/server/work_queue.h"

namespace bayline::bench {

namespace {

struct Frame {
  zmq::message_t stamp, body;
  bool stop = false;
};

}  // namespace

Percentiles RelayLatency(zmq::context_t& ctx, bool hand_off,
                         const std::function<void(const std::string&)>& send) {
  zmq::context_t relay_ctx(1);
  zmq::socket_t pull(relay_ctx, zmq::socket_type::pull);
  pull.set(zmq::sockopt::rcvhwm, 0);
  pull.bind("tcp://127.0.0.1:*");
  zmq::socket_t pub(relay_ctx, zmq::socket_type::pub);
  pub.set(zmq::sockopt::sndhwm, 100000);
  pub.bind("tcp://127.0.0.1:*");
  const std::string ingest_endpoint = pull.get(zmq::sockopt::last_endpoint);

  const auto publish = [&pub](const Frame& frame) {
    static constexpr std::string_view kTopic = "estimate/bench/site1/c1";
    for (int copy = 0; copy < 3; ++copy) {
      pub.send(zmq::buffer(kTopic), zmq::send_flags::sndmore);
      pub.send(zmq::buffer(frame.stamp.data(), frame.stamp.size()), zmq::send_flags::none);
    }
  };
  server::WorkQueue<Frame> queue(1024);
  std::atomic<bool> stop_ingest{false};
  std::thread ingest([&] {
    pull.set(zmq::sockopt::rcvtimeo, 20);
    while (!stop_ingest.load()) {
      Frame frame;
      if (!pull.recv(frame.stamp)) continue;
      (void)pull.recv(frame.body);
      if (hand_off) {
        queue.Push(std::move(frame));
      } else {
        publish(frame);
      }
    }
    if (hand_off) {
      Frame last;
      last.stop = true;
      queue.Push(std::move(last));
    }
  });
  std::thread worker;
  if (hand_off) {
    worker = std::thread([&] {
      for (;;) {
        Frame frame = queue.Pop();
        if (frame.stop) break;
        publish(frame);
      }
    });
  }

  zmq::socket_t sub(ctx, zmq::socket_type::sub);
  sub.set(zmq::sockopt::rcvhwm, 0);
  sub.set(zmq::sockopt::subscribe, "estimate/");
  sub.connect(pub.get(zmq::sockopt::last_endpoint));
  std::vector<int64_t> latencies;
  latencies.reserve(1 << 20);
  std::atomic<bool> done{false};
  std::thread receiver([&] {
    zmq::message_t topic, stamp;
    int64_t last = 0;
    while (!done.load()) {
      zmq::pollitem_t item{sub.handle(), 0, ZMQ_POLLIN, 0};
      if (zmq::poll(&item, 1, std::chrono::milliseconds(50)) == 0) continue;
      while (sub.recv(topic, zmq::recv_flags::dontwait)) {
        (void)sub.recv(stamp);
        const int64_t now = WallNs();
        int64_t sent = 0;
        if (stamp.size() != sizeof sent) continue;
        std::memcpy(&sent, stamp.data(), sizeof sent);
        if (sent <= last) continue;  // the second and third copy of a frame
        last = sent;
        latencies.push_back(now - sent);
      }
    }
  });

  // As for baylined, the subscription needs a moment to reach the PUB socket; the first frames
  // may be missed (they are simply not sampled).
  send(ingest_endpoint);
  const int64_t wait_end = SteadyNs() + 200'000'000;  // let the last publications arrive
  while (SteadyNs() < wait_end) std::this_thread::sleep_for(std::chrono::milliseconds(10));
  done = true;
  receiver.join();
  stop_ingest = true;
  ingest.join();
  if (worker.joinable()) worker.join();
  return ComputePercentiles(std::move(latencies));
}

}  // namespace bayline::bench
