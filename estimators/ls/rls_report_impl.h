// Private to recursive_least_squares.cc: reporting, prediction, conditioning and state handling of
// RecursiveLeastSquares<P>. None of this is on the update path (it may allocate).
#pragma once

#include <cmath>
#include <numbers>
#include <string>
#include <vector>

#include "estimators/core/distributions.h"
#include "estimators/ls/double_double.h"
#include "estimators/ls/recursive_least_squares.h"
#include "estimators/ls/rls_update_impl.h"

namespace bayline::est {

namespace rls_detail {

// Back substitution R theta = z in the working precision.
template <typename Real, typename M, typename ML, typename V, typename VL>
std::vector<Real> BackSubstitute(const M& r, const ML& r_lo, const V& z, const VL& z_lo, int p) {
  std::vector<Real> theta(static_cast<std::size_t>(p));
  for (int i = p - 1; i >= 0; --i) {
    Real acc = Get<Real>(z, z_lo, i, 0);
    for (int k = i + 1; k < p; ++k)
      acc -= Get<Real>(r, r_lo, i, k) * theta[static_cast<std::size_t>(k)];
    theta[static_cast<std::size_t>(i)] = acc / Get<Real>(r, r_lo, i, i);
  }
  return theta;
}

// Upper-triangular inverse of R in the working precision, column by column, rounded to double.
template <typename Real, typename M, typename ML, typename Out>
void InvertUpper(const M& r, const ML& r_lo, int p, Out* out) {
  std::vector<Real> col(static_cast<std::size_t>(p));
  for (int j = 0; j < p; ++j) {
    for (int i = j; i >= 0; --i) {
      Real acc = (i == j) ? Real(1.0) : Real(0.0);
      for (int k = i + 1; k <= j; ++k)
        acc -= Get<Real>(r, r_lo, i, k) * col[static_cast<std::size_t>(k)];
      col[static_cast<std::size_t>(i)] = acc / Get<Real>(r, r_lo, i, i);
    }
    for (int i = 0; i < p; ++i)
      (*out)(i, j) = i <= j ? ToDouble(col[static_cast<std::size_t>(i)]) : 0.0;
  }
}

}  // namespace rls_detail

template <int P>
typename RecursiveLeastSquares<P>::Vector RecursiveLeastSquares<P>::SolveTheta() const {
  const int p = state_.p;
  Vector theta(p);
  if (state_.extended) {
    auto t =
        rls_detail::BackSubstitute<DoubleDouble>(state_.r, state_.r_lo, state_.z, state_.z_lo, p);
    for (int i = 0; i < p; ++i) theta(i) = ToDouble(t[static_cast<std::size_t>(i)]);
  } else {
    theta = state_.r.template triangularView<Eigen::Upper>().solve(state_.z);
  }
  return theta;
}

template <int P>
typename RecursiveLeastSquares<P>::Matrix RecursiveLeastSquares<P>::InverseR() const {
  const int p = state_.p;
  Matrix inv(p, p);
  if (state_.extended) {
    rls_detail::InvertUpper<DoubleDouble>(state_.r, state_.r_lo, p, &inv);
  } else {
    rls_detail::InvertUpper<double>(state_.r, state_.r, p, &inv);
  }
  return inv;
}

template <int P>
typename RecursiveLeastSquares<P>::Vector RecursiveLeastSquares<P>::coefficients() const {
  if (!state_.identified) return Vector::Constant(state_.p, kNaN);
  return SolveTheta();
}

template <int P>
double RecursiveLeastSquares<P>::residual_variance() const {
  const double dof = this->dof();
  if (!state_.identified || !(dof > 0.0)) return kNaN;
  return rss() / dof;
}

template <int P>
typename RecursiveLeastSquares<P>::Matrix RecursiveLeastSquares<P>::covariance() const {
  const int p = state_.p;
  const double s2 = residual_variance();
  if (std::isnan(s2)) return Matrix::Constant(p, p, kNaN);
  const Matrix inv = InverseR();
  return s2 * (inv * inv.transpose());
}

template <int P>
ParameterReport RecursiveLeastSquares<P>::Report(double level) const {
  const int p = state_.p;
  const auto n = static_cast<std::size_t>(p);
  ParameterReport rep;
  rep.level = level;
  rep.identifiable = state_.identified;
  rep.effective_n = state_.n_eff;
  rep.value.assign(n, kNaN);
  rep.std_error.assign(n, kNaN);
  rep.lower.assign(n, kNaN);
  rep.upper.assign(n, kNaN);
  if (!state_.identified) return rep;
  const Vector theta = SolveTheta();
  const double s2 = residual_variance();
  const double q = (level > 0.0 && level < 1.0 && dof() > 0.0)
                       ? dist::StudentTQuantile(0.5 * (1.0 + level), dof())
                       : kNaN;
  Matrix inv;
  if (!std::isnan(s2)) inv = InverseR();
  for (int i = 0; i < p; ++i) {
    const auto k = static_cast<std::size_t>(i);
    rep.value[k] = theta(i);
    if (std::isnan(s2)) continue;
    rep.std_error[k] = std::sqrt(s2 * inv.row(i).squaredNorm());
    rep.lower[k] = theta(i) - q * rep.std_error[k];
    rep.upper[k] = theta(i) + q * rep.std_error[k];
  }
  const double rss = this->rss();
  if (state_.n_eff > 0.0 && rss > 0.0) {
    rep.log_likelihood =
        -0.5 * state_.n_eff * (std::log(2.0 * std::numbers::pi * rss / state_.n_eff) + 1.0);
  }
  return rep;
}

template <int P>
Status RecursiveLeastSquares<P>::Predict(std::span<const double> x, double level,
                                         Prediction* out) const {
  const int p = state_.p;
  if (x.size() != static_cast<std::size_t>(p)) {
    return Status::Error(
        ErrorCode::kWrongRegressorCount,
        "expected " + std::to_string(p) + " regressors, got " + std::to_string(x.size()));
  }
  for (std::size_t i = 0; i < x.size(); ++i) {
    if (!std::isfinite(x[i])) {
      return Status::Error(ErrorCode::kNonFinite,
                           "regressor " + std::to_string(i) + " is not finite");
    }
  }
  Prediction pr;
  pr.level = level;
  const double s2 = residual_variance();
  if (state_.identified && !std::isnan(s2)) {
    const Eigen::Map<const Vector> xv(x.data(), p);
    const Vector theta = SolveTheta();
    // v = R^{-T} x, so x'(R'R)^{-1}x = |v|^2.
    const Vector v = state_.r.template triangularView<Eigen::Upper>().transpose().solve(xv);
    const double q = v.squaredNorm();
    pr.mean = xv.dot(theta);
    pr.mean_sd = std::sqrt(s2 * q);
    pr.sd = std::sqrt(s2 * (1.0 + q));
    if (level > 0.0 && level < 1.0) {
      const double t = dist::StudentTQuantile(0.5 * (1.0 + level), dof());
      pr.lower = pr.mean - t * pr.sd;
      pr.upper = pr.mean + t * pr.sd;
    }
    pr.valid = std::isfinite(pr.mean) && std::isfinite(pr.sd);
  }
  *out = pr;
  return Status::Ok();
}

template <int P>
double RecursiveLeastSquares<P>::ConditionNumber() const {
  if (!state_.identified) return kNaN;
  const int p = state_.p;
  Matrix scaled = state_.r;
  for (int j = 0; j < p; ++j) {
    const double norm = scaled.col(j).norm();
    scaled.col(j) /= norm;
  }
  const Matrix inv = scaled.template triangularView<Eigen::Upper>().solve(Matrix::Identity(p, p));
  const double norm1 = scaled.cwiseAbs().colwise().sum().maxCoeff();
  const double inv_norm1 = inv.cwiseAbs().colwise().sum().maxCoeff();
  return norm1 * inv_norm1;
}

template <int P>
double RecursiveLeastSquares<P>::ErrorSensitivity() const {
  const double kappa = ConditionNumber();
  const double znorm = state_.z.norm();
  const double tan_phi = znorm > 0.0 ? std::sqrt(std::max(rss(), 0.0)) / znorm : 0.0;
  return kappa + kappa * kappa * tan_phi;
}

template <int P>
bool RecursiveLeastSquares<P>::ill_conditioned() const {
  const double limit = state_.extended ? 1e29 : 1e13;
  const double e = ErrorSensitivity();
  return !std::isnan(e) && e > limit;
}

// ---- state ----

template <int P>
void RecursiveLeastSquares<P>::State::Pack(StateWriter& w) const {
  w.Put(static_cast<double>(p));
  w.Put(extended);
  w.Put(r);
  w.Put(z);
  w.Put(rss);
  if (extended) {
    w.Put(r_lo);
    w.Put(z_lo);
    w.Put(rss_lo);
  }
  w.Put(n_eff);
  w.Put(n_obs);
  w.Put(previous_time);
  w.Put(trace);
  w.Put(trace_identified);
  w.Put(anchor);
  w.Put(identified);
}

template <int P>
Status RecursiveLeastSquares<P>::State::Unpack(StateReader& rd) {
  constexpr double kMaxP = 4096;  // refuses absurd sizes from a corrupt snapshot
  State s;
  double pd = 0;
  rd.Get(pd);
  if (rd.status(false).ok()) {
    if (!(pd >= 1 && pd <= kMaxP && pd == std::floor(pd))) {
      rd.Fail("parameter count " + std::to_string(pd) + " is not an integer in [1, 4096]");
    } else if (P != Eigen::Dynamic && pd != P) {
      rd.Fail("state has p = " + std::to_string(pd) + ", this estimator p = " + std::to_string(P));
    }
  }
  if (!rd.status(false).ok()) return rd.status(false);
  s.p = static_cast<int>(pd);
  s.r.resize(s.p, s.p);
  s.z.resize(s.p);
  rd.Get(s.extended);
  rd.Get(s.r);
  rd.Get(s.z);
  rd.Get(s.rss);
  if (s.extended) {
    s.r_lo.resize(s.p, s.p);
    s.z_lo.resize(s.p);
    rd.Get(s.r_lo);
    rd.Get(s.z_lo);
    rd.Get(s.rss_lo);
  }
  rd.Get(s.n_eff);
  rd.Get(s.n_obs);
  rd.Get(s.previous_time);
  rd.Get(s.trace);
  rd.Get(s.trace_identified);
  rd.Get(s.anchor);
  rd.Get(s.identified);
  Status st = rd.status(false);
  if (!st.ok()) return st;
  *this = std::move(s);
  return Status::Ok();
}

template <int P>
Status RecursiveLeastSquares<P>::Validate(const State& s) const {
  auto bad = [](const std::string& why) { return Status::Error(ErrorCode::kInvalidState, why); };
  const int p = state_.p;
  if (s.p != p)
    return bad("state has p = " + std::to_string(s.p) + ", estimator has " + std::to_string(p));
  if (s.extended != options_.extended_precision)
    return bad("state and options disagree on extended precision");
  if (s.r.rows() != p || s.r.cols() != p || s.z.size() != p)
    return bad("state matrices have the wrong size");
  if (s.extended && (s.r_lo.rows() != p || s.r_lo.cols() != p || s.z_lo.size() != p)) {
    return bad("state low-order parts have the wrong size");
  }
  if (!s.r.allFinite() || !s.z.allFinite() || !std::isfinite(s.rss))
    return bad("state has non-finite values");
  if (s.extended && (!s.r_lo.allFinite() || !s.z_lo.allFinite() || !std::isfinite(s.rss_lo))) {
    return bad("state has non-finite low-order parts");
  }
  for (int j = 0; j < p; ++j) {
    if (s.r(j, j) < 0.0) return bad("R has a negative diagonal entry");
    for (int i = j + 1; i < p; ++i) {
      if (s.r(i, j) != 0.0 || (s.extended && s.r_lo(i, j) != 0.0))
        return bad("R is not upper triangular");
    }
  }
  if (!(s.rss + s.rss_lo >= 0.0)) return bad("negative residual sum of squares");
  if (!(s.n_eff >= 0.0) || !std::isfinite(s.n_eff))
    return bad("effective sample size must be finite and >= 0");
  if (!(s.n_obs >= 0.0) || s.n_obs != std::floor(s.n_obs))
    return bad("observation count must be a whole number >= 0");
  if (std::isinf(s.previous_time)) return bad("previous time is infinite");
  if (!(s.trace >= 0.0) || !(s.trace_identified >= 0.0) || !std::isfinite(s.trace) ||
      !std::isfinite(s.trace_identified)) {
    return bad("information trace must be finite and >= 0");
  }
  if (!(s.anchor >= 0.0 && s.anchor < p && s.anchor == std::floor(s.anchor)))
    return bad("anchor index out of range");
  // Identified is sticky (set once the rank test passes); it needs a solvable R.
  if (s.identified && !(s.r.diagonal().array() > 0.0).all())
    return bad("identified but R is singular");
  if (!s.identified && RankTest(s.r))
    return bad("R has full rank but the state says not identified");
  return Status::Ok();
}

template <int P>
Status RecursiveLeastSquares<P>::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
