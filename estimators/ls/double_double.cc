#include "estimators/ls/double_double.h"

#include <cctype>
#include <cstdlib>

namespace bayline::est {

bool ParseDoubleDouble(const char* text, DoubleDouble* out) {
  const char* c = text;
  while (std::isspace(static_cast<unsigned char>(*c))) ++c;
  bool negative = false;
  if (*c == '+' || *c == '-') negative = (*c++ == '-');
  DoubleDouble mantissa(0.0);
  int digits = 0, significant = 0, scale = 0;
  bool point = false;
  for (;; ++c) {
    if (*c == '.' && !point) {
      point = true;
      continue;
    }
    if (!std::isdigit(static_cast<unsigned char>(*c))) break;
    ++digits;
    const int d = *c - '0';
    if (significant < 31) {  // 10^31 < 2^106: the mantissa stays exact
      if (d != 0 || significant > 0) ++significant;
      mantissa = mantissa * 10.0 + DoubleDouble(static_cast<double>(d));
      if (point) --scale;
    } else if (!point) {
      ++scale;  // digits beyond double-double precision only shift the magnitude
    }
  }
  if (digits == 0) return false;
  if (*c == 'e' || *c == 'E' || *c == 'd' || *c == 'D') {
    char* end = nullptr;
    const long e = std::strtol(c + 1, &end, 10);
    if (end == c + 1 || e > 400 || e < -400) return false;
    scale += static_cast<int>(e);
    c = end;
  }
  while (std::isspace(static_cast<unsigned char>(*c))) ++c;
  if (*c != '\0') return false;
  // 10^|scale| by squaring in double-double (exact up to 10^45, ~1e-32 relative beyond).
  DoubleDouble power(1.0), base(10.0);
  for (int k = scale < 0 ? -scale : scale; k > 0; k >>= 1) {
    if (k & 1) power = power * base;
    base = base * base;
  }
  DoubleDouble v = scale < 0 ? mantissa / power : mantissa * power;
  *out = negative ? -v : v;
  return true;
}

}  // namespace bayline::est
