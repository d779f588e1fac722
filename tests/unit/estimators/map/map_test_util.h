// Helpers shared by the map unit tests.
#pragma once

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "estimators/core/state_codec.h"

namespace bayline::est::testing {

// |a - b| <= tol * max(|a|, |b|, floor): relative tolerance with an absolute floor near zero.
inline ::testing::AssertionResult RelNear(double a, double b, double tol, double floor = 1e-300) {
  const double scale = std::fmax(std::fmax(std::fabs(a), std::fabs(b)), floor);
  if (std::fabs(a - b) <= tol * scale) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure()
         << a << " vs " << b << " differ by " << std::fabs(a - b) / scale << " relative (tolerance "
         << tol << ")";
}

template <typename S>
std::vector<double> Packed(const S& state) {
  std::vector<double> v;
  StateWriter w(&v);
  state.Pack(w);
  return v;
}

// Bitwise equality of two packed states (NaN == NaN).
inline bool SameBits(const std::vector<double>& a, const std::vector<double>& b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    if (std::isnan(a[i]) && std::isnan(b[i])) continue;
    if (a[i] != b[i]) return false;
  }
  return true;
}

}  // namespace bayline::est::testing
