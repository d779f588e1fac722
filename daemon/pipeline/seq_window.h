// SeqWindow: per-channel sequence tracking that tells a duplicate from a late arrival.
//
// State: the highest seq accepted (`last`) and a 64-bit bitmap `seen` whose bit k says whether
// seq last - k was accepted (bit 0 is `last` itself). Classify(seq):
//   seq > last            new (a gap when seq > last + 1 and something was seen before);
//   last - seq < 64       duplicate if its bit is set, else a late arrival (reordered);
//   last - seq >= 64      too old to tell: treated as a duplicate (dropped), since re-sent
//                         duplicates are what producers do and double counting is the worse error.
// Accept(seq) records it. seq 0 ("unnumbered") must be mapped to last + 1 by the caller.
#pragma once

#include <cstdint>

namespace bayline::pipeline {

enum class SeqClass : uint8_t { kNext, kGap, kLate, kDuplicate };

struct SeqWindow {
  uint64_t last = 0;
  uint64_t seen = 0;  // bit k: last - k accepted

  SeqClass Classify(uint64_t seq) const;
  void Accept(uint64_t seq);
};

}  // namespace bayline::pipeline
