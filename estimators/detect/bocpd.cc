#include "estimators/detect/bocpd.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <numbers>
#include <string>

#include "estimators/core/special_functions.h"

namespace bayline::est {

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

Status Bad(const std::string& what) { return Status::Error(ErrorCode::kInvalidConfig, what); }
bool PositiveFinite(double v) { return v > 0 && std::isfinite(v); }
bool IsInteger(double v) { return std::isfinite(v) && v == std::floor(v); }

using Stats = std::array<double, 4>;

// log Gamma(a + y) - log Gamma(a): a product for small integer y (the usual count), else LogGamma.
double LogRising(double a, double y) {
  if (y <= 16 && a < 1e12) {  // no overflow: (1e12 + 16)^16 < 1e200
    double prod = 1;
    for (int i = 0; i < static_cast<int>(y); ++i) prod *= a + i;
    return std::log(prod);
  }
  return special::LogGamma(a + y) - special::LogGamma(a);
}

// Terms of the predictive that do not depend on the run, computed once per observation.
struct Shared {
  double log_count_factor = 0;  // -log y! (poisson) or log C(n, y) (binomial)
  double log_e = 0;             // log exposure
};

Shared MakeShared(BocpdModel model, const Sample& s) {
  Shared sh;
  if (model == BocpdModel::kGammaPoisson) {
    sh.log_count_factor = -special::LogGamma(s.y + 1);
    sh.log_e = std::log(s.exposure);
  } else if (model == BocpdModel::kBetaBinomial) {
    sh.log_count_factor = special::LogGamma(s.trials + 1) - special::LogGamma(s.y + 1) -
                          special::LogGamma(s.trials - s.y + 1);
  }
  return sh;
}

// Log predictive density / mass of y under a run with posterior parameters `p`. `half_gamma` is
// log Gamma(a + 1/2) - log Gamma(a) for the normal-gamma shape a (unused otherwise).
double LogPredictive(BocpdModel model, const Stats& p, const Sample& s, const Shared& sh,
                     double half_gamma) {
  switch (model) {
    case BocpdModel::kNormalGamma: {
      const double mu = p[0], kappa = p[1], a = p[2], b = p[3];
      const double dof = 2 * a;
      const double scale2 = b * (kappa + 1) / (a * kappa);
      const double z2 = (s.y - mu) * (s.y - mu) / scale2;
      return half_gamma - 0.5 * std::log(dof * std::numbers::pi * scale2) -
             (a + 0.5) * std::log1p(z2 / dof);
    }
    case BocpdModel::kGammaPoisson: {
      const double a = p[0], b = p[1], y = s.y;
      const double log_be = std::log(b + s.exposure);
      return LogRising(a, y) + sh.log_count_factor + a * (std::log(b) - log_be) +
             (y > 0 ? y * (sh.log_e - log_be) : 0.0);
    }
    case BocpdModel::kBetaBinomial: {
      const double a = p[0], b = p[1], n = s.trials, y = s.y;
      // B(a + y, b + n - y) / B(a, b) = (a)_y (b)_{n-y} / (a + b)_n with rising factorials.
      return sh.log_count_factor + LogRising(a, y) + LogRising(b, n - y) - LogRising(a + b, n);
    }
  }
  return kNaN;
}

double HalfGamma(double a) { return special::LogGamma(a + 0.5) - special::LogGamma(a); }

Stats Absorb(BocpdModel model, const Stats& p, const Sample& s) {
  switch (model) {
    case BocpdModel::kNormalGamma: {
      const double mu = p[0], kappa = p[1], a = p[2], b = p[3], d = s.y - mu;
      return {(kappa * mu + s.y) / (kappa + 1), kappa + 1, a + 0.5,
              b + kappa * d * d / (2 * (kappa + 1))};
    }
    case BocpdModel::kGammaPoisson:
      return {p[0] + s.y, p[1] + s.exposure, 0, 0};
    case BocpdModel::kBetaBinomial:
      return {p[0] + s.y, p[1] + s.trials - s.y, 0, 0};
  }
  return p;
}

// Posterior mean of the watched parameter (mean, rate or probability).
double ParameterMean(BocpdModel model, const Stats& p) {
  switch (model) {
    case BocpdModel::kNormalGamma:
      return p[0];
    case BocpdModel::kGammaPoisson:
      return p[0] / p[1];
    case BocpdModel::kBetaBinomial:
      return p[0] / (p[0] + p[1]);
  }
  return kNaN;
}

bool StatsValid(BocpdModel model, const Stats& p) {
  for (double v : p)
    if (!std::isfinite(v)) return false;
  switch (model) {
    case BocpdModel::kNormalGamma:
      return p[1] > 0 && p[2] > 0 && p[3] > 0;
    case BocpdModel::kGammaPoisson:
    case BocpdModel::kBetaBinomial:
      return p[0] > 0 && p[1] > 0;
  }
  return false;
}

Status CheckDomain(BocpdModel model, const Sample& s) {
  if (Status c = CheckCommonFields(s, 0); !c.ok()) return c;
  if (s.weight != 1.0) {
    return Status::Error(
        ErrorCode::kInvalidWeight,
        "bocpd takes unweighted observations, weight is " + std::to_string(s.weight));
  }
  switch (model) {
    case BocpdModel::kNormalGamma:
      break;
    case BocpdModel::kGammaPoisson:
      if (!(s.y >= 0) || !IsInteger(s.y))
        return Status::Error(ErrorCode::kOutOfDomain,
                             "count must be an integer >= 0, got " + std::to_string(s.y));
      if (!(s.exposure > 0))
        return Status::Error(ErrorCode::kOutOfDomain,
                             "exposure must be > 0, got " + std::to_string(s.exposure));
      break;
    case BocpdModel::kBetaBinomial:
      if (!IsInteger(s.trials) || !(s.trials >= 1))
        return Status::Error(ErrorCode::kOutOfDomain,
                             "trials must be an integer >= 1, got " + std::to_string(s.trials));
      if (!IsInteger(s.y) || !(s.y >= 0) || !(s.y <= s.trials))
        return Status::Error(
            ErrorCode::kOutOfDomain,
            "successes must be an integer in [0, trials], got " + std::to_string(s.y));
      break;
  }
  return Status::Ok();
}

}  // namespace

Status Bocpd::Options::Validate() const {
  if (static_cast<int>(model) > 2) return Bad("bocpd model unknown");
  if (!std::isfinite(prior_mean)) return Bad("bocpd prior_mean must be finite");
  if (!PositiveFinite(prior_kappa)) return Bad("bocpd prior_kappa must be > 0 and finite");
  if (!PositiveFinite(prior_shape)) return Bad("bocpd prior_shape must be > 0 and finite");
  if (!PositiveFinite(prior_rate)) return Bad("bocpd prior_rate must be > 0 and finite");
  if (!PositiveFinite(prior_alpha)) return Bad("bocpd prior_alpha must be > 0 and finite");
  if (!PositiveFinite(prior_beta)) return Bad("bocpd prior_beta must be > 0 and finite");
  if (!(hazard > 0 && hazard < 1)) return Bad("bocpd hazard must be in (0, 1)");
  if (!(prune_epsilon >= 0 && prune_epsilon < 1))
    return Bad("bocpd prune_epsilon must be in [0, 1)");
  if (max_run_lengths < 2) return Bad("bocpd max_run_lengths must be >= 2");
  if (window < 1) return Bad("bocpd window must be >= 1");
  if (!(threshold > 0 && threshold <= 1)) return Bad("bocpd threshold must be in (0, 1]");
  if (holdoff < 0) return Bad("bocpd holdoff must be >= 0");
  return Status::Ok();
}

void Bocpd::State::Pack(StateWriter& w) const {
  w.Put(count);
  w.Put(origin_start);
  w.Put(alarm_active);
  w.Put(holdoff_left);
  w.Put(discarded_mass);
  w.Put(static_cast<double>(runs.size()));
  for (const Run& r : runs) {
    w.Put(r.length);
    w.Put(r.log_mass);
    w.Put(r.start_seq);
    w.Put(r.start_time);
    for (double v : r.stats) w.Put(v);
  }
}

Status Bocpd::State::Unpack(StateReader& r) {
  State s;
  double n = 0;
  r.Get(s.count);
  r.Get(s.origin_start);
  r.Get(s.alarm_active);
  r.Get(s.holdoff_left);
  r.Get(s.discarded_mass);
  r.Get(n);
  if (!r.status(false).ok()) return r.status(false);
  // 8 values per run: reject an impossible count before allocating for it.
  if (!(n >= 0) || !IsInteger(n) || n > 1e7) {
    r.Fail("bocpd run count invalid");
    return r.status();
  }
  s.runs.resize(static_cast<std::size_t>(n));
  for (Run& run : s.runs) {
    r.Get(run.length);
    r.Get(run.log_mass);
    r.Get(run.start_seq);
    r.Get(run.start_time);
    for (double& v : run.stats) r.Get(v);
  }
  if (Status st = r.status(); !st.ok()) return st;
  *this = std::move(s);
  return Status::Ok();
}

Bocpd::Bocpd(const Options& options) : options_(options) {
  assert(options_.Validate().ok());
  const auto cap = static_cast<std::size_t>(options_.max_run_lengths) + 1;
  state_.runs.reserve(cap);
  scratch_.reserve(cap);
  if (options_.model == BocpdModel::kNormalGamma) {
    // half_gamma_[k] for the shape after k observations, a0 + k / 2.
    half_gamma_.resize(cap + 1);
    for (std::size_t k = 0; k <= cap; ++k)
      half_gamma_[k] = HalfGamma(options_.prior_shape + 0.5 * k);
  }
}

Bocpd::Bocpd(const Bocpd& other) : options_(other.options_), half_gamma_(other.half_gamma_) {
  const auto cap = static_cast<std::size_t>(options_.max_run_lengths) + 1;
  state_.runs.reserve(cap);
  scratch_.reserve(cap);
  state_.count = other.state_.count;
  state_.origin_start = other.state_.origin_start;
  state_.alarm_active = other.state_.alarm_active;
  state_.holdoff_left = other.state_.holdoff_left;
  state_.discarded_mass = other.state_.discarded_mass;
  state_.runs.assign(other.state_.runs.begin(), other.state_.runs.end());
}

Bocpd& Bocpd::operator=(const Bocpd& other) {
  if (this != &other) {
    Bocpd copy(other);
    *this = std::move(copy);
  }
  return *this;
}

Status Bocpd::Update(const Sample& s, const ObservationMark& mark, DetectorEvent* event) {
  if (Status st = CheckDomain(options_.model, s); !st.ok()) return st;
  double log_norm = 0;
  Stats fresh_stats{};
  if (Status st = ScoreRuns(s, &log_norm, &fresh_stats); !st.ok()) return st;
  GrowRuns(s, mark, log_norm, fresh_stats);
  PruneRuns();
  const DetectorEvent ev = AdvanceAlarm();
  if (event) *event = ev;
  return Status::Ok();
}

Bocpd::Stats Bocpd::PriorStats() const {
  switch (options_.model) {
    case BocpdModel::kNormalGamma:
      return {options_.prior_mean, options_.prior_kappa, options_.prior_shape, options_.prior_rate};
    case BocpdModel::kGammaPoisson:
      return {options_.prior_shape, options_.prior_rate, 0, 0};
    case BocpdModel::kBetaBinomial:
      break;
  }
  return {options_.prior_alpha, options_.prior_beta, 0, 0};
}

Status Bocpd::ScoreRuns(const Sample& s, double* log_norm, Stats* fresh_stats) {
  const BocpdModel model = options_.model;
  const std::vector<Run>& runs = state_.runs;
  const std::size_t old_size = runs.size();
  const Stats prior = PriorStats();
  // scratch_[i] for the growth of runs[i], scratch_[old_size] for the change.
  const double log_h = std::log(options_.hazard), log_1mh = std::log1p(-options_.hazard);
  const Shared sh = MakeShared(model, s);
  const bool ng = model == BocpdModel::kNormalGamma;
  const double log_prior_pred = LogPredictive(model, prior, s, sh, ng ? half_gamma_[0] : 0.0);
  scratch_.resize(old_size + 1);
  double max_lm = -kInf;
  for (std::size_t i = 0; i < old_size; ++i) {
    double hg = 0;
    if (ng) {
      // Shape a = a0 + (r + 1) / 2 depends only on the run length r: tabulated up to the cap.
      const auto r = static_cast<std::size_t>(runs[i].length);
      hg = r + 1 < half_gamma_.size() ? half_gamma_[r + 1] : HalfGamma(runs[i].stats[2]);
    }
    scratch_[i] = runs[i].log_mass + log_1mh + LogPredictive(model, runs[i].stats, s, sh, hg);
    max_lm = std::max(max_lm, scratch_[i]);
  }
  // sum_r P(r_{t-1} = r | x_{1:t-1}) = 1 (masses are normalised), so the change term is H pi(0).
  scratch_[old_size] = (old_size == 0 ? 0.0 : log_h) + log_prior_pred;
  max_lm = std::max(max_lm, scratch_[old_size]);
  if (!std::isfinite(max_lm)) {
    return Status::Error(ErrorCode::kNumericalFailure,
                         "bocpd predictive is not finite for y = " + std::to_string(s.y));
  }
  double total = 0;
  for (std::size_t i = 0; i <= old_size; ++i) {
    if (std::isnan(scratch_[i])) {
      return Status::Error(ErrorCode::kNumericalFailure,
                           "bocpd predictive is NaN for y = " + std::to_string(s.y));
    }
    total += std::exp(scratch_[i] - max_lm);
  }
  const Stats new_prior_stats = Absorb(model, prior, s);
  if (!StatsValid(model, new_prior_stats)) {
    return Status::Error(ErrorCode::kNumericalFailure, "bocpd posterior is not finite");
  }
  for (std::size_t i = 0; i < old_size; ++i) {
    if (!StatsValid(model, Absorb(model, runs[i].stats, s))) {
      return Status::Error(ErrorCode::kNumericalFailure, "bocpd posterior is not finite");
    }
  }
  *log_norm = max_lm + std::log(total);
  *fresh_stats = new_prior_stats;
  return Status::Ok();
}

void Bocpd::GrowRuns(const Sample& s, const ObservationMark& mark, double log_norm,
                     const Stats& fresh_stats) {
  std::vector<Run>& runs = state_.runs;
  const std::size_t old_size = runs.size();
  for (std::size_t i = 0; i < old_size; ++i) {
    Run& r = runs[i];
    r.length += 1;
    r.log_mass = scratch_[i] - log_norm;
    r.stats = Absorb(options_.model, r.stats, s);
  }
  Run fresh;
  fresh.length = 0;
  fresh.log_mass = scratch_[old_size] - log_norm;
  fresh.start_seq = static_cast<double>(mark.seq);
  fresh.start_time = mark.time;
  fresh.stats = fresh_stats;
  runs.push_back(fresh);  // within the reserved capacity
  state_.count += 1;
}

void Bocpd::PruneRuns() {
  std::vector<Run>& runs = state_.runs;
  std::size_t map = 0;
  for (std::size_t i = 1; i < runs.size(); ++i)
    if (runs[i].log_mass > runs[map].log_mass) map = i;
  double dropped = 0;
  const double log_eps = options_.prune_epsilon > 0 ? std::log(options_.prune_epsilon) : -kInf;
  std::size_t keep = 0;
  for (std::size_t i = 0; i < runs.size(); ++i) {
    if (i != map && runs[i].log_mass < log_eps) {
      dropped += std::exp(runs[i].log_mass);
      continue;
    }
    runs[keep++] = runs[i];
  }
  runs.resize(keep);
  const auto cap = static_cast<std::size_t>(options_.max_run_lengths);
  if (runs.size() > cap) {
    // The cap-th largest log mass; keep strictly larger ones plus enough ties.
    scratch_.resize(runs.size());
    for (std::size_t i = 0; i < runs.size(); ++i) scratch_[i] = runs[i].log_mass;
    std::nth_element(scratch_.begin(), scratch_.begin() + (cap - 1), scratch_.end(),
                     std::greater<>());
    const double cut = scratch_[cap - 1];
    std::size_t above = 0;
    for (const Run& r : runs) above += r.log_mass > cut;
    std::size_t ties_left = cap - above;
    keep = 0;
    for (std::size_t i = 0; i < runs.size(); ++i) {
      const bool take = runs[i].log_mass > cut || (runs[i].log_mass == cut && ties_left > 0);
      if (runs[i].log_mass == cut && take) --ties_left;
      if (!take) {
        dropped += std::exp(runs[i].log_mass);
        continue;
      }
      runs[keep++] = runs[i];
    }
    runs.resize(keep);
  }
  if (dropped > 0) {
    const double log_kept = std::log1p(-std::min(dropped, 1.0 - 1e-300));
    for (Run& r : runs) r.log_mass -= log_kept;
    state_.discarded_mass += dropped;
  }
}

DetectorEvent Bocpd::AdvanceAlarm() {
  std::vector<Run>& runs = state_.runs;
  const double m = options_.window;
  const double current = state_.count - 1;  // absolute index of this observation
  double stat = 0;
  std::size_t best_recent = runs.size(), best_old = runs.size();
  for (std::size_t i = 0; i < runs.size(); ++i) {
    const Run& r = runs[i];
    const bool origin = current - r.length == state_.origin_start;
    if (r.length < m && !origin) {
      stat += std::exp(r.log_mass);
      if (best_recent == runs.size() || r.log_mass > runs[best_recent].log_mass) best_recent = i;
    } else if (r.length >= m) {
      if (best_old == runs.size() || r.log_mass > runs[best_old].log_mass) best_old = i;
    }
  }
  DetectorEvent ev;
  ev.statistic = std::min(stat, 1.0);
  ev.threshold = options_.threshold;
  ev.direction = Direction::kBoth;
  if (state_.holdoff_left > 0) {
    state_.holdoff_left -= 1;
  } else if (state_.alarm_active) {
    if (ev.statistic < options_.threshold) {
      ev.cleared = true;
      state_.alarm_active = false;
    }
  } else if (ev.statistic >= options_.threshold && best_recent < runs.size()) {
    const Run chosen = runs[best_recent];
    ev.raised = true;
    ev.onset_seq = static_cast<std::int64_t>(chosen.start_seq);
    ev.onset_time = chosen.start_time;
    if (best_old < runs.size()) {
      const double after = ParameterMean(options_.model, chosen.stats);
      const double before = ParameterMean(options_.model, runs[best_old].stats);
      ev.shift = after - before;
      ev.direction = after > before ? Direction::kUp : Direction::kDown;
    }
    // Restart from the prior, as at the first observation: in-control alarms then form a renewal
    // process, so the ARL after re-arming is the calibrated one (collapsing onto the MAP change
    // point instead kept a segment fitted to the alarming observations and halved it).
    runs.clear();
    state_.count = 0;
    state_.origin_start = 0;
    state_.alarm_active = true;
    state_.holdoff_left = options_.holdoff;
    // ev.statistic stays the value that crossed the threshold (the restart resets it for the
    // next observation).
  }
  return ev;
}

std::int64_t Bocpd::map_run_length() const {
  if (state_.runs.empty()) return -1;
  std::size_t map = 0;
  for (std::size_t i = 1; i < state_.runs.size(); ++i)
    if (state_.runs[i].log_mass > state_.runs[map].log_mass) map = i;
  return static_cast<std::int64_t>(state_.runs[map].length);
}

double Bocpd::RunLengthProbability(std::int64_t r) const {
  for (const Run& run : state_.runs)
    if (run.length == static_cast<double>(r)) return std::exp(run.log_mass);
  return 0.0;
}

Status Bocpd::Restore(const State& s) {
  auto bad = [](const std::string& why) {
    return Status::Error(ErrorCode::kInvalidState, "bocpd " + why);
  };
  if (!(s.count >= 0) || !IsInteger(s.count)) return bad("count invalid");
  if (!IsInteger(s.origin_start) || s.origin_start < 0 || s.origin_start > s.count)
    return bad("origin invalid");
  if (!(s.holdoff_left >= 0 && s.holdoff_left <= options_.holdoff) || !IsInteger(s.holdoff_left))
    return bad("holdoff_left invalid");
  if (!(s.discarded_mass >= 0) || !std::isfinite(s.discarded_mass))
    return bad("discarded_mass invalid");
  if (s.runs.size() > static_cast<std::size_t>(options_.max_run_lengths))
    return bad("more runs than the cap");
  if ((s.count == 0) != s.runs.empty()) return bad("runs do not match count");
  double prev = kInf, total = 0;
  for (const Run& r : s.runs) {
    if (!IsInteger(r.length) || r.length < 0 || !(r.length < prev) || r.length >= s.count)
      return bad("run lengths must be distinct, decreasing and < count");
    prev = r.length;
    if (!(r.log_mass <= 1e-12) || std::isnan(r.log_mass)) return bad("run log mass invalid");
    if (!StatsValid(options_.model, r.stats)) return bad("run statistics invalid");
    if (options_.model == BocpdModel::kNormalGamma) {
      // kappa and a are fixed by the run length (the tabulated predictive relies on it).
      const double k = r.length + 1;
      if (std::abs(r.stats[1] - (options_.prior_kappa + k)) > 1e-9 * (options_.prior_kappa + k) ||
          std::abs(r.stats[2] - (options_.prior_shape + 0.5 * k)) >
              1e-9 * (options_.prior_shape + k))
        return bad("normal-gamma run statistics do not match the run length");
    }
    if (std::isinf(r.start_time) || !std::isfinite(r.start_seq)) return bad("run mark invalid");
    total += std::exp(r.log_mass);
  }
  if (!s.runs.empty() && std::abs(total - 1) > 1e-6) return bad("run masses do not sum to 1");
  state_.runs.clear();  // keeps the reserved capacity
  state_.runs.insert(state_.runs.end(), s.runs.begin(), s.runs.end());
  state_.count = s.count;
  state_.origin_start = s.origin_start;
  state_.alarm_active = s.alarm_active;
  state_.holdoff_left = s.holdoff_left;
  state_.discarded_mass = s.discarded_mass;
  return Status::Ok();
}

}  // namespace bayline::est
