#include "estimators/ml/binomial_ml.h"

#include <cmath>
#include <string>

#include "estimators/ml/scalar_ml_impl.h"

namespace bayline::est {
namespace {

// log C(n, y) for whole 0 <= y <= n.
double LogChoose(double n, double y) {
  if (y == 0 || y == n) return 0.0;
  return ml_internal::LogFactorial(n) - ml_internal::LogFactorial(y) -
         ml_internal::LogFactorial(n - y);
}

}  // namespace

Status BinomialFamily::Stats::Check(const State& s) {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(s.sum_y) || !std::isfinite(s.sum_trials) || !std::isfinite(s.log_const)) {
    return bad("binomial state has a non-finite value");
  }
  if (s.sum_y < 0 || s.log_const < 0) return bad("binomial state has a negative sum");
  if (s.sum_y > s.sum_trials * (1.0 + 1e-12)) return bad("binomial state: successes exceed trials");
  if ((s.sum_trials == 0) != (s.count == 0)) return bad("binomial state: sums and count disagree");
  return Status::Ok();
}

double BinomialFamily::Probability(const State& st) {
  if (!(st.sum_trials > 0)) return kNaN;
  return std::fmin(1.0, st.sum_y / st.sum_trials);
}

double BinomialFamily::LogLikelihood(const State& st) {
  const double p = Probability(st);
  if (std::isnan(p)) return kNaN;
  const double fails = std::fmax(0.0, st.sum_trials - st.sum_y);
  double l = st.log_const;
  if (st.sum_y > 0) l += st.sum_y * std::log(p);
  if (fails > 0) l += fails * std::log1p(-p);
  return l;
}

Status BinomialFamily::CheckSample(const Sample& s) {
  if (!(s.trials >= 1) || !ml_internal::IsWholeNumber(s.trials)) {
    return Status::Error(ErrorCode::kOutOfDomain,
                         "trials must be a whole number >= 1, got " + std::to_string(s.trials));
  }
  if (!(s.y >= 0) || !ml_internal::IsWholeNumber(s.y)) {
    return Status::Error(ErrorCode::kOutOfDomain,
                         "successes must be a whole number >= 0, got " + std::to_string(s.y));
  }
  if (s.y > s.trials) {
    return Status::Error(ErrorCode::kOutOfDomain, "successes " + std::to_string(s.y) +
                                                      " exceed trials " + std::to_string(s.trials));
  }
  return Status::Ok();
}

void BinomialFamily::Predictive(const State& st, const Sample& s, Innovation* out) {
  const double p = Probability(st);
  if (!(p > 0 && p < 1)) return;
  const double mu = s.trials * p;
  const double log_mass =
      LogChoose(s.trials, s.y) + s.y * std::log(p) + (s.trials - s.y) * std::log1p(-p);
  ml_internal::FillInnovation(s.y, mu, std::sqrt(mu * (1.0 - p)), log_mass, out);
}

void BinomialFamily::Step(const State& st, double f, const Sample& s, State* next) {
  next->sum_y = f * st.sum_y + s.weight * s.y;
  next->sum_trials = f * st.sum_trials + s.weight * s.trials;
  next->log_const = f * st.log_const + s.weight * std::fmax(0.0, LogChoose(s.trials, s.y));
}

bool BinomialFamily::Estimate(const State& st, std::span<double, 1> value,
                              std::span<double, 1> se) {
  const double p = Probability(st);
  value[0] = p;
  se[0] = std::sqrt(p * (1.0 - p) / st.sum_trials);
  return st.sum_y > 0 && st.sum_y < st.sum_trials;
}

template struct ScalarMlState<BinomialFamily::Stats>;
template class ScalarMl<BinomialFamily>;

}  // namespace bayline::est
