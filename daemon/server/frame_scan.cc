#include "daemon/server/frame_scan.h"

#include <cstdint>

namespace bayline::server {
namespace {

// Reads a varint at *p (advancing it). False when it runs past `end`, is longer than 10 bytes,
// or its 10th byte carries more than the one bit left of 64.
bool ReadVarint(const uint8_t*& p, const uint8_t* end, uint64_t* value) {
  uint64_t result = 0;
  for (int i = 0; i < 10; ++i) {
    if (p == end) return false;
    const uint8_t byte = *p++;
    if (i == 9 && byte > 1) return false;
    result |= uint64_t(byte & 0x7F) << (7 * i);
    if (byte < 0x80) {
      *value = result;
      return true;
    }
  }
  return false;
}

// Reads a length prefix and checks that the field fits before `end`; *field_end is set after it.
bool ReadLength(const uint8_t*& p, const uint8_t* end, const uint8_t** field_end) {
  uint64_t length = 0;
  if (!ReadVarint(p, end, &length)) return false;
  if (length > uint64_t(end - p)) return false;
  *field_end = p + length;
  return true;
}

bool ScanObservation(const uint8_t* begin, const uint8_t* end, ScannedObservation* out) {
  const uint8_t* p = begin;
  std::string_view channel;
  while (p != end) {
    const uint8_t tag = *p++;
    uint64_t ignored = 0;
    const uint8_t* field_end = nullptr;
    switch (tag) {
      case 0x0A:  // 1 channel, length-delimited: the last one wins, as in protobuf
        if (!ReadLength(p, end, &field_end)) return false;
        for (const uint8_t* c = p; c != field_end; ++c) {
          if (*c >= 0x80) return false;  // non-ASCII: protobuf checks the UTF-8
        }
        channel = std::string_view(reinterpret_cast<const char*>(p), size_t(field_end - p));
        p = field_end;
        break;
      case 0x10:  // 2 seq, varint
      case 0x18:  // 3 time_ns, varint
        if (!ReadVarint(p, end, &ignored)) return false;
        break;
      case 0x21:  // 4 y, fixed64
      case 0x29:  // 5 x, one unpacked fixed64
      case 0x31:  // 6 trials
      case 0x39:  // 7 exposure
      case 0x41:  // 8 weight
        if (end - p < 8) return false;
        p += 8;
        break;
      case 0x2A:  // 5 x, packed
        if (!ReadLength(p, end, &field_end)) return false;
        if ((field_end - p) % 8 != 0) return false;
        p = field_end;
        break;
      default:
        return false;
    }
  }
  out->bytes = std::string_view(reinterpret_cast<const char*>(begin), size_t(end - begin));
  out->channel = channel;
  return true;
}

}  // namespace

bool ScanIngestFrame(std::string_view frame, std::vector<ScannedObservation>* out) {
  out->clear();
  const auto* p = reinterpret_cast<const uint8_t*>(frame.data());
  const uint8_t* const end = p + frame.size();
  if (p == end) return false;
  const uint8_t tag = *p++;
  const uint8_t* payload_end = nullptr;
  if (!ReadLength(p, end, &payload_end) || payload_end != end) return false;
  if (tag == 0x0A) {  // observation = 1
    return ScanObservation(p, end, &out->emplace_back());
  }
  if (tag != 0x12) return false;  // batch = 2
  while (p != end) {
    if (*p++ != 0x0A) return false;  // ObservationBatch.observations = 1
    const uint8_t* observation_end = nullptr;
    if (!ReadLength(p, end, &observation_end)) return false;
    if (!ScanObservation(p, observation_end, &out->emplace_back())) return false;
    p = observation_end;
  }
  return true;
}

}  // namespace bayline::server
