#include "estimators/detect/recursive_residual_tests.h"

#include <cassert>
#include <cmath>
#include <limits>
#include <string>

namespace bayline::est {

namespace {

constexpr double kNaNd = std::numeric_limits<double>::quiet_NaN();

Status Bad(const std::string& what) { return Status::Error(ErrorCode::kInvalidConfig, what); }
Status BadState(const std::string& what) { return Status::Error(ErrorCode::kInvalidState, what); }
bool IsCount(double v) { return std::isfinite(v) && v >= 0 && v == std::floor(v); }

// Edgerton & Wells (1994), Oxford Bulletin of Economics and Statistics 56: response-surface
// approximation of Durbin's (1969) CUSUM-of-squares critical values, c0 = c1/sqrt(m) + c2/m +
// c3/m^1.5, one column per one-sided level 0.10, 0.05, 0.025, 0.01, 0.005.
constexpr double kOneSided[5] = {0.10, 0.05, 0.025, 0.01, 0.005};
constexpr double kC1[5] = {1.0729830, 1.2238734, 1.3581015, 1.5174271, 1.6276236};
constexpr double kC2[5] = {-0.6698868, -0.6700069, -0.6701218, -0.6702672, -0.6703724};
constexpr double kC3[5] = {-0.5816458, -0.7351697, -0.8858694, -1.0847745, -1.2365861};

}  // namespace

double BdeCusumCoefficient(double alpha) {
  // BDE (1975), Brown, Durbin & Evans, JRSS B 37, section 2.3.
  if (alpha == 0.10) return 0.850;
  if (alpha == 0.05) return 0.948;
  if (alpha == 0.01) return 1.143;
  return kNaNd;
}

double BdeCusumBoundary(double j, double n_residuals, double a) {
  const double root = std::sqrt(n_residuals);
  return a * root + 2.0 * a * j / root;
}

double BdeCusumSquaresCriticalValue(double n_residuals, double alpha) {
  if (!(n_residuals >= 4)) return kNaNd;
  for (int i = 0; i < 5; ++i) {
    if (alpha / 2 == kOneSided[i]) {
      const double m = 0.5 * n_residuals - 1;
      return kC1[i] / std::sqrt(m) + kC2[i] / m + kC3[i] / (m * std::sqrt(m));
    }
  }
  return kNaNd;
}

std::vector<double> BdeCusumPath(std::span<const double> w, BdeSigma sigma) {
  const std::size_t n = w.size();
  if (n < 2) return {};
  double sd = 0;
  if (sigma == BdeSigma::kResidualRms) {
    double ss = 0;
    for (double v : w) ss += v * v;
    sd = std::sqrt(ss / static_cast<double>(n));
  } else {
    double mean = 0;
    for (double v : w) mean += v;
    mean /= static_cast<double>(n);
    double ss = 0;
    for (double v : w) ss += (v - mean) * (v - mean);
    sd = std::sqrt(ss / static_cast<double>(n - 1));
  }
  std::vector<double> path(n);
  double sum = 0;
  for (std::size_t i = 0; i < n; ++i) {
    sum += w[i];
    path[i] = sum / sd;
  }
  return path;
}

std::vector<double> BdeCusumSquaresPath(std::span<const double> w) {
  std::vector<double> path(w.size());
  double sum = 0;
  for (std::size_t i = 0; i < w.size(); ++i) {
    sum += w[i] * w[i];
    path[i] = sum;
  }
  for (double& v : path) v /= sum;
  return path;
}

// ---------------------------------------------------------------- RecursiveCusum

Status RecursiveCusum::Options::Validate() const {
  if (horizon < 2) return Bad("recursive_cusum horizon must be >= 2");
  if (std::isnan(BdeCusumCoefficient(alpha)))
    return Bad("recursive_cusum alpha must be 0.10, 0.05 or 0.01");
  if (!(sigma >= 0) || !std::isfinite(sigma))
    return Bad("recursive_cusum sigma must be finite and >= 0");
  if (holdoff < 0) return Bad("recursive_cusum holdoff must be >= 0");
  return Status::Ok();
}

void RecursiveCusum::State::Pack(StateWriter& w) const {
  for (double v : {j, sum, sum_sq, min_sum, min_j, min_next_seq, min_next_time, max_sum, max_j,
                   max_next_seq, max_next_time})
    w.Put(v);
  w.Put(pending_min);
  w.Put(pending_max);
  w.Put(alarm_active);
  w.Put(holdoff_left);
}

Status RecursiveCusum::State::Unpack(StateReader& r) {
  State s;
  for (double* v : {&s.j, &s.sum, &s.sum_sq, &s.min_sum, &s.min_j, &s.min_next_seq,
                    &s.min_next_time, &s.max_sum, &s.max_j, &s.max_next_seq, &s.max_next_time})
    r.Get(*v);
  r.Get(s.pending_min);
  r.Get(s.pending_max);
  r.Get(s.alarm_active);
  r.Get(s.holdoff_left);
  if (Status st = r.status(); !st.ok()) return st;
  *this = s;
  return Status::Ok();
}

RecursiveCusum::RecursiveCusum(const Options& options)
    : options_(options), a_(BdeCusumCoefficient(options.alpha)) {
  assert(options_.Validate().ok());
}

Status RecursiveCusum::Update(double w, const ObservationMark& mark, DetectorEvent* event) {
  const State before = state_;
  DetectorEvent ev;
  Status st = Step(w, mark, &ev);
  if (st.ok()) {
    if (Status v = Validate(state_); !v.ok()) {
      state_ = before;
      return Status::Error(ErrorCode::kNumericalFailure,
                           "update would leave an invalid state: " + v.message());
    }
    if (event) *event = ev;
  }
  return st;
}

Status RecursiveCusum::Step(double w, const ObservationMark& mark, DetectorEvent* event) {
  if (!std::isfinite(w)) {
    return Status::Error(ErrorCode::kNonFinite, "recursive residual is " + std::to_string(w));
  }
  DetectorEvent ev;
  ev.direction = Direction::kBoth;
  State& s = state_;
  if (s.holdoff_left > 0) {
    s.holdoff_left -= 1;
    if (event) *event = ev;
    return Status::Ok();
  }
  if (s.pending_min) {
    s.min_next_seq = static_cast<double>(mark.seq);
    s.min_next_time = mark.time;
    s.pending_min = false;
  }
  if (s.pending_max) {
    s.max_next_seq = static_cast<double>(mark.seq);
    s.max_next_time = mark.time;
    s.pending_max = false;
  }
  s.j += 1;
  s.sum += w;
  s.sum_sq += w * w;
  const double sigma = options_.sigma > 0 ? options_.sigma : std::sqrt(s.sum_sq / s.j);
  const double stat = sigma > 0 ? s.sum / sigma : 0.0;
  const double bound = BdeCusumBoundary(s.j, options_.horizon, a_);
  ev.statistic = stat;
  ev.threshold = bound;
  const bool up = stat > bound, down = stat < -bound;
  if (up || down) {
    if (!s.alarm_active) {
      ev.raised = true;
      ev.direction = up ? Direction::kUp : Direction::kDown;
      const double ext_sum = up ? s.min_sum : s.max_sum;
      const double ext_j = up ? s.min_j : s.max_j;
      ev.onset_seq = static_cast<std::int64_t>(up ? s.min_next_seq : s.max_next_seq);
      ev.onset_time = up ? s.min_next_time : s.max_next_time;
      ev.shift = (s.sum - ext_sum) / (s.j - ext_j) / sigma;
      s.alarm_active = true;
      s.holdoff_left = options_.holdoff;
    }
  } else if (s.alarm_active) {
    ev.cleared = true;
    s.alarm_active = false;
  }
  if (s.sum < s.min_sum) {
    s.min_sum = s.sum;
    s.min_j = s.j;
    s.pending_min = true;
  }
  if (s.sum > s.max_sum) {
    s.max_sum = s.sum;
    s.max_j = s.j;
    s.pending_max = true;
  }
  if (up || down || s.j >= options_.horizon) {
    // New block (after any hold-off).
    State fresh;
    fresh.alarm_active = s.alarm_active;
    fresh.holdoff_left = s.holdoff_left;
    s = fresh;
  }
  if (event) *event = ev;
  return Status::Ok();
}

Status RecursiveCusum::Validate(const State& s) const {
  if (!IsCount(s.j) || s.j >= options_.horizon) return BadState("recursive_cusum j out of range");
  if (!IsCount(s.min_j) || !IsCount(s.max_j) || s.min_j > s.j || s.max_j > s.j)
    return BadState("recursive_cusum extremum index out of range");
  for (double v : {s.sum, s.sum_sq, s.min_sum, s.max_sum, s.min_next_seq, s.max_next_seq})
    if (!std::isfinite(v)) return BadState("recursive_cusum sums must be finite");
  if (s.sum_sq < 0 || s.min_sum > 0 || s.max_sum < 0 || s.min_sum > s.sum || s.max_sum < s.sum)
    return BadState("recursive_cusum sums inconsistent");
  if (!IsCount(s.holdoff_left) || s.holdoff_left > options_.holdoff)
    return BadState("recursive_cusum holdoff_left out of range");
  return Status::Ok();
}

Status RecursiveCusum::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

// ---------------------------------------------------------------- RecursiveCusumSquares

Status RecursiveCusumSquares::Options::Validate() const {
  if (horizon < 10) return Bad("recursive_cusum_sq horizon must be >= 10");
  if (std::isnan(BdeCusumSquaresCriticalValue(horizon, alpha)))
    return Bad("recursive_cusum_sq alpha must be 0.20, 0.10, 0.05, 0.02 or 0.01");
  if (holdoff < 0) return Bad("recursive_cusum_sq holdoff must be >= 0");
  return Status::Ok();
}

void RecursiveCusumSquares::State::Pack(StateWriter& w) const {
  w.Put(j);
  for (double v : cum_sq) w.Put(v);
  for (double v : seq) w.Put(v);
  for (double v : time) w.Put(v);
  w.Put(alarm_active);
  w.Put(holdoff_left);
}

Status RecursiveCusumSquares::State::Unpack(StateReader& r) {
  State s;
  r.Get(s.j);
  if (!r.status(false).ok()) return r.status(false);
  if (!IsCount(s.j) || s.j > 1e7) {
    r.Fail("recursive_cusum_sq block length invalid");
    return r.status();
  }
  const auto n = static_cast<std::size_t>(s.j);
  for (std::vector<double>* v : {&s.cum_sq, &s.seq, &s.time}) {
    v->resize(n);
    for (double& x : *v) r.Get(x);
  }
  r.Get(s.alarm_active);
  r.Get(s.holdoff_left);
  if (Status st = r.status(); !st.ok()) return st;
  *this = std::move(s);
  return Status::Ok();
}

RecursiveCusumSquares::RecursiveCusumSquares(const Options& options)
    : options_(options), c0_(BdeCusumSquaresCriticalValue(options.horizon, options.alpha)) {
  assert(options_.Validate().ok());
  const auto n = static_cast<std::size_t>(options_.horizon);
  state_.cum_sq.reserve(n);
  state_.seq.reserve(n);
  state_.time.reserve(n);
}

RecursiveCusumSquares::RecursiveCusumSquares(const RecursiveCusumSquares& other)
    : options_(other.options_), c0_(other.c0_) {
  const auto n = static_cast<std::size_t>(options_.horizon);
  state_.cum_sq.reserve(n);
  state_.seq.reserve(n);
  state_.time.reserve(n);
  state_.j = other.state_.j;
  state_.cum_sq.assign(other.state_.cum_sq.begin(), other.state_.cum_sq.end());
  state_.seq.assign(other.state_.seq.begin(), other.state_.seq.end());
  state_.time.assign(other.state_.time.begin(), other.state_.time.end());
  state_.alarm_active = other.state_.alarm_active;
  state_.holdoff_left = other.state_.holdoff_left;
}

RecursiveCusumSquares& RecursiveCusumSquares::operator=(const RecursiveCusumSquares& other) {
  if (this != &other) {
    RecursiveCusumSquares copy(other);
    *this = std::move(copy);
  }
  return *this;
}

Status RecursiveCusumSquares::Update(double w, const ObservationMark& mark, DetectorEvent* event) {
  if (!std::isfinite(w)) {
    return Status::Error(ErrorCode::kNonFinite, "recursive residual is " + std::to_string(w));
  }
  DetectorEvent ev;
  ev.direction = Direction::kBoth;
  ev.threshold = c0_;
  State& s = state_;
  if (s.holdoff_left > 0) {
    s.holdoff_left -= 1;
    if (event) *event = ev;
    return Status::Ok();
  }
  const double prev = s.cum_sq.empty() ? 0.0 : s.cum_sq.back();
  // The invariant at risk (Validate: sums finite and non-decreasing) is checked on the new sum
  // before anything changes.
  if (!std::isfinite(prev + w * w)) {
    return Status::Error(ErrorCode::kNumericalFailure,
                         "update would leave an invalid state: "
                         "recursive_cusum_sq sums must be finite");
  }
  s.cum_sq.push_back(prev + w * w);  // within the reserved capacity
  s.seq.push_back(static_cast<double>(mark.seq));
  s.time.push_back(mark.time);
  s.j += 1;
  if (s.j >= options_.horizon) {
    // Block end: BDE's exact statistic over the block.
    const double total = s.cum_sq.back();
    const double n = s.j;
    double best = 0, best_dev = 0;
    std::size_t best_i = 0;
    if (total > 0) {
      for (std::size_t i = 0; i < s.cum_sq.size(); ++i) {
        const double dev = s.cum_sq[i] / total - static_cast<double>(i + 1) / n;
        if (std::abs(dev) > best) {
          best = std::abs(dev);
          best_dev = dev;
          best_i = i;
        }
      }
    }
    ev.statistic = best;
    if (best > c0_) {
      if (!s.alarm_active) {
        ev.raised = true;
        ev.direction = best_dev > 0 ? Direction::kUp : Direction::kDown;
        const std::size_t onset = std::min(best_i + 1, s.seq.size() - 1);
        ev.onset_seq = static_cast<std::int64_t>(s.seq[onset]);
        ev.onset_time = s.time[onset];
        s.alarm_active = true;
        s.holdoff_left = options_.holdoff;
      }
    } else if (s.alarm_active) {
      ev.cleared = true;
      s.alarm_active = false;
    }
    s.j = 0;
    s.cum_sq.clear();
    s.seq.clear();
    s.time.clear();
  }
  if (event) *event = ev;
  return Status::Ok();
}

Status RecursiveCusumSquares::Restore(const State& s) {
  if (!IsCount(s.j) || s.j >= options_.horizon)
    return BadState("recursive_cusum_sq j out of range");
  const auto n = static_cast<std::size_t>(s.j);
  if (s.cum_sq.size() != n || s.seq.size() != n || s.time.size() != n)
    return BadState("recursive_cusum_sq block arrays do not match j");
  double prev = 0;
  for (double v : s.cum_sq) {
    if (!std::isfinite(v) || v < prev)
      return BadState("recursive_cusum_sq sums must be finite and non-decreasing");
    prev = v;
  }
  if (!IsCount(s.holdoff_left) || s.holdoff_left > options_.holdoff)
    return BadState("recursive_cusum_sq holdoff_left out of range");
  // Copy into the reserved storage so Update() keeps not allocating.
  state_.j = s.j;
  state_.cum_sq.assign(s.cum_sq.begin(), s.cum_sq.end());
  state_.seq.assign(s.seq.begin(), s.seq.end());
  state_.time.assign(s.time.begin(), s.time.end());
  state_.alarm_active = s.alarm_active;
  state_.holdoff_left = s.holdoff_left;
  return Status::Ok();
}

}  // namespace bayline::est
