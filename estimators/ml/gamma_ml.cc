#include "estimators/ml/gamma_ml.h"

#include <cmath>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/core/special_functions.h"
#include "estimators/ml/gamma_shape.h"
#include "estimators/ml/scalar_ml_impl.h"

namespace bayline::est {
namespace {

// s = log(ybar / c) - l, the statistic the shape solves for.
double ShapeStatistic(double mean_d, double mean_log) { return std::log1p(mean_d) - mean_log; }

double Rate(const GammaFamily::State& st) { return st.shape / GammaFamily::Mean(st); }

}  // namespace

Status GammaFamily::Stats::Check(const State& s) {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(s.ref) || !std::isfinite(s.mean_d) || !std::isfinite(s.mean_log) ||
      std::isinf(s.shape)) {
    return bad("gamma state has a non-finite value");
  }
  if (s.ref < 0) return bad("gamma state has a negative value");
  if ((s.ref > 0) != (s.count > 0)) return bad("gamma state: sums and count disagree");
  if (!(1.0 + s.mean_d > 0)) return bad("gamma state: mean is not positive");
  if (!std::isnan(s.shape) && !(s.shape > 0)) return bad("gamma state: shape is not positive");
  if (std::isnan(s.shape) && ShapeStatistic(s.mean_d, s.mean_log) > kMinStatistic) {
    return bad("gamma state: no shape for distinct values");
  }
  return Status::Ok();
}

double GammaFamily::Mean(const State& st) {
  return st.count > 0 ? st.ref * (1.0 + st.mean_d) : kNaN;
}

double GammaFamily::LogLikelihood(const State& st) {
  const double k = st.shape;
  if (std::isnan(k)) return kNaN;
  const double mean_log_y = std::log(st.ref) + st.mean_log;
  return st.weight_sum *
         (k * std::log(Rate(st)) + (k - 1.0) * mean_log_y - k - special::LogGamma(k));
}

Status GammaFamily::CheckSample(const Sample& s) {
  return ml_internal::CheckPositiveY("gamma", s.y);
}

void GammaFamily::Predictive(const State& st, const Sample& s, Innovation* out) {
  if (std::isnan(st.shape)) return;
  const double k = st.shape, r = Rate(st);
  ml_internal::FillInnovation(s.y, k / r, std::sqrt(k) / r, dist::GammaLogPdf(s.y, k, r), out);
}

void GammaFamily::Step(const State& st, double, const Sample& s, State* next) {
  if (st.count == 0) next->ref = s.y;
  const double u = s.y / next->ref;
  const double g = s.weight / next->weight_sum;
  next->mean_d = st.mean_d + g * ((u - 1.0) - st.mean_d);
  next->mean_log = st.mean_log + g * (std::log(u) - st.mean_log);
  const double stat = ShapeStatistic(next->mean_d, next->mean_log);
  next->shape = stat > kMinStatistic ? gamma_shape::Solve(stat, st.shape) : kNaN;
}

bool GammaFamily::Estimate(const State& st, std::span<double, 2> value, std::span<double, 2> se) {
  const double k = st.shape, r = Rate(st), w = st.weight_sum;
  const bool ok = !std::isnan(k) && w > 0;
  if (ok) {
    const double c = gamma_shape::InformationFactor(k);
    const double trigamma = c / k + 1.0 / k;  // psi'(k) = (k psi'(k) - 1 + 1) / k
    se[0] = std::sqrt(k / (w * c));
    se[1] = std::sqrt(trigamma * r * r / (w * c));
  }
  value[0] = k;
  value[1] = r;
  return ok;
}

template struct ScalarMlState<GammaFamily::Stats>;
template class ScalarMl<GammaFamily>;

}  // namespace bayline::est
