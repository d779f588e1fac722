#include "estimators/detect/glr.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <string>

namespace bayline::est {

Status GlrOptions::Validate() const {
  if (!(window >= 1 && window <= 100000))
    return Status::Error(ErrorCode::kInvalidConfig, "glr window must be in [1, 100000], got " + std::to_string(window));
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

double Glr::Scan(std::int64_t* best_j) const {
  const std::int64_t cap = options_.window + 1;
  const double pn = prefix_[head_];
  const double* p = prefix_.data();
  const double* inv = inv_two_j_.data();
  const Direction d = options_.direction;
  // j = 1..count_ walks the ring backwards from head_ - 1; split into two contiguous runs.
  double best = 0.0;
  std::int64_t arg = 0;
  auto term = [&](double s) {
    if (d == Direction::kUp) s = std::max(s, 0.0);
    else if (d == Direction::kDown) s = std::min(s, 0.0);
    return s * s;
  };
  const std::int64_t first_run = std::min<std::int64_t>(count_, head_);  // indices head_-1 .. head_-first_run
  if (best_j == nullptr) {
    for (std::int64_t j = 1; j <= first_run; ++j) best = std::max(best, term(pn - p[head_ - j]) * inv[j]);
    for (std::int64_t j = first_run + 1; j <= count_; ++j)
      best = std::max(best, term(pn - p[head_ - j + cap]) * inv[j]);
    return best;
  }
  for (std::int64_t j = 1; j <= count_; ++j) {
    const std::int64_t idx = j <= first_run ? head_ - j : head_ - j + cap;
    const double g = term(pn - p[idx]) * inv[j];
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
  head_ = head_ + 1 == cap ? 0 : head_ + 1;
  prefix_[head_] = next;
  seq_[head_] = static_cast<double>(mark.seq);
  time_[head_] = mark.time;
  count_ = std::min(count_ + 1, options_.window);
  if (++since_rebase_ >= options_.window) {
    for (double& v : prefix_) v -= next;
    since_rebase_ = 0;
  }
  const double g = Scan(nullptr);
  ev.statistic = g;
  if (g > options_.threshold) {
    std::int64_t j = 0;
    Scan(&j);
    const std::int64_t first = (head_ - j + 1 + cap) % cap;  // ring index of the window's first obs
    const double s = prefix_[head_] - prefix_[(head_ - j + cap) % cap];
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
  for (std::int64_t j = count_; j >= 0; --j) s.prefix.push_back(prefix_[(head_ - j + cap) % cap]);
  for (std::int64_t j = count_ - 1; j >= 0; --j) {
    const std::int64_t idx = (head_ - j + cap) % cap;
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
  if (!finite || !(s.since_rebase >= 0 && s.since_rebase < static_cast<double>(options_.window) &&
                   s.since_rebase == std::floor(s.since_rebase)) ||
      !s.cycle.Valid())
    return Status::Error(ErrorCode::kInvalidState, "glr state does not fit this window or holds invalid values");
  for (std::size_t i = 0; i <= n; ++i) prefix_[i] = s.prefix[i];
  for (std::size_t i = 0; i < n; ++i) {
    seq_[i + 1] = s.seq[i];
    time_[i + 1] = s.time[i];
  }
  head_ = static_cast<std::int64_t>(n);
  count_ = static_cast<std::int64_t>(n);
  since_rebase_ = static_cast<std::int64_t>(s.since_rebase);
  cycle_ = s.cycle;
  return Status::Ok();
}

}  // namespace bayline::est
