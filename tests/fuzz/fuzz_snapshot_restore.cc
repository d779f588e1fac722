// Snapshot restore as baylined does it at start: the file container (DecodeSnapshotFile), the
// payload (bayline.v1.Snapshot) and Pipeline::RestoreChannels into a pipeline of all_models.conf
// (fuzz_config.h); a restored pipeline must then report, save, and absorb an observation on every
// restored channel. The first input byte selects what the rest is:
//   even: a whole snapshot file (header and checksums as written; mostly refused at the header)
//   odd:  a payload, wrapped in a valid container first, so mutations reach the state decoders.
#include <cstdint>
#include <cstdlib>
#include <string>
#include <string_view>

#include "bayline/v1/observation.pb.h"
#include "bayline/v1/snapshot.pb.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/server/config_file.h"
#include "daemon/server/snapshot_file.h"
#include "tests/fuzz/fuzz_config.h"

namespace {

struct Drop : bayline::pipeline::PublicationSink {
  void Publish(const std::string&, const bayline::v1::Publication&) override {}
};

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  if (size == 0) return 0;
  static const bayline::v1::DaemonConfig config = bayline::fuzz::AllModelsConfig();
  const std::string_view rest(reinterpret_cast<const char*>(data) + 1, size - 1);
  std::string file = (data[0] & 1) ? bayline::server::EncodeSnapshotFile(
                                         rest, bayline::server::ConfigDigest(config))
                                   : std::string(rest);
  bayline::server::SnapshotFileContents contents;
  std::string error;
  if (!bayline::server::DecodeSnapshotFile(file, &contents, &error)) {
    if (error.empty()) std::abort();
    return 0;
  }
  bayline::v1::Snapshot snapshot;
  if (!snapshot.ParseFromString(contents.payload)) return 0;
  bayline::pipeline::Pipeline pipeline(config);
  std::vector<std::string> reset;
  if (!pipeline.RestoreChannels(snapshot, &reset).ok()) return 0;
  bayline::v1::Snapshot saved;
  pipeline.SaveChannels(&saved);
  Drop sink;
  const bayline::v1::ChannelList listed = pipeline.List("");
  for (const auto& info : listed.channels()) {
    if (!pipeline.Ask(info.name())) std::abort();  // listed but unknown
    bayline::v1::Observation o;
    o.set_channel(info.name());
    o.set_seq(info.last_seq() + 1);
    o.set_time_ns(info.last_time_ns() + 1000000000);
    o.set_y(1.0);
    o.add_x(0.5);  // the models with a regressor take one; the others refuse it
    pipeline.Process(o, 0, sink);
    pipeline.Ask(info.name());
  }
  return 0;
}
