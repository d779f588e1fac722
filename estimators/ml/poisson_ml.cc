#include "estimators/ml/poisson_ml.h"

#include <cmath>
#include <string>

#include "estimators/ml/scalar_ml_impl.h"

namespace bayline::est {

Status PoissonFamily::Stats::Check(const State& s) {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(s.sum_y) || !std::isfinite(s.sum_exposure) || !std::isfinite(s.log_const)) {
    return bad("poisson state has a non-finite value");
  }
  if (s.sum_y < 0 || s.sum_exposure < 0) return bad("poisson state has a negative sum");
  if ((s.sum_exposure == 0) != (s.count == 0)) return bad("poisson state: sums and count disagree");
  return Status::Ok();
}

double PoissonFamily::Rate(const State& st) {
  return st.sum_exposure > 0 ? st.sum_y / st.sum_exposure : kNaN;
}

double PoissonFamily::LogLikelihood(const State& st) {
  const double r = Rate(st);
  if (std::isnan(r)) return kNaN;
  const double y_term = st.sum_y > 0 ? st.sum_y * std::log(r) : 0.0;  // 0 log 0 = 0
  return y_term - r * st.sum_exposure + st.log_const;
}

Status PoissonFamily::CheckSample(const Sample& s) {
  if (!(s.y >= 0)) {
    return Status::Error(ErrorCode::kOutOfDomain,
                         "poisson count must be >= 0, got " + std::to_string(s.y));
  }
  if (!ml_internal::IsWholeNumber(s.y)) {
    return Status::Error(ErrorCode::kOutOfDomain,
                         "poisson count must be a whole number, got " + std::to_string(s.y));
  }
  if (!(s.exposure > 0)) {
    return Status::Error(ErrorCode::kOutOfDomain,
                         "exposure must be > 0, got " + std::to_string(s.exposure));
  }
  return Status::Ok();
}

void PoissonFamily::Predictive(const State& st, const Sample& s, Innovation* out) {
  const double r = Rate(st);
  if (!(r > 0)) return;
  const double mu = r * s.exposure;
  const double log_mass =
      (s.y > 0 ? s.y * std::log(mu) : 0.0) - mu - ml_internal::LogFactorial(s.y);
  ml_internal::FillInnovation(s.y, mu, std::sqrt(mu), log_mass, out);
}

void PoissonFamily::Step(const State& st, double f, const Sample& s, State* next) {
  next->sum_y = f * st.sum_y + s.weight * s.y;
  next->sum_exposure = f * st.sum_exposure + s.weight * s.exposure;
  next->log_const = f * st.log_const +
                    s.weight * ((s.y > 0 && s.exposure != 1.0 ? s.y * std::log(s.exposure) : 0.0) -
                                ml_internal::LogFactorial(s.y));
}

bool PoissonFamily::Estimate(const State& st, std::span<double, 1> value, std::span<double, 1> se) {
  const double r = Rate(st);
  value[0] = r;
  se[0] = std::sqrt(r / st.sum_exposure);
  return st.sum_y > 0 && st.sum_exposure > 0;
}

template struct ScalarMlState<PoissonFamily::Stats>;
template class ScalarMl<PoissonFamily>;

}  // namespace bayline::est
