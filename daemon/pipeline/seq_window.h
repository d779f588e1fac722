// SeqWindow: per-channel sequence tracking that tells a duplicate from a late arrival, refuses
// numbers it cannot place, and follows a producer whose numbering moved.
//
// State: the highest seq accepted (`last`) and a 64-bit bitmap `seen` whose bit k says whether
// seq last - k was accepted (bit 0 is `last` itself); plus the run of refused numbers that
// continue one another (`refused_next`, `refused_run`), which only decides re-synchronisation.
// Classify(seq):
//   seq 0 or seq > kMaxSeq (2^63 - 1)   implausible, always (publications carry seq as int64
//                                       marks, and last + 1 must not wrap);
//   nothing accepted yet                any other number starts the channel;
//   last < seq <= last + kMaxSeqJump    new (a gap when seq > last + 1);
//   seq > last + kMaxSeqJump (2^32)     implausible: a jump that far is a corrupt or hostile
//   number; last - seq < 64                     duplicate if its bit is set, else a late arrival
//   (reordered); last - seq >= 64                    too old: it cannot be told from a re-sent
//   duplicate, so it
//                                       is refused (reported, not counted as a duplicate).
// Re-synchronisation: refused numbers (too old or implausibly far ahead, not out of range) that
// continue one another, with no accepted observation between them, are a producer whose numbering
// moved (it restarted, or one stray number left it behind). The kSeqResyncRun-th of such a run
// (s, s+1, ..., s+kSeqResyncRun-1) is a restart: accepted, and the window starts again there. So
// no single observation can jam a channel: after one stray number the producer's own sequence is
// followed again after kSeqResyncRun - 1 refusals. The price: a re-sent run of kSeqResyncRun or
// more old observations, with nothing newer between them, is absorbed again from its
// kSeqResyncRun-th on. The refused run is not saved in snapshots (a restart costs at most
// kSeqResyncRun - 1 more refusals).
//
// Accept(seq) records an accepted number (new, gap, late, restart); Refuse(seq) a refused one.
// seq 0 ("unnumbered") must be mapped by the caller (Numbered: last + 1).
#pragma once

#include <cstdint>
#include <string>

namespace bayline::pipeline {

inline constexpr uint64_t kMaxSeq = (uint64_t{1} << 63) - 1;
inline constexpr uint64_t kMaxSeqJump = uint64_t{1} << 32;
inline constexpr uint32_t kSeqResyncRun = 4;

enum class SeqClass : uint8_t {
  kNext,
  kGap,
  kLate,
  kDuplicate,
  kTooOld,       // refused: more than 63 below last
  kImplausible,  // refused: out of range, or more than kMaxSeqJump above last
  kRestart,      // accepted: ends a run of kSeqResyncRun refused consecutive numbers
};

struct SeqWindow {
  uint64_t last = 0;
  uint64_t seen = 0;          // bit k: last - k accepted
  uint64_t refused_next = 0;  // the number that would continue the refused run
  uint32_t refused_run = 0;   // refused consecutive numbers so far (0: no run)

  // A window with nothing accepted, or one beyond kMaxSeq (only a snapshot written before that
  // bound existed can hold one): the next number starts the channel afresh.
  bool Empty() const { return seen == 0 || last > kMaxSeq; }
  // The number of an observation: `seq`, or for 0 ("unnumbered") the one after the highest
  // accepted (1 for an empty window or at the top of the range).
  uint64_t Numbered(uint64_t seq) const {
    return seq != 0 ? seq : Empty() || last >= kMaxSeq ? 1 : last + 1;
  }
  SeqClass Classify(uint64_t seq) const;
  void Accept(uint64_t seq);
  void Accept(uint64_t seq, SeqClass c);  // c: Classify(seq), already computed
  void Refuse(uint64_t seq);
  // One line for the InputError of a refused number (kTooOld, kImplausible).
  std::string Explain(uint64_t seq) const;
};

// The InputError reason of a refused class: "seq_too_old" or "implausible_seq".
const char* SeqRefusalReason(SeqClass c);

}  // namespace bayline::pipeline
