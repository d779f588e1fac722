#include "daemon/pipeline/seq_window.h"

namespace bayline::pipeline {
namespace {

bool OutOfRange(uint64_t seq) { return seq == 0 || seq > kMaxSeq; }

}  // namespace

SeqClass SeqWindow::Classify(uint64_t seq) const {
  if (OutOfRange(seq)) return SeqClass::kImplausible;
  if (Empty()) return SeqClass::kNext;  // any start is fine
  SeqClass refused;
  if (seq > last) {
    const uint64_t ahead = seq - last;
    if (ahead == 1) return SeqClass::kNext;
    if (ahead <= kMaxSeqJump) return SeqClass::kGap;
    refused = SeqClass::kImplausible;
  } else {
    const uint64_t back = last - seq;
    if (back < 64) return (seen >> back) & 1u ? SeqClass::kDuplicate : SeqClass::kLate;
    refused = SeqClass::kTooOld;
  }
  const bool ends_run = refused_run + 1 >= kSeqResyncRun && seq == refused_next;
  return ends_run ? SeqClass::kRestart : refused;
}

void SeqWindow::Accept(uint64_t seq) { Accept(seq, Classify(seq)); }

void SeqWindow::Accept(uint64_t seq, SeqClass c) {
  refused_run = 0;
  if (Empty() || c == SeqClass::kRestart) {
    last = seq;
    seen = 1;
    return;
  }
  if (seq > last) {
    const uint64_t shift = seq - last;
    seen = shift >= 64 ? 0 : seen << shift;
    seen |= 1;
    last = seq;
  } else {
    const uint64_t back = last - seq;
    if (back < 64) seen |= uint64_t{1} << back;
  }
}

void SeqWindow::Refuse(uint64_t seq) {
  if (OutOfRange(seq)) return;  // never part of a run
  refused_run = refused_run > 0 && seq == refused_next ? refused_run + 1 : 1;
  refused_next = seq + 1;
}

std::string SeqWindow::Explain(uint64_t seq) const {
  const std::string s = "seq " + std::to_string(seq);
  if (OutOfRange(seq)) return s + " is outside [1, 2^63-1]";
  const std::string resync =
      "; " + std::to_string(kSeqResyncRun) + " consecutive refused numbers start a new sequence";
  if (seq > last) {
    return s + " is more than 2^32 ahead of the highest accepted, " + std::to_string(last) + resync;
  }
  return s + " is more than 63 below the highest accepted, " + std::to_string(last) +
         ": too old to tell from a re-sent duplicate" + resync;
}

const char* SeqRefusalReason(SeqClass c) {
  return c == SeqClass::kTooOld ? "seq_too_old" : "implausible_seq";
}

}  // namespace bayline::pipeline
