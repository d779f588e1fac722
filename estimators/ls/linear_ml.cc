#include "estimators/ls/linear_ml.h"

#include <cmath>
#include <numbers>

#include "estimators/core/distributions.h"

namespace bayline::est {

LinearMl::LinearMl(const RlsOptions& options, int p) : rls_(options, p) {}

Status LinearMl::Update(const Sample& s, Innovation* out) {
  const double n_prev = rls_.effective_n();
  const int p = rls_.p();
  Innovation inn;
  Status st = rls_.Update(s, &inn);
  if (!st.ok()) return st;
  Innovation ml;
  if (inn.valid) {
    // Rls scales by s^2 = S / (n_eff - p); the ML plug-in uses S / n_eff (previous n_eff).
    const double shrink = std::sqrt((n_prev - p) / n_prev);
    ml.valid = true;
    ml.prediction = inn.prediction;
    ml.residual = inn.residual;
    ml.predictive_sd = inn.predictive_sd * shrink;
    ml.standardized = ml.residual / ml.predictive_sd;
    ml.log_predictive = dist::NormalLogPdf(s.y, ml.prediction, ml.predictive_sd);
    cumulative_log_predictive_ += ml.log_predictive;
  }
  if (out) *out = ml;
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

Status LinearMl::Restore(const State& s) {
  if (!std::isfinite(s.cumulative_log_predictive)) {
    return Status::Error(ErrorCode::kInvalidState, "cumulative log predictive is not finite");
  }
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
