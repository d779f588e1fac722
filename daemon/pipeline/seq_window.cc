#include "daemon/pipeline/seq_window.h"

namespace bayline::pipeline {

SeqClass SeqWindow::Classify(uint64_t seq) const {
  if (seen == 0) return SeqClass::kNext;  // nothing accepted yet: any start is fine
  if (seq > last) return seq == last + 1 ? SeqClass::kNext : SeqClass::kGap;
  const uint64_t back = last - seq;
  if (back >= 64) return SeqClass::kDuplicate;
  return (seen >> back) & 1u ? SeqClass::kDuplicate : SeqClass::kLate;
}

void SeqWindow::Accept(uint64_t seq) {
  if (seen == 0) {
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

}  // namespace bayline::pipeline
