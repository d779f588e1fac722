#include "estimators/map/dynamic_linear_model.h"

#include <cassert>
#include <cmath>
#include <numbers>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/core/t_log_density.h"
#include "estimators/map/posterior_util.h"

namespace bayline::est {

using map_internal::AbsorbRow;

namespace {
constexpr int kMaxP = 10000;
}  // namespace

template <int P>
Status DynamicLinearModel<P>::Options::Validate() const {
  if (p < 1 || p > kMaxP || (P != Eigen::Dynamic && p != P)) {
    return map_internal::Config("p = " + std::to_string(p) + " does not fit this model");
  }
  const auto n = static_cast<std::size_t>(p);
  if (learn_obs_variance) {
    if (!(obs_variance_shape > 0) || !std::isfinite(obs_variance_shape)) {
      return map_internal::Config("obs_variance_shape must be > 0 and finite");
    }
    if (!(obs_variance_scale > 0) || !std::isfinite(obs_variance_scale)) {
      return map_internal::Config("obs_variance_scale must be > 0 and finite");
    }
  } else if (!(obs_variance > 0) || !std::isfinite(obs_variance)) {
    return map_internal::Config("obs_variance must be > 0 and finite");
  }
  if (!state_variance.empty() && state_variance.size() != n) {
    return map_internal::Config("state_variance must have p entries");
  }
  for (double v : state_variance) {
    if (!(v >= 0) || !std::isfinite(v)) {
      return map_internal::Config("state_variance entries must be >= 0 and finite");
    }
  }
  if (diffuse) {
    if (!(diffuse_variance > 0) || !std::isfinite(diffuse_variance)) {
      return map_internal::Config("diffuse_variance must be > 0 and finite");
    }
  } else {
    if (!initial_mean.empty() && initial_mean.size() != n) {
      return map_internal::Config("initial_mean must have p entries");
    }
    for (double v : initial_mean) {
      if (!std::isfinite(v)) return map_internal::Config("initial_mean has a non-finite entry");
    }
    if (initial_variance.size() != n) {
      return map_internal::Config("initial_variance must have p entries");
    }
    for (double v : initial_variance) {
      if (!(v > 0) || !std::isfinite(v)) {
        return map_internal::Config("initial_variance entries must be > 0 and finite");
      }
    }
  }
  return Status::Ok();
}

template <int P>
DynamicLinearModel<P>::DynamicLinearModel(const Options& options)
    : options_(options), p_(options.p) {
  assert(options.Validate().ok());
  sqrt_w_.setZero(p_);
  for (int i = 0; i < p_ && !options_.state_variance.empty(); ++i) {
    sqrt_w_(i) = std::sqrt(options_.state_variance[i]);
  }
  state_.m.setZero(p_);
  state_.U.setZero(p_, p_);
  for (int i = 0; i < p_; ++i) {
    if (options_.diffuse) {
      state_.U(i, i) = std::sqrt(options_.diffuse_variance);
    } else {
      state_.U(i, i) = std::sqrt(options_.initial_variance[i]);
      if (!options_.initial_mean.empty()) state_.m(i) = options_.initial_mean[i];
    }
  }
  if (options_.learn_obs_variance) {
    state_.v_shape = options_.obs_variance_shape;
    state_.v_scale = options_.obs_variance_scale;
  }
  u_work_.resize(p_, p_);
  ux_.resize(p_);
  array_.resize(p_ + 1, p_ + 1);
  row_.resize(p_ + 1);
}

template <int P>
Status DynamicLinearModel<P>::Update(const Sample& s, Innovation* out) {
  if (Status st = CheckCommonFields(s, static_cast<std::size_t>(p_)); !st.ok()) return st;
  u_work_ = state_.U;
  // Drift: R = C + W, the rows sqrt(W_ii) e_i absorbed into C's factor.
  if (state_.count > 0) {
    for (int i = 0; i < p_; ++i) {
      if (sqrt_w_(i) == 0.0) continue;
      auto r = row_.head(p_);
      r.setZero();
      r(i) = sqrt_w_(i);
      AbsorbRow(u_work_, r, i);
    }
  }
  // Measurement update by triangularising [[sqrt(V/w), 0], [U_R x, U_R]].
  double f = 0;
  for (int i = 0; i < p_; ++i) {
    ux_(i) = 0;
    f += s.x[i] * state_.m(i);
  }
  for (int i = 0; i < p_; ++i) {
    for (int j = i; j < p_; ++j) ux_(i) += u_work_(i, j) * s.x[j];
  }
  array_.setZero();
  const bool learn = options_.learn_obs_variance;
  array_(0, 0) = std::sqrt((learn ? 1.0 : options_.obs_variance) / s.weight);
  // Bottom row first: each row then meets an empty row of the array at its first non-zero column,
  // so the triangularisation costs O(p^2) instead of O(p^3).
  for (int i = p_ - 1; i >= 0; --i) {
    row_(0) = ux_(i);
    row_.tail(p_) = u_work_.row(i);
    AbsorbRow(array_, row_, 0);
  }
  const double sq = array_(0, 0), Q = sq * sq, e = s.y - f;
  if (!(sq > 0) || !array_.allFinite()) return map_internal::Numerical("Kalman update not finite");

  Innovation inn;
  inn.valid = true;
  inn.prediction = f;
  inn.residual = e;
  double v_shape = state_.v_shape, v_scale = state_.v_scale;
  if (learn) {
    // Q here is Q* (V = 1); the predictive is Student-t with scale^2 = (bV / aV) Q*.
    const double nu = 2 * v_shape, scale = std::sqrt(v_scale / v_shape * Q), t = e / scale;
    inn.predictive_sd = nu > 2 ? scale * std::sqrt(nu / (nu - 2)) : map_internal::kInf;
    // The normal score costs an incomplete beta and a normal quantile; only a caller that asked
    // for the innovation reads it.
    if (out) inn.standardized = map_internal::StudentTNormalScore(t, nu);
    inn.log_predictive = StudentTLogDensity(t, nu) - std::log(scale);
    v_shape += 0.5;
    v_scale += 0.5 * e * e / Q;
  } else {
    inn.predictive_sd = sq;
    inn.standardized = e / sq;
    inn.log_predictive =
        -0.5 * std::log(2 * std::numbers::pi * Q) - 0.5 * inn.standardized * inn.standardized;
  }
  const double ll = state_.log_likelihood + inn.log_predictive;
  if (!std::isfinite(ll) || (out && !std::isfinite(inn.standardized)) || !std::isfinite(v_scale)) {
    return map_internal::Numerical("log-likelihood not finite");
  }

  // Commit in place, keeping the old values (in the scratch, free again) until the new state passes
  // Validate, the check Restore applies.
  ux_ = state_.m;
  const double old_log_likelihood = state_.log_likelihood, old_v_shape = state_.v_shape;
  const double old_v_scale = state_.v_scale, old_effective_n = state_.effective_n;
  // m += K e with K = k / sqrt(Q), k' = array_(0, 1:).
  for (int i = 0; i < p_; ++i) state_.m(i) += array_(0, i + 1) / sq * e;
  u_work_ = array_.bottomRightCorner(p_, p_);
  state_.U.swap(u_work_);
  state_.log_likelihood = ll;
  state_.v_shape = v_shape;
  state_.v_scale = v_scale;
  state_.effective_n += s.weight;
  state_.count += 1;
  if (Status v = Validate(state_); !v.ok()) {
    state_.m = ux_;
    state_.U.swap(u_work_);
    state_.log_likelihood = old_log_likelihood;
    state_.v_shape = old_v_shape;
    state_.v_scale = old_v_scale;
    state_.effective_n = old_effective_n;
    state_.count -= 1;
    return map_internal::InvalidNext(v);
  }
  if (out) *out = inn;
  return Status::Ok();
}

template <int P>
typename DynamicLinearModel<P>::Matrix DynamicLinearModel<P>::covariance() const {
  Matrix c = state_.U.transpose() * state_.U;
  if (options_.learn_obs_variance) {
    const double a = state_.v_shape;
    c *= a > 1 ? state_.v_scale / (a - 1) : map_internal::kInf;
  }
  return c;
}

template <int P>
ParameterReport DynamicLinearModel<P>::Report(double level) const {
  ParameterReport r;
  const auto n = static_cast<std::size_t>(p_);
  r.value.resize(n);
  r.posterior_mean.resize(n);
  r.std_error.resize(n);
  r.lower.resize(n);
  r.upper.resize(n);
  const bool learn = options_.learn_obs_variance;
  const double a = state_.v_shape, b = state_.v_scale, nu = 2 * a;
  const bool ok = map_internal::LevelOk(level);
  // Given V: normal marginals. Learned V: Student-t with scale^2 = (bV / aV) C*_jj.
  const double zq = !ok ? kNaN
                        : (learn ? dist::StudentTQuantile(0.5 + 0.5 * level, nu)
                                 : dist::NormalQuantile(0.5 + 0.5 * level));
  for (int j = 0; j < p_; ++j) {
    const double u = state_.U.col(j).norm();  // sqrt(C_jj) or sqrt(C*_jj)
    const double scale = learn ? std::sqrt(b / a) * u : u;
    r.value[j] = state_.m(j);
    r.posterior_mean[j] = learn && !(nu > 1) ? kNaN : state_.m(j);
    r.std_error[j] = !learn ? u : (a > 1 ? std::sqrt(b / (a - 1)) * u : map_internal::kInf);
    r.lower[j] = state_.m(j) - zq * scale;
    r.upper[j] = state_.m(j) + zq * scale;
  }
  r.level = level;
  r.identifiable = !learn || a > 1;
  r.effective_n = state_.effective_n;
  r.log_likelihood = state_.log_likelihood;
  return r;
}

template <int P>
Prediction DynamicLinearModel<P>::Predict(std::span<const double> x, double level) const {
  Prediction pr;
  pr.level = level;
  if (x.size() != static_cast<std::size_t>(p_) || !map_internal::LevelOk(level)) return pr;
  Vector xv = Vector::Zero(p_);
  for (int i = 0; i < p_; ++i) {
    if (!std::isfinite(x[i])) return pr;
    xv(i) = x[i];
  }
  const double q = (state_.U * xv).squaredNorm();
  pr.mean = xv.dot(state_.m);
  if (options_.learn_obs_variance) {
    const double a = state_.v_shape, b = state_.v_scale, nu = 2 * a;
    const double scale = std::sqrt(b / a * (q + 1.0));
    const double tq = dist::StudentTQuantile(0.5 + 0.5 * level, nu);
    pr.mean_sd = a > 1 ? std::sqrt(b / (a - 1) * q) : map_internal::kInf;
    pr.sd = nu > 2 ? scale * std::sqrt(nu / (nu - 2)) : map_internal::kInf;
    pr.lower = pr.mean - tq * scale;
    pr.upper = pr.mean + tq * scale;
  } else {
    const double zq = dist::NormalQuantile(0.5 + 0.5 * level);
    pr.mean_sd = std::sqrt(q);
    pr.sd = std::sqrt(q + options_.obs_variance);
    pr.lower = pr.mean - zq * pr.sd;
    pr.upper = pr.mean + zq * pr.sd;
  }
  pr.valid = std::isfinite(pr.mean) && std::isfinite(pr.lower) && std::isfinite(pr.upper);
  return pr;
}

template <int P>
void DynamicLinearModel<P>::State::Pack(StateWriter& w) const {
  w.Put(static_cast<double>(m.size()));
  w.Put(m);
  w.Put(U);
  w.Put(log_likelihood);
  w.Put(effective_n);
  w.Put(count);
  w.Put(v_shape);
  w.Put(v_scale);
}

template <int P>
Status DynamicLinearModel<P>::State::Unpack(StateReader& r) {
  double pd = 0;
  if (!r.Get(pd)) return r.status();
  if (!(pd >= 1 && pd <= kMaxP) || pd != std::floor(pd) || (P != Eigen::Dynamic && pd != P)) {
    return map_internal::BadState("dynamic linear model state has p = " + std::to_string(pd));
  }
  const int n = static_cast<int>(pd);
  m.resize(n);
  U.resize(n, n);
  r.Get(m);
  r.Get(U);
  r.Get(log_likelihood);
  r.Get(effective_n);
  r.Get(count);
  r.Get(v_shape);
  r.Get(v_scale);
  return r.status();
}

template <int P>
Status DynamicLinearModel<P>::Validate(const State& s) const {
  if (s.m.size() != p_ || s.U.rows() != p_ || s.U.cols() != p_) {
    return map_internal::BadState("dynamic linear model state has the wrong size");
  }
  if (!s.m.allFinite() || !s.U.allFinite()) return map_internal::BadState("state not finite");
  for (int j = 0; j < p_; ++j) {
    if (s.U(j, j) < 0) return map_internal::BadState("factor has a negative diagonal");
    for (int i = j + 1; i < p_; ++i) {
      if (s.U(i, j) != 0) return map_internal::BadState("factor is not upper triangular");
    }
  }
  const bool learned = s.v_shape > 0 && s.v_scale > 0;
  if (options_.learn_obs_variance ? !learned : (s.v_shape != 0 || s.v_scale != 0)) {
    return map_internal::BadState("observation variance posterior does not fit the options");
  }
  if (!std::isfinite(s.v_shape) || !std::isfinite(s.v_scale)) {
    return map_internal::BadState("observation variance posterior not finite");
  }
  return map_internal::CheckBookkeeping(s.effective_n, s.log_likelihood, s.count, kNaN);
}

template <int P>
Status DynamicLinearModel<P>::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

template class DynamicLinearModel<1>;
template class DynamicLinearModel<2>;
template class DynamicLinearModel<3>;
template class DynamicLinearModel<4>;
template class DynamicLinearModel<Eigen::Dynamic>;

}  // namespace bayline::est
