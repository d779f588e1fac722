// Helpers shared by the detector unit tests: bitwise comparison of events and packed states,
// capture / restore through the state codec, and observation marks.
#pragma once

#include <gtest/gtest.h>

#include <cstring>
#include <random>
#include <vector>

#include "estimators/core/state_codec.h"
#include "estimators/detect/alarm.h"

namespace bayline::est::testing {

inline bool SameBits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

// Bitwise equality of two vectors (NaN marks compare equal to themselves).
inline bool BitEqual(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0;
}

// Every field of an event as doubles, for BitEqual.
inline std::vector<double> Flat(const DetectorEvent& e) {
  return {double(e.raised),    double(e.cleared),   e.statistic,  e.threshold,
          double(e.direction), double(e.onset_seq), e.onset_time, e.shift};
}

// The detector's state as packed for a snapshot.
template <typename Detector>
std::vector<double> Packed(const Detector& d) {
  std::vector<double> v;
  StateWriter w(&v);
  d.state().Pack(w);
  return v;
}

inline ::testing::AssertionResult SameEvent(const DetectorEvent& a, const DetectorEvent& b) {
  if (a.raised == b.raised && a.cleared == b.cleared && SameBits(a.statistic, b.statistic) &&
      SameBits(a.threshold, b.threshold) && a.direction == b.direction &&
      a.onset_seq == b.onset_seq && SameBits(a.onset_time, b.onset_time) &&
      SameBits(a.shift, b.shift))
    return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure()
         << "events differ: statistic " << a.statistic << " vs " << b.statistic << ", raised "
         << a.raised << " vs " << b.raised;
}

// Packs `chart`'s state, unpacks it into a fresh State and restores it into `target`.
template <typename Chart>
void CaptureInto(const Chart& chart, Chart* target) {
  std::vector<double> buf;
  StateWriter w(&buf);
  chart.state().Pack(w);
  typename Chart::State s;
  StateReader r(buf);
  ASSERT_TRUE(s.Unpack(r).ok());
  ASSERT_TRUE(target->Restore(s).ok());
}

// Marks with seq = index and time = 10 * index, so onsets can be checked.
inline ObservationMark Mark(std::int64_t i) {
  return ObservationMark{i, 10.0 * static_cast<double>(i)};
}

}  // namespace bayline::est::testing
