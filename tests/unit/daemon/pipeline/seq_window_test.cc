// SeqWindow: duplicates, late arrivals, refused numbers and re-synchronisation (seq_window.h).
#include "daemon/pipeline/seq_window.h"

#include <gtest/gtest.h>

#include <vector>

namespace bayline::pipeline {
namespace {

// Feeds `seqs` as the pipeline does (Accept the accepted, Refuse the refused); returns the classes.
std::vector<SeqClass> Feed(SeqWindow& w, const std::vector<uint64_t>& seqs) {
  std::vector<SeqClass> out;
  for (uint64_t seq : seqs) {
    const SeqClass c = w.Classify(seq);
    if (c == SeqClass::kTooOld || c == SeqClass::kImplausible) {
      w.Refuse(seq);
    } else if (c != SeqClass::kDuplicate) {
      w.Accept(seq, c);
    }
    out.push_back(c);
  }
  return out;
}

using enum SeqClass;

TEST(SeqWindowTest, NextGapLateAndDuplicate) {
  SeqWindow w;
  EXPECT_EQ(Feed(w, {5, 6, 8, 7, 7, 6, 8 + 63}),
            (std::vector<SeqClass>{kNext, kNext, kGap, kLate, kDuplicate, kDuplicate, kGap}));
  EXPECT_EQ(w.last, 71u);
  EXPECT_EQ(w.Classify(8), kDuplicate);  // 63 back: still inside the window
  EXPECT_EQ(w.Classify(7), kTooOld);     // 64 back
}

TEST(SeqWindowTest, OutOfRangeNumbersAreImplausibleEvenAsTheFirst) {
  SeqWindow w;
  EXPECT_EQ(w.Classify(~uint64_t{0}), kImplausible);
  EXPECT_EQ(w.Classify(kMaxSeq + 1), kImplausible);
  EXPECT_EQ(w.Classify(0), kImplausible);
  EXPECT_EQ(w.Classify(kMaxSeq), kNext);
  EXPECT_EQ(Feed(w, {10, ~uint64_t{0}, ~uint64_t{0}, ~uint64_t{0}, ~uint64_t{0}, ~uint64_t{0}, 11}),
            (std::vector<SeqClass>{kNext, kImplausible, kImplausible, kImplausible, kImplausible,
                                   kImplausible, kNext}));
  EXPECT_EQ(w.last, 11u);
}

TEST(SeqWindowTest, AJumpBeyondTheBoundIsRefusedUnlessTheNumbersGoOnFromIt) {
  SeqWindow w;
  Feed(w, {100});
  EXPECT_EQ(w.Classify(100 + kMaxSeqJump), kGap);
  const uint64_t far = 200 + kMaxSeqJump;
  EXPECT_EQ(Feed(w, {far, 101, far}), (std::vector<SeqClass>{kImplausible, kNext, kImplausible}));
  // A producer that really moved its numbering: refused three times, followed from the fourth.
  EXPECT_EQ(Feed(w, {far + 1, far + 2, far + 3, far + 4}),
            (std::vector<SeqClass>{kImplausible, kImplausible, kRestart, kNext}));
  EXPECT_EQ(w.last, far + 4);
}

TEST(SeqWindowTest, OneStrayNumberCannotJamTheChannel) {
  SeqWindow w;
  Feed(w, {1, 2, 3});
  Feed(w, {1000});  // plausible jump: accepted
  EXPECT_EQ(Feed(w, {4, 5, 6, 7, 8}),
            (std::vector<SeqClass>{kTooOld, kTooOld, kTooOld, kRestart, kNext}));
  EXPECT_EQ(w.last, 8u);
  EXPECT_EQ(w.seen, 0b11u);
  EXPECT_EQ(w.Classify(7), kDuplicate);
}

TEST(SeqWindowTest, OldNumbersThatDoNotContinueOneAnotherNeverRestart) {
  SeqWindow w;
  Feed(w, {500});
  EXPECT_EQ(Feed(w, {10, 12, 11, 13, 13, 14}),
            (std::vector<SeqClass>{kTooOld, kTooOld, kTooOld, kTooOld, kTooOld, kTooOld}));
  // An accepted observation between them breaks the run.
  EXPECT_EQ(Feed(w, {20, 21, 501, 22, 23}),
            (std::vector<SeqClass>{kTooOld, kTooOld, kNext, kTooOld, kTooOld}));
  EXPECT_EQ(w.last, 501u);
}

TEST(SeqWindowTest, AWindowBeyondTheRangeFromAnOldSnapshotStartsAfresh) {
  SeqWindow w;
  w.last = ~uint64_t{0};
  w.seen = 1;
  EXPECT_TRUE(w.Empty());
  EXPECT_EQ(w.Numbered(0), 1u);
  EXPECT_EQ(Feed(w, {7, 8}), (std::vector<SeqClass>{kNext, kNext}));
  EXPECT_EQ(w.last, 8u);
  EXPECT_EQ(w.Numbered(0), 9u);
}

TEST(SeqWindowTest, RefusalsAreExplained) {
  SeqWindow w;
  Feed(w, {300});
  EXPECT_EQ(std::string(SeqRefusalReason(w.Classify(3))), "seq_too_old");
  EXPECT_EQ(std::string(SeqRefusalReason(w.Classify(~uint64_t{0}))), "implausible_seq");
  EXPECT_NE(w.Explain(3).find("more than 63 below the highest accepted, 300"), std::string::npos);
  EXPECT_NE(w.Explain(~uint64_t{0}).find("outside [1, 2^63-1]"), std::string::npos);
}

}  // namespace
}  // namespace bayline::pipeline
