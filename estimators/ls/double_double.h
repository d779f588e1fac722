// DoubleDouble: an unevaluated sum hi + lo of two doubles with |lo| <= ulp(hi) / 2, giving about
// 106 bits (~32 decimal digits) of significand. Used by the extended-precision mode of recursive
// least squares for the rotations and accumulators.
//
// Building blocks (error-free transformations, exact in IEEE binary64 round-to-nearest):
//   TwoSum(a, b)  = (s, e) with s = fl(a + b), a + b = s + e exactly;
//   TwoProd(a, b) = (p, e) with p = fl(a * b), a * b = p + e exactly (FMA when the target has it,
//                   otherwise Veltkamp/Dekker splitting).
// The compound operations below have relative error of order 2^-104 (a few units of the lo part).
// Requirements: no -ffast-math / -fassociative-math (they would optimise the error terms away), no
// x87 extended registers (x86-64 SSE2 is fine). Overflow near DBL_MAX is not handled (the callers
// check results finite).
#pragma once

#include <cmath>

namespace bayline::est {

struct DoubleDouble {
  double hi = 0.0;
  double lo = 0.0;

  DoubleDouble() = default;
  constexpr DoubleDouble(double h)
      : hi(h), lo(0.0) {}  // NOLINT: implicit on purpose (mixed arithmetic)
  constexpr DoubleDouble(double h, double l) : hi(h), lo(l) {}
  double value() const { return hi + lo; }
};

namespace dd {

inline DoubleDouble TwoSum(double a, double b) {
  const double s = a + b;
  const double bb = s - a;
  const double e = (a - (s - bb)) + (b - bb);
  return {s, e};
}

// Requires |a| >= |b| (or a == 0).
inline DoubleDouble QuickTwoSum(double a, double b) {
  const double s = a + b;
  return {s, b - (s - a)};
}

inline DoubleDouble TwoProd(double a, double b) {
  const double p = a * b;
#if defined(__FMA__) || defined(__FP_FAST_FMA)
  return {p, std::fma(a, b, -p)};
#else
  // Veltkamp split into 26-bit halves; 2^27 + 1.
  constexpr double kSplit = 134217729.0;
  const double ta = kSplit * a;
  const double ah = ta - (ta - a);
  const double al = a - ah;
  const double tb = kSplit * b;
  const double bh = tb - (tb - b);
  const double bl = b - bh;
  return {p, ((ah * bh - p) + ah * bl + al * bh) + al * bl};
#endif
}

}  // namespace dd

inline DoubleDouble operator+(const DoubleDouble& a, const DoubleDouble& b) {
  DoubleDouble s = dd::TwoSum(a.hi, b.hi);
  DoubleDouble t = dd::TwoSum(a.lo, b.lo);
  s.lo += t.hi;
  s = dd::QuickTwoSum(s.hi, s.lo);
  s.lo += t.lo;
  return dd::QuickTwoSum(s.hi, s.lo);
}

inline DoubleDouble operator-(const DoubleDouble& a) { return {-a.hi, -a.lo}; }
inline DoubleDouble operator-(const DoubleDouble& a, const DoubleDouble& b) { return a + (-b); }

inline DoubleDouble operator*(const DoubleDouble& a, const DoubleDouble& b) {
  DoubleDouble p = dd::TwoProd(a.hi, b.hi);
  p.lo += a.hi * b.lo + a.lo * b.hi;
  return dd::QuickTwoSum(p.hi, p.lo);
}

inline DoubleDouble operator*(const DoubleDouble& a, double b) {
  DoubleDouble p = dd::TwoProd(a.hi, b);
  p.lo += a.lo * b;
  return dd::QuickTwoSum(p.hi, p.lo);
}

inline DoubleDouble operator/(const DoubleDouble& a, const DoubleDouble& b) {
  // Long division: three correction steps on the leading quotient digit.
  const double q1 = a.hi / b.hi;
  DoubleDouble r = a - b * q1;
  const double q2 = r.hi / b.hi;
  r = r - b * q2;
  const double q3 = r.hi / b.hi;
  DoubleDouble q = dd::QuickTwoSum(q1, q2);
  return q + DoubleDouble(q3);
}

inline DoubleDouble& operator+=(DoubleDouble& a, const DoubleDouble& b) { return a = a + b; }
inline DoubleDouble& operator-=(DoubleDouble& a, const DoubleDouble& b) { return a = a - b; }
inline DoubleDouble& operator*=(DoubleDouble& a, const DoubleDouble& b) { return a = a * b; }

inline bool operator<(const DoubleDouble& a, const DoubleDouble& b) {
  return a.hi < b.hi || (a.hi == b.hi && a.lo < b.lo);
}
inline bool operator==(const DoubleDouble& a, const DoubleDouble& b) {
  return a.hi == b.hi && a.lo == b.lo;
}

// sqrt(a) for a >= 0: one Newton step on the double root, s + (a - s^2) / (2 s).
inline DoubleDouble Sqrt(const DoubleDouble& a) {
  if (a.hi <= 0.0) return DoubleDouble(a.hi < 0.0 ? std::nan("") : 0.0);
  const double s = std::sqrt(a.hi);
  const DoubleDouble e = a - dd::TwoProd(s, s);
  return dd::QuickTwoSum(s, e.hi / (2.0 * s));
}
inline double Sqrt(double a) { return std::sqrt(a); }

inline DoubleDouble Abs(const DoubleDouble& a) { return a.hi < 0.0 ? -a : a; }
inline double Abs(double a) { return std::fabs(a); }
inline double ToDouble(const DoubleDouble& a) { return a.hi + a.lo; }
inline double ToDouble(double a) { return a; }
inline bool IsFinite(const DoubleDouble& a) { return std::isfinite(a.hi) && std::isfinite(a.lo); }
inline bool IsFinite(double a) { return std::isfinite(a); }

// Parses a decimal string ("-0.670191154593408E-01", "760.", ".11019") into the nearest
// double-double, digit by digit in double-double arithmetic (error ~1e-31 relative). Used to feed
// reference data whose decimal values a double cannot hold. Returns false on a malformed string.
bool ParseDoubleDouble(const char* text, DoubleDouble* out);

}  // namespace bayline::est
