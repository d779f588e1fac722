// Ingest frames as the daemon's ingest thread and workers see them: ScanIngestFrame first; a frame
// it accepts must decode with protobuf to exactly the observations it returned (the scanner's
// contract, frame_scan.h), and every observation it returns must decode on its own (the worker's
// step). A frame it declines is decoded by protobuf as the ingest thread does.
#include <google/protobuf/stubs/logging.h>

#include <cstdint>
#include <cstdlib>
#include <string_view>
#include <vector>

#include "bayline/v1/observation.pb.h"
#include "daemon/server/frame_scan.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  static google::protobuf::LogSilencer quiet;  // protobuf logs every invalid UTF-8 channel
  const std::string_view frame(reinterpret_cast<const char*>(data), size);
  static std::vector<bayline::server::ScannedObservation> scanned;
  bayline::v1::IngestFrame decoded;
  const bool parsed = decoded.ParseFromArray(data, int(size));
  if (bayline::server::ScanIngestFrame(frame, &scanned)) {
    if (!parsed) std::abort();  // the scanner accepted what protobuf refuses
    std::vector<const bayline::v1::Observation*> expected;
    if (decoded.has_observation()) expected.push_back(&decoded.observation());
    for (const auto& o : decoded.batch().observations()) expected.push_back(&o);
    if (expected.size() != scanned.size()) std::abort();
    for (size_t i = 0; i < scanned.size(); ++i) {
      bayline::v1::Observation one;
      if (!one.ParseFromArray(scanned[i].bytes.data(), int(scanned[i].bytes.size()))) std::abort();
      if (one.channel() != scanned[i].channel) std::abort();
      if (one.SerializeAsString() != expected[i]->SerializeAsString()) std::abort();
    }
  }
  return 0;
}
