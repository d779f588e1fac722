#include "estimators/detect/exact_scores.h"

#include <cassert>
#include <cmath>
#include <limits>
#include <string>

#include "estimators/core/special_functions.h"
#include "estimators/detect/score_tails.h"
#include "estimators/ml/gamma_shape.h"

namespace bayline::est {
namespace {

bool IsWhole(double v) { return std::isfinite(v) && v >= 0.0 && v == std::floor(v); }
bool IsIndex(double v) { return IsWhole(v) && v < ExactScoreStandardizer::kMaxInteger; }

Status Domain(const std::string& why) { return Status::Error(ErrorCode::kOutOfDomain, why); }

bool IsCountFamily(ScoreFamily f) {
  return f == ScoreFamily::kPoisson || f == ScoreFamily::kBinomial || f == ScoreFamily::kLogistic ||
         f == ScoreFamily::kPoissonRegression;
}
bool UsesTrials(ScoreFamily f) {
  return f == ScoreFamily::kBinomial || f == ScoreFamily::kLogistic;
}
bool UsesExposure(ScoreFamily f) { return f == ScoreFamily::kPoisson; }

// The conditional maximum-likelihood gamma shape of n1 observations given their ratios to their
// sum (Dirichlet(k, ..., k) likelihood, free of the rate): the root of
//   psi(n1 k) - psi(k) - log n1 = G(k) - G(n1 k) = spread,   G(k) = log k - psi(k),
// spread = log(mean y) - mean(log y) > 0. The left side falls from +inf (k -> 0) to 0 (k -> inf).
// Newton in log k inside a bracket kept from the signs, bisection (in log k) when a step leaves it;
// at most 200 steps. NaN when spread is not finite and > 0.
double ConditionalShape(double spread, double n1) {
  if (!(spread > 0.0) || !std::isfinite(spread) || !(n1 >= 2.0)) return kNaN;
  const double log_n1 = std::log(n1);
  double k =
      spread < log_n1 ? (n1 - 1.0) / (2.0 * n1 * spread) : (n1 - 1.0) / (n1 * (spread + log_n1));
  double lo = 0.0, hi = std::numeric_limits<double>::infinity();
  for (int it = 0; it < 200; ++it) {
    const double h = gamma_shape::G(k) - gamma_shape::G(n1 * k) - spread;
    if (h == 0.0) return k;
    if (h > 0.0)
      lo = k;
    else
      hi = k;
    const double slope = k * gamma_shape::GPrime(k) - n1 * k * gamma_shape::GPrime(n1 * k);
    double next = k * std::exp(-h / slope);
    if (!(next > lo && next < hi) || !std::isfinite(next)) {
      if (std::isinf(hi))
        next = 2.0 * k;
      else if (lo == 0.0)
        next = 0.5 * k;
      else
        next = std::sqrt(lo * hi);
    }
    if (std::fabs(next - k) <= 1e-10 * k) return next;
    k = next;
  }
  return k;
}

// Tails of r = y_n / T_n under the posterior predictive over the gamma shape k: Beta(k, n1 k) mixed
// over the posterior of k from the conditional (Dirichlet) likelihood of the n1 earlier ratios,
//   log L(k) = log Gamma(n1 k) - n1 log Gamma(k) - (k - 1) n1 (spread + log n1),
// with the scale-free prior dk / k (flat in t = log k; the posterior is proper for n1 >= 2). The
// integral over t is a trapezoid rule on kShapeNodes nodes over [mode - 10 s, mode + 6 s], s the
// Laplace scale at the mode (the conditional ML shape); the left tail, ~ e^{(n1 - 1) t}, is the
// heavier one.
constexpr int kShapeNodes = 64;
constexpr double kPredictiveShapeUpTo = 500.0;  // n1 up to which the shape is integrated out

PointTails PredictiveRatioTails(double r, double rc, double spread, double n1, double mode) {
  const double log_n1 = std::log(n1);
  const auto log_lik = [&](double k) {
    return special::LogGamma(n1 * k) - n1 * special::LogGamma(k) -
           (k - 1.0) * n1 * (spread + log_n1);
  };
  const double curvature =
      mode * mode * (n1 * n1 * special::Trigamma(n1 * mode) - n1 * special::Trigamma(mode));
  if (!(curvature < 0.0) || !std::isfinite(curvature)) return {kNaN, kNaN, kNaN};
  const double scale = 1.0 / std::sqrt(-curvature);
  const double t_mode = std::log(mode), top = log_lik(mode);
  double weight_sum = 0.0, below = 0.0, above = 0.0;
  for (int j = 0; j < kShapeNodes; ++j) {
    const double t = t_mode + scale * (-10.0 + 16.0 * j / (kShapeNodes - 1.0));
    const double k = std::exp(t);
    const double w = std::exp(log_lik(k) - top) * (j == 0 || j == kShapeNodes - 1 ? 0.5 : 1.0);
    const PointTails tails = BetaTails(r, rc, k, n1 * k);
    if (!std::isfinite(w) || std::isnan(tails.below)) return {kNaN, kNaN, kNaN};
    weight_sum += w;
    below += w * tails.below;
    above += w * tails.above;
  }
  return {below / weight_sum, 0.0, above / weight_sum};
}

}  // namespace

Status ExactScoreOptions::Validate() const {
  if (!known) return Status::Ok();
  const bool positive_mean = mean > 0.0 && std::isfinite(mean);
  if (family == ScoreFamily::kBinomial && !(positive_mean && mean < 1.0))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "binomial target_mean (the in-control probability) must be in (0, 1)");
  if (!positive_mean)
    return Status::Error(ErrorCode::kInvalidConfig, "target_mean must be finite and > 0");
  if (family == ScoreFamily::kGamma && !(sd > 0.0 && std::isfinite(sd)))
    return Status::Error(ErrorCode::kInvalidConfig, "gamma target_sd must be finite and > 0");
  return Status::Ok();
}

void ExactScoreStandardizer::State::Pack(StateWriter& w) const {
  w.Put(count);
  w.Put(sum_y);
  w.Put(sum_aux);
  w.Put(seed);
  w.Put(draws);
}

Status ExactScoreStandardizer::State::Unpack(StateReader& r) {
  r.Get(count) && r.Get(sum_y) && r.Get(sum_aux) && r.Get(seed) && r.Get(draws);
  if (Status s = r.status(false); !s.ok()) return s;
  return Validate(*this);
}

Status ExactScoreStandardizer::Validate(const State& s) {
  if (!IsIndex(s.count) || !IsIndex(s.seed) || !IsIndex(s.draws) || !std::isfinite(s.sum_y) ||
      !(s.sum_y >= 0.0) || !std::isfinite(s.sum_aux))
    return Status::Error(ErrorCode::kInvalidState, "exact-score state holds invalid values");
  return Status::Ok();
}

Status ExactScoreStandardizer::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

ExactScoreStandardizer::ExactScoreStandardizer(const ExactScoreOptions& options, uint64_t seed)
    : options_(options) {
  assert(options_.Validate().ok());
  state_.seed = static_cast<double>(seed & ((uint64_t{1} << 53) - 1));
}

Status ExactScoreStandardizer::CheckSample(const Sample& s) const {
  const ScoreFamily f = options_.family;
  if (!std::isfinite(s.y)) return Domain("y is not finite: " + std::to_string(s.y));
  if (IsCountFamily(f) && !IsWhole(s.y))
    return Domain("count y must be a whole number >= 0, got " + std::to_string(s.y));
  if (UsesTrials(f)) {
    if (!IsWhole(s.trials))
      return Domain("trials must be a whole number >= 0, got " + std::to_string(s.trials));
    if (s.y > s.trials)
      return Domain("y = " + std::to_string(s.y) + " exceeds trials " + std::to_string(s.trials));
  }
  if ((UsesExposure(f) || f == ScoreFamily::kPoissonRegression) &&
      !(s.exposure > 0.0 && std::isfinite(s.exposure)))
    return Domain("exposure must be finite and > 0, got " + std::to_string(s.exposure));
  if ((f == ScoreFamily::kExponential || f == ScoreFamily::kGamma) && !(s.y > 0.0))
    return Domain("y must be > 0, got " + std::to_string(s.y));
  return Status::Ok();
}

double ExactScoreStandardizer::NextUniform(State* next) const {
  const double v =
      CounterUniform(static_cast<uint64_t>(next->seed), static_cast<uint64_t>(next->draws));
  next->draws += 1.0;
  return v;
}

double ExactScoreStandardizer::KnownScore(const Sample& s, State* next) const {
  const double mean = options_.mean;
  switch (options_.family) {
    case ScoreFamily::kPoisson:
      return RandomizedNormalScore(PoissonTails(s.y, mean * s.exposure), NextUniform(next));
    case ScoreFamily::kBinomial:
      return RandomizedNormalScore(BinomialTails(s.y, s.trials, mean, 1.0 - mean),
                                   NextUniform(next));
    case ScoreFamily::kExponential:
      return RandomizedNormalScore(GammaTails(s.y, 1.0, 1.0 / mean), 0.5);
    case ScoreFamily::kGamma: {
      const double shape = (mean / options_.sd) * (mean / options_.sd);
      return RandomizedNormalScore(GammaTails(s.y, shape, shape / mean), 0.5);
    }
    default:
      return kNaN;
  }
}

double ExactScoreStandardizer::SelfStartingScore(const Sample& s, State* next) const {
  const double n = next->count;  // including this observation
  const double y = s.y;
  switch (options_.family) {
    case ScoreFamily::kPoisson: {
      if (n < 2.0) return kNaN;
      const double total = next->sum_aux;
      const double p = s.exposure / total, q = (total - s.exposure) / total;
      return RandomizedNormalScore(BinomialTails(y, next->sum_y, p, q), NextUniform(next));
    }
    case ScoreFamily::kBinomial:
      if (n < 2.0) return kNaN;
      return RandomizedNormalScore(HypergeometricTails(y, next->sum_aux, next->sum_y, s.trials),
                                   NextUniform(next));
    case ScoreFamily::kExponential: {
      if (n < 2.0) return kNaN;
      // log(1 - y / T_n) = log1p(-y / T_n); upper tail (1 - y / T_n)^(n - 1).
      const double log_upper = (n - 1.0) * std::log1p(-y / next->sum_y);
      return RandomizedNormalScore({-std::expm1(log_upper), 0.0, std::exp(log_upper)}, 0.5);
    }
    case ScoreFamily::kGamma: {
      const double n1 = n - 1.0;  // earlier observations
      if (n1 < 2.0) return kNaN;
      const double earlier_sum = next->sum_y - y;
      const double earlier_log = next->sum_aux - std::log(y);
      const double spread = std::log(earlier_sum / n1) - earlier_log / n1;
      if (!(spread > 0.0) || !std::isfinite(spread)) return kNaN;  // all equal so far
      const double shape = ConditionalShape(spread, n1);
      if (!(shape > 0.0) || !std::isfinite(shape)) return kNaN;
      const double r = y / next->sum_y, rc = earlier_sum / next->sum_y;
      if (n1 <= kPredictiveShapeUpTo)
        return RandomizedNormalScore(PredictiveRatioTails(r, rc, spread, n1, shape), 0.5);
      return RandomizedNormalScore(BetaTails(r, rc, shape, n1 * shape), 0.5);
    }
    default:
      return kNaN;
  }
}

Status ExactScoreStandardizer::Update(const Sample& s, double predicted_mean, double* z) {
  if (Status c = CheckSample(s); !c.ok()) return c;
  const ScoreFamily f = options_.family;
  State next = state_;
  double out = kNaN;
  if (f == ScoreFamily::kLogistic) {
    const double p = predicted_mean / s.trials;
    if (s.trials > 0.0 && p >= 0.0 && p <= 1.0)
      out = RandomizedNormalScore(BinomialTails(s.y, s.trials, p, 1.0 - p), NextUniform(&next));
  } else if (f == ScoreFamily::kPoissonRegression) {
    if (predicted_mean >= 0.0 && std::isfinite(predicted_mean))
      out = RandomizedNormalScore(PoissonTails(s.y, predicted_mean), NextUniform(&next));
  } else if (options_.known) {
    out = KnownScore(s, &next);
  } else {
    next.count += 1.0;
    next.sum_y += s.y;
    if (f == ScoreFamily::kPoisson) next.sum_aux += s.exposure;
    if (f == ScoreFamily::kBinomial) next.sum_aux += s.trials;
    if (f == ScoreFamily::kGamma) next.sum_aux += std::log(s.y);
    const bool too_many =
        (f == ScoreFamily::kPoisson || f == ScoreFamily::kBinomial) &&
        (next.sum_y >= kMaxInteger || (f == ScoreFamily::kBinomial && next.sum_aux >= kMaxInteger));
    if (too_many || !std::isfinite(next.sum_y) || !std::isfinite(next.sum_aux))
      return Status::Error(ErrorCode::kNumericalFailure, "exact-score sums overflow");
    out = SelfStartingScore(s, &next);
  }
  if (Status v = Validate(next); !v.ok())
    return Status::Error(ErrorCode::kNumericalFailure,
                         "update would leave an invalid state: " + v.message());
  state_ = next;
  if (z != nullptr) *z = out;
  return Status::Ok();
}

}  // namespace bayline::est
