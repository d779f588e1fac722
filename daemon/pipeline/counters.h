// Counters: what one pipeline has done since it was built (the daemon sums them over workers for
// the control API's Stats).
#pragma once

#include <cstdint>
#include <map>
#include <string>

namespace bayline::pipeline {

struct Counters {
  uint64_t accepted = 0;        // observations absorbed
  uint64_t rejected_total = 0;  // InputErrors published (frames and observations)
  uint64_t publications = 0;    // everything handed to a sink
  uint64_t seq_gaps = 0;
  uint64_t seq_duplicates = 0;
  uint64_t seq_reordered = 0;
  std::map<std::string, uint64_t> rejected_by_reason;
  uint64_t channels = 0;               // channels currently held
  uint64_t predictions = 0;            // prediction requests answered
  uint64_t detector_skips = 0;         // detector updates skipped after a numerical failure
  uint64_t channels_not_restored = 0;  // snapshot channels set aside by RestoreChannels
};

}  // namespace bayline::pipeline
