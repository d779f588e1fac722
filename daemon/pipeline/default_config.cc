#include <google/protobuf/io/coded_stream.h>
#include <google/protobuf/io/zero_copy_stream_impl_lite.h>

#include "daemon/defaults.h"
#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/resolved_spec.h"

namespace bayline::pipeline {

bayline::v1::DaemonConfig DefaultConfig() {
  bayline::v1::DaemonConfig c;
  c.mutable_endpoints()->add_pull_bind(kDefaultIngestEndpoint);
  c.mutable_endpoints()->set_publish_bind(kDefaultPublishEndpoint);
  c.mutable_endpoints()->set_control_bind(kDefaultControlEndpoint);
  c.set_snapshot_every_s(60);
  c.set_log_level("info");
  auto* limits = c.mutable_limits();
  limits->set_max_channels(1000000);
  limits->set_max_channel_name_bytes(256);
  limits->set_max_frame_bytes(1u << 20);
  limits->set_max_regressors(32);
  auto* rule = c.add_rules();
  rule->set_name("default");
  rule->set_match("**");
  auto* spec = rule->mutable_spec();
  spec->set_model("auto");
  auto* cusum = spec->add_detectors();
  cusum->set_kind("cusum");
  // arl0 unset: est::kDefaultArl0, the default of every detector spec, replay and threshold; a
  // top-level false_alarms_per_day budget applies to it.
  return c;
}

std::string ConfigDigest(const bayline::v1::DaemonConfig& config) {
  std::string bytes;
  {
    google::protobuf::io::StringOutputStream stream(&bytes);
    google::protobuf::io::CodedOutputStream coded(&stream);
    coded.SetSerializationDeterministic(true);
    config.SerializeToCodedStream(&coded);
  }
  return HexDigest(bytes);
}

}  // namespace bayline::pipeline
