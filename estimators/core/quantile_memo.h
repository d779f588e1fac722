// QuantileMemo: a small per-thread memo of quantiles already computed, for distributions.cc.
//
// Why: an estimate's interval needs quantiles such as t_{0.975}(dof) or the chi-square / gamma
// quantiles at (p, shape). The daemon reports many channels whose ages (and so dof and shape) and
// levels repeat, and each quantile costs an iteration on an incomplete beta or gamma function
// (0.3-1 us) below the sizes where an expansion is returned directly.
//
// Contract: direct-mapped, kSlots entries, keyed by the exact bits of (p, parameter). A hit returns
// the very double the computation returned for that key, so no result depends on whether the memo
// held it; a miss costs one hash and one comparison. Each thread has its own memo (thread_local):
// no locking, no sharing. Memory: kSlots x 24 bytes per thread and per memo.
#pragma once

#include <array>
#include <bit>
#include <cstddef>
#include <cstdint>

namespace bayline::est::dist::internal {

class QuantileMemo {
 public:
  static constexpr std::size_t kSlots = 2048;

  // True and *value set when (p, parameter) is held.
  bool Find(double p, double parameter, double* value) const {
    const Entry& e = slots_[Index(p, parameter)];
    if (e.p_bits != std::bit_cast<uint64_t>(p) ||
        e.parameter_bits != std::bit_cast<uint64_t>(parameter))
      return false;
    *value = e.value;
    return true;
  }

  void Store(double p, double parameter, double value) {
    slots_[Index(p, parameter)] = {std::bit_cast<uint64_t>(p), std::bit_cast<uint64_t>(parameter),
                                   value};
  }

 private:
  struct Entry {
    // All-ones bits are a NaN that no caller passes (p in (0, 1), finite positive parameters), so
    // an empty slot never matches.
    uint64_t p_bits = ~uint64_t{0};
    uint64_t parameter_bits = ~uint64_t{0};
    double value = 0.0;
  };

  static std::size_t Index(double p, double parameter) {
    uint64_t h = std::bit_cast<uint64_t>(p) * 0x9E3779B97F4A7C15ull;
    h ^= std::bit_cast<uint64_t>(parameter) + (h >> 29);
    h *= 0xBF58476D1CE4E5B9ull;
    return static_cast<std::size_t>(h >> 53) % kSlots;  // top 11 bits: 0..2047
  }

  std::array<Entry, kSlots> slots_;
};

}  // namespace bayline::est::dist::internal
