#include "estimators/detect/glr.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <string>

namespace bayline::est {

Status GlrOptions::Validate() const {
  if (!(window >= 1 && window <= 100000))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "glr window must be in [1, 100000], got " + std::to_string(window));
  if (!(std::isfinite(threshold) && threshold > 0.0))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "glr threshold must be finite and > 0, got " + std::to_string(threshold));
  if (Status s = ValidateChartDirection(direction); !s.ok()) return s;
  return ValidateHoldoff(holdoff);
}

void Glr::State::Pack(StateWriter& w) const {
  w.Put(static_cast<double>(seq.size()));
  for (double v : prefix) w.Put(v);
  for (double v : seq) w.Put(v);
  for (double v : time) w.Put(v);
  w.Put(since_rebase);
  cycle.Pack(w);
}

Status Glr::State::Unpack(StateReader& r) {
  double n = 0;
  if (!r.Get(n)) return r.status(false);
  if (!(n >= 0 && n <= 100000 && n == std::floor(n)))
    return Status::Error(ErrorCode::kInvalidState, "glr state window length is invalid");
  const auto m = static_cast<std::size_t>(n);
  prefix.assign(m + 1, 0.0);
  seq.assign(m, 0.0);
  time.assign(m, 0.0);
  for (double& v : prefix) r.Get(v);
  for (double& v : seq) r.Get(v);
  for (double& v : time) r.Get(v);
  r.Get(since_rebase);
  cycle.Unpack(r);
  return r.status(false);
}

Glr::Glr(const GlrOptions& options) : options_(options) {
  assert(options_.Validate().ok());
  const auto w = static_cast<std::size_t>(options_.window);
  prefix_.assign(w + 1, 0.0);
  seq_.assign(w + 1, -1.0);
  time_.assign(w + 1, kNaN);
  inv_two_j_.assign(w + 1, 0.0);
  for (std::size_t j = 1; j <= w; ++j) inv_two_j_[j] = 1.0 / (2.0 * static_cast<double>(j));
}

void Glr::Reset() {
  cycle_ = AlarmCycle();
  Restart();
}

void Glr::Restart() {
  count_ = 0;
  head_ = 0;
  since_rebase_ = 0;
  prefix_[0] = 0.0;
}

namespace {

// max over j in [j0, j1] of g_j for prefix sums p[j] = P_{n-j} laid out contiguously (p[0] = P_n).
// Four partial maxima break the dependency chain so the loop runs at the multiply-add rate.
template <Direction kDir>
double MaxTerm(const double* p, const double* inv, double pn, std::int64_t j0, std::int64_t j1) {
  auto term = [&](std::int64_t j) {
    double s = pn - p[j];
    if constexpr (kDir == Direction::kUp) s = s > 0.0 ? s : 0.0;
    if constexpr (kDir == Direction::kDown) s = s < 0.0 ? s : 0.0;
    return s * s * inv[j];
  };
  double m0 = 0.0, m1 = 0.0, m2 = 0.0, m3 = 0.0;
  std::int64_t j = j0;
  for (; j + 3 <= j1; j += 4) {
    const double a = term(j), b = term(j + 1), c = term(j + 2), d = term(j + 3);
    m0 = a > m0 ? a : m0;
    m1 = b > m1 ? b : m1;
    m2 = c > m2 ? c : m2;
    m3 = d > m3 ? d : m3;
  }
  for (; j <= j1; ++j) {
    const double a = term(j);
    m0 = a > m0 ? a : m0;
  }
  return std::max(std::max(m0, m1), std::max(m2, m3));
}

template <Direction kDir>
double MaxOverWindow(const double* ring, const double* inv, std::int64_t head, std::int64_t count,
                     std::int64_t cap) {
  // P_{n-j} sits at ring[head + j] until the end of the ring, then wraps to ring[head + j - cap].
  const double pn = ring[head];
  const std::int64_t first = std::min(count, cap - 1 - head);
  double best = MaxTerm<kDir>(ring + head, inv, pn, 1, first);
  if (count > first) {
    // j in (first, count]: ring index head + j - cap = j - (cap - head).
    const std::int64_t shift = cap - head;
    best = std::max(best, MaxTerm<kDir>(ring - shift, inv, pn, first + 1, count));
  }
  return best;
}

}  // namespace

double Glr::Scan(std::int64_t* best_j) const {
  const std::int64_t cap = options_.window + 1;
  if (best_j == nullptr) {
    switch (options_.direction) {
      case Direction::kUp:
        return MaxOverWindow<Direction::kUp>(prefix_.data(), inv_two_j_.data(), head_, count_, cap);
      case Direction::kDown:
        return MaxOverWindow<Direction::kDown>(prefix_.data(), inv_two_j_.data(), head_, count_,
                                               cap);
      default:
        return MaxOverWindow<Direction::kBoth>(prefix_.data(), inv_two_j_.data(), head_, count_,
                                               cap);
    }
  }
  // Slow path, only at an alarm: the maximising j (the smallest on ties).
  const double pn = prefix_[head_];
  double best = 0.0;
  std::int64_t arg = 0;
  for (std::int64_t j = 1; j <= count_; ++j) {
    double s = pn - prefix_[(head_ + j) % cap];
    if (options_.direction == Direction::kUp) s = std::max(s, 0.0);
    if (options_.direction == Direction::kDown) s = std::min(s, 0.0);
    const double g = s * s * inv_two_j_[j];
    if (g > best) {
      best = g;
      arg = j;
    }
  }
  *best_j = arg;
  return best;
}

DetectorEvent Glr::Update(double z, const ObservationMark& mark) {
  DetectorEvent ev;
  ev.threshold = options_.threshold;
  ev.direction = options_.direction;
  if (!std::isfinite(z) || cycle_.holdoff_left > 0.0) {
    if (std::isfinite(z)) cycle_.holdoff_left -= 1.0;
    ev.statistic = Scan(nullptr);
    return ev;
  }
  const std::int64_t cap = options_.window + 1;
  const double next = prefix_[head_] + z;
  const std::int64_t new_head = head_ == 0 ? cap - 1 : head_ - 1;
  const bool rebase = since_rebase_ + 1 >= options_.window;
  // The state invariant at risk is the finiteness of the prefix sums (what Restore checks): a z
  // that would break it is ignored, as a non-finite z, before anything changes.
  bool finite = std::isfinite(next);
  if (finite && rebase) {
    for (std::int64_t i = 0; i < cap; ++i)
      finite = finite && (i == new_head || std::isfinite(prefix_[i] - next));
  }
  if (!finite) {
    ev.statistic = Scan(nullptr);
    return ev;
  }
  head_ = new_head;  // newer prefix sums at lower ring indices
  prefix_[head_] = next;
  seq_[head_] = static_cast<double>(mark.seq);
  time_[head_] = mark.time;
  count_ = std::min(count_ + 1, options_.window);
  ++since_rebase_;
  if (rebase) {
    for (double& v : prefix_) v -= next;
    since_rebase_ = 0;
  }
  const double g = Scan(nullptr);
  ev.statistic = g;
  if (g > options_.threshold) {
    std::int64_t j = 0;
    Scan(&j);
    const std::int64_t first = (head_ + j - 1) % cap;  // ring index of the window's first obs
    const double s = prefix_[head_] - prefix_[(head_ + j) % cap];
    ev.direction = s > 0.0 ? Direction::kUp : Direction::kDown;
    ev.onset_seq = static_cast<std::int64_t>(seq_[first]);
    ev.onset_time = time_[first];
    ev.shift = s / static_cast<double>(j);
    ev.raised = !cycle_.active;
    cycle_.active = true;
    cycle_.holdoff_left = static_cast<double>(options_.holdoff);
    Restart();
  } else if (cycle_.active) {
    ev.cleared = true;
    cycle_.active = false;
  }
  return ev;
}

Glr::State Glr::state() const {
  State s;
  const std::int64_t cap = options_.window + 1;
  for (std::int64_t j = count_; j >= 0; --j) s.prefix.push_back(prefix_[(head_ + j) % cap]);
  for (std::int64_t j = count_ - 1; j >= 0; --j) {
    const std::int64_t idx = (head_ + j) % cap;  // the observation that produced P_{n-j}
    s.seq.push_back(seq_[idx]);
    s.time.push_back(time_[idx]);
  }
  s.since_rebase = static_cast<double>(since_rebase_);
  s.cycle = cycle_;
  return s;
}

Status Glr::Restore(const State& s) {
  const std::size_t n = s.seq.size();
  const bool lengths = n <= static_cast<std::size_t>(options_.window) && s.time.size() == n &&
                       s.prefix.size() == n + 1;
  bool finite = lengths;
  if (finite)
    for (double v : s.prefix) finite = finite && std::isfinite(v);
  if (!finite ||
      !(s.since_rebase >= 0 && s.since_rebase < static_cast<double>(options_.window) &&
        s.since_rebase == std::floor(s.since_rebase)) ||
      !s.cycle.Valid())
    return Status::Error(ErrorCode::kInvalidState,
                         "glr state does not fit this window or holds invalid values");
  // Lay the window out with head_ = 0: P_{n-j} at index j.
  for (std::size_t i = 0; i <= n; ++i) prefix_[n - i] = s.prefix[i];
  for (std::size_t i = 0; i < n; ++i) {
    seq_[n - 1 - i] = s.seq[i];
    time_[n - 1 - i] = s.time[i];
  }
  head_ = 0;
  count_ = static_cast<std::int64_t>(n);
  since_rebase_ = static_cast<std::int64_t>(s.since_rebase);
  cycle_ = s.cycle;
  return Status::Ok();
}

}  // namespace bayline::est
