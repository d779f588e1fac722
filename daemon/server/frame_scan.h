// Splitting a serialized bayline.v1.IngestFrame into its observations without decoding them, so
// the ingest thread only reads each observation's channel (to route it) and the worker that owns
// the channel decodes the observation itself, in parallel with the other workers.
//
// The scanner accepts only frames in the plain form every protobuf serializer writes: one payload
// field (observation = 1 or batch = 2) spanning the whole frame; a batch holding only
// `observations` (field 1); observations holding only Observation's own fields 1..8 with their
// declared wire types, single-byte tags, well-formed varints (at most 10 bytes, a 10th byte of at
// most 1), lengths inside their enclosing field, packed `x` a multiple of 8 bytes, and an ASCII
// channel. Every frame it accepts decodes with protobuf to exactly the observations it returns
// (same bytes, same channel); for anything else it returns false and the caller decodes the frame
// with protobuf, which then decides whether it is valid (unknown fields, non-ASCII UTF-8 channel
// names, repeated payload fields that protobuf merges, and malformed frames all take that path).
#pragma once

#include <string_view>
#include <vector>

namespace bayline::server {

struct ScannedObservation {
  std::string_view bytes;    // the serialized Observation (a slice of the frame)
  std::string_view channel;  // its channel field (a slice of `bytes`; empty when absent)
};

// On true, *out (cleared first) holds the frame's observations in order; on false *out is
// unspecified and the frame must be decoded by protobuf.
bool ScanIngestFrame(std::string_view frame, std::vector<ScannedObservation>* out);

}  // namespace bayline::server
