#include "estimators/ls/linear_ml.h"

#include <cmath>
#include <numbers>

#include "estimators/core/distributions.h"

namespace bayline::est {

LinearMl::LinearMl(const RlsOptions& options, int p) : rls_(options, p) {}

namespace {

// What Update derives from the Rls innovation, computed inside the Rls update before it commits.
struct MlStep {
  double n_prev = 0.0;
  int p = 0;
  double y = 0.0;
  double cumulative = 0.0;  // in: before the observation; out: after it
  Innovation ml;
};

}  // namespace

Status LinearMl::Update(const Sample& s, Innovation* out) {
  MlStep step;
  step.n_prev = rls_.effective_n();
  step.p = rls_.p();
  step.y = s.y;
  step.cumulative = cumulative_log_predictive_;
  InnovationCheck check;
  check.context = &step;
  check.check = [](void* context, const Innovation& inn) -> Status {
    MlStep& st = *static_cast<MlStep*>(context);
    if (!inn.valid) return Status::Ok();
    // Rls scales by s^2 = S / (n_eff - p); the ML plug-in uses S / n_eff (previous n_eff).
    const double shrink = std::sqrt((st.n_prev - st.p) / st.n_prev);
    Innovation& ml = st.ml;
    ml.valid = true;
    ml.prediction = inn.prediction;
    ml.residual = inn.residual;
    ml.predictive_sd = inn.predictive_sd * shrink;
    ml.standardized = ml.residual / ml.predictive_sd;
    ml.log_predictive = dist::NormalLogPdf(st.y, ml.prediction, ml.predictive_sd);
    st.cumulative += ml.log_predictive;
    if (Status v = ValidateCumulative(st.cumulative); !v.ok()) {
      return Status::Error(ErrorCode::kNumericalFailure,
                           "update would leave an invalid state: " + v.message());
    }
    return Status::Ok();
  };
  Status st = rls_.Update(s, nullptr, nullptr, check);
  if (!st.ok()) return st;
  cumulative_log_predictive_ = step.cumulative;
  if (out) *out = step.ml;
  return Status::Ok();
}

double LinearMl::sigma2_ml() const {
  const double n = rls_.effective_n();
  if (!rls_.identifiable() || !(n > rls_.p())) return kNaN;
  return rls_.rss() / n;
}

double LinearMl::log_likelihood() const {
  const double s2 = sigma2_ml();
  if (!(s2 > 0.0)) return kNaN;
  return -0.5 * rls_.effective_n() * (std::log(2.0 * std::numbers::pi * s2) + 1.0);
}

Eigen::MatrixXd LinearMl::covariance() const {
  // sigma^2_ML (R'R)^{-1} = (S / n_eff) / (S / (n_eff - p)) * Rls covariance.
  const double s2u = rls_.residual_variance();
  const double s2 = sigma2_ml();
  if (!(s2u > 0.0) || std::isnan(s2)) return Eigen::MatrixXd::Constant(rls_.p(), rls_.p(), kNaN);
  return rls_.covariance() * (s2 / s2u);
}

ParameterReport LinearMl::Report(double level) const {
  ParameterReport rep = rls_.Report(level);
  rep.log_likelihood = log_likelihood();
  if (!rep.identifiable) return rep;
  const Eigen::MatrixXd cov = covariance();
  const double zq = (level > 0.0 && level < 1.0) ? dist::NormalQuantile(0.5 * (1.0 + level)) : kNaN;
  for (int i = 0; i < rls_.p(); ++i) {
    const auto k = static_cast<std::size_t>(i);
    rep.std_error[k] = std::sqrt(cov(i, i));
    rep.lower[k] = rep.value[k] - zq * rep.std_error[k];
    rep.upper[k] = rep.value[k] + zq * rep.std_error[k];
  }
  return rep;
}

double LinearMl::PredictiveLogDensity(std::span<const double> x, double y) const {
  Prediction pr;
  if (!std::isfinite(y) || !rls_.Predict(x, 0.95, &pr).ok() || !pr.valid) return kNaN;
  const double s2u = rls_.residual_variance();
  const double shrink = std::sqrt(sigma2_ml() / s2u);
  return dist::NormalLogPdf(y, pr.mean, pr.sd * shrink);
}

Prediction LinearMl::Predict(std::span<const double> x, double level) const {
  Prediction out;
  out.level = level;
  const double sigma2 = sigma2_ml();
  if (!rls_.identifiable() || !std::isfinite(sigma2) ||
      x.size() != static_cast<std::size_t>(rls_.p()) || !(level > 0 && level < 1)) {
    return out;
  }
  const Eigen::Map<const Eigen::VectorXd> xv(x.data(), static_cast<Eigen::Index>(x.size()));
  const Eigen::VectorXd theta = coefficients();
  const double mean_var = xv.dot(covariance() * xv);
  const double z = dist::NormalQuantile(0.5 + level / 2);
  out.mean = xv.dot(theta);
  out.mean_sd = std::sqrt(mean_var);
  out.sd = std::sqrt(mean_var + sigma2);
  out.lower = out.mean - z * out.sd;
  out.upper = out.mean + z * out.sd;
  out.valid = std::isfinite(out.mean) && std::isfinite(out.sd);
  return out;
}

void LinearMl::Reset() {
  rls_.Reset();
  cumulative_log_predictive_ = 0.0;
}

LinearMl::State LinearMl::state() const {
  State s;
  s.rls = rls_.state();
  s.cumulative_log_predictive = cumulative_log_predictive_;
  return s;
}

Status LinearMl::ValidateCumulative(double cumulative_log_predictive) {
  if (!std::isfinite(cumulative_log_predictive)) {
    return Status::Error(ErrorCode::kInvalidState, "cumulative log predictive is not finite");
  }
  return Status::Ok();
}

Status LinearMl::Validate(const State& s) const {
  if (Status v = ValidateCumulative(s.cumulative_log_predictive); !v.ok()) return v;
  return rls_.Validate(s.rls);
}

Status LinearMl::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  Status st = rls_.Restore(s.rls);
  if (!st.ok()) return st;
  cumulative_log_predictive_ = s.cumulative_log_predictive;
  return Status::Ok();
}

void LinearMl::State::Pack(StateWriter& w) const {
  rls.Pack(w);
  w.Put(cumulative_log_predictive);
}

Status LinearMl::State::Unpack(StateReader& r) {
  State s;
  Status st = s.rls.Unpack(r);
  if (!st.ok()) return st;
  r.Get(s.cumulative_log_predictive);
  st = r.status(false);
  if (!st.ok()) return st;
  *this = std::move(s);
  return Status::Ok();
}

}  // namespace bayline::est
