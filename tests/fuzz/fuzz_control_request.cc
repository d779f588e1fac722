// Control requests as the daemon's supervisor handles them: ControlService::HandleBytes over real
// workers (two, each with a pipeline of all_models.conf and a few channels fed at start), a real
// unbound ingest and a publisher on an inproc endpoint. Snapshot and reload are answered by a
// stand-in that refuses them (they touch files and the config file, not decoding). Every input must
// produce exactly one reply; ok = false must come with an error text.
#include <cstdint>
#include <cstdlib>
#include <memory>
#include <string_view>
#include <vector>

#include "bayline/v1/observation.pb.h"
#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/server/control_service.h"
#include "daemon/server/ingest.h"
#include "daemon/server/publisher.h"
#include "daemon/server/routing.h"
#include "daemon/server/worker.h"
#include "tests/fuzz/fuzz_config.h"

namespace {

using namespace bayline::server;

class RefusingActions : public DaemonActions {
 public:
  void RequestSnapshot(SnapshotDone done) override {
    done(false, {}, "no snapshots while fuzzing");
  }
  bool Reload(std::string* message) override {
    *message = "no reload while fuzzing";
    return false;
  }
  uint64_t snapshots_written() const override { return 0; }
};

struct Setup {
  zmq::context_t context{1};
  Publisher publisher{context};
  std::vector<std::unique_ptr<Worker>> workers;
  std::unique_ptr<Ingest> ingest;
  RefusingActions actions;
  std::unique_ptr<ControlService> service;

  Setup() {
    std::string endpoint, error;
    if (!publisher.Bind("inproc://fuzz-control-publish", &endpoint, &error)) std::abort();
    const bayline::v1::DaemonConfig config = bayline::fuzz::AllModelsConfig();
    std::vector<Worker*> raw;
    for (int i = 0; i < 2; ++i) {
      workers.push_back(std::make_unique<Worker>(
          i, std::make_unique<bayline::pipeline::Pipeline>(config), publisher, 8));
      raw.push_back(workers.back().get());
      workers.back()->Start();
    }
    ingest = std::make_unique<Ingest>(context, raw, Shard{}, 1u << 20);
    service = std::make_unique<ControlService>(workers, *ingest, Shard{}, actions);
    Feed();
  }
  ~Setup() {
    for (auto& w : workers) w->Stop();
  }

  // A few channels of different models on their owning workers (as routing.h places them).
  void Feed() {
    const char* names[] = {"m/gaussian/a", "m/poisson/b", "m/linear/c", "m/gamma/d"};
    for (int i = 0; i < 40; ++i) {
      for (int c = 0; c < 4; ++c) {
        bayline::v1::Observation o;
        o.set_channel(names[c]);
        o.set_seq(uint64_t(i + 1));
        o.set_time_ns(int64_t(i + 1) * 1000000000);
        o.set_y(c == 1 ? double(i % 5) : 1.0 + 0.25 * (i % 7));  // positive for gamma
        if (c == 2) o.add_x(double(i));
        const uint64_t h = bayline::pipeline::ChannelHash(o.channel());
        Worker& w = *workers[WorkerOf(h, Shard{}, workers.size())];
        w.Call([&o](bayline::pipeline::Pipeline& p) {
          struct Drop : bayline::pipeline::PublicationSink {
            void Publish(const std::string&, const bayline::v1::Publication&) override {}
          } sink;
          p.Process(o, 0, sink);
          return 0;
        });
      }
    }
  }
};

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  static Setup* setup = new Setup();  // lives for the process: its threads end with it
  int replies = 0;
  setup->service->HandleBytes(std::string_view(reinterpret_cast<const char*>(data), size),
                              [&replies](const bayline::v1::Reply& reply) {
                                ++replies;
                                if (!reply.ok() && reply.error().empty()) std::abort();
                              });
  if (replies != 1) std::abort();  // every request answered exactly once, at once here
  // A reset request forgets a channel; feed again now and then so ask and list see state.
  static int calls = 0;
  if (++calls % 512 == 0) setup->Feed();
  return 0;
}
