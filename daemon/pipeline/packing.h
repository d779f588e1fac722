// Small helpers for packing pipeline bookkeeping into the doubles of a snapshot component.
// 64-bit integers (seq numbers, nanosecond times) do not fit a double's 53-bit mantissa, so they
// are stored exactly as two 32-bit halves. Sections are length-prefixed so that each estimator or
// detector state is read by its own StateReader (some Unpack functions insist on consuming their
// whole input).
#pragma once

#include <cmath>
#include <cstdint>
#include <span>
#include <vector>

#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::pipeline {

inline void PutU64(std::vector<double>* out, uint64_t v) {
  out->push_back(static_cast<double>(v >> 32));
  out->push_back(static_cast<double>(v & 0xFFFFFFFFu));
}

inline bool GetU64(est::StateReader& r, uint64_t* v) {
  double hi = 0, lo = 0;
  if (!r.Get(hi) || !r.Get(lo)) return false;
  if (!(hi >= 0 && hi < 4294967296.0 && lo >= 0 && lo < 4294967296.0)) return r.Fail("bad integer");
  *v = (static_cast<uint64_t>(hi) << 32) | static_cast<uint64_t>(lo);
  return true;
}

// Starts a section: returns the index of its length slot; EndSection fills it.
inline std::size_t BeginSection(std::vector<double>* out) {
  out->push_back(0.0);
  return out->size() - 1;
}
inline void EndSection(std::vector<double>* out, std::size_t slot) {
  (*out)[slot] = static_cast<double>(out->size() - slot - 1);
}

// Reads the next section of `values` starting at *pos; false when malformed.
inline bool NextSection(std::span<const double> values, std::size_t* pos,
                        std::span<const double>* section) {
  if (*pos >= values.size()) return false;
  const double n = values[*pos];
  // Compared as doubles before any conversion: a length beyond the values left (say 4e227, from a
  // damaged file) must not reach the cast, whose result would be undefined.
  const double left = static_cast<double>(values.size() - *pos - 1);
  if (!(n >= 0) || !(n <= left) || n != std::floor(n)) return false;
  *section = values.subspan(*pos + 1, static_cast<std::size_t>(n));
  *pos += 1 + static_cast<std::size_t>(n);
  return true;
}

// Restores an estimator or detector from one packed section: unpacks into a copy of its current
// state (so dynamically sized members have their size), requires the section to be consumed
// exactly, then lets Restore validate and replace. On any error `e` is unchanged.
template <typename E>
est::Status UnpackInto(E& e, std::span<const double> values) {
  auto state = e.state();
  est::StateReader reader(values);
  est::Status s = state.Unpack(reader);
  if (!s.ok()) return s;
  s = reader.status();
  if (!s.ok()) return s;
  return e.Restore(state);
}

}  // namespace bayline::pipeline
