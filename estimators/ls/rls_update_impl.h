// Private to recursive_least_squares.cc: the update path of RecursiveLeastSquares<P> (forgetting,
// windup anchor, Givens annihilation), written once over the working precision Real (double or
// DoubleDouble).
#pragma once

#include <algorithm>
#include <cassert>
#include <cmath>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/core/t_log_density.h"
#include "estimators/ls/double_double.h"
#include "estimators/ls/recursive_least_squares.h"

namespace bayline::est {

namespace rls_detail {

template <typename Real>
inline Real MakeReal(double hi, double lo) {
  if constexpr (std::is_same_v<Real, double>) {
    (void)lo;
    return hi;
  } else {
    return Real(hi, lo);
  }
}

// Element access in the working precision: the lo arrays are used only for DoubleDouble.
template <typename Real, typename M, typename ML>
inline Real Get(const M& hi, const ML& lo, Eigen::Index i, Eigen::Index k) {
  if constexpr (std::is_same_v<Real, double>) {
    (void)lo;
    return hi(i, k);
  } else {
    return Real(hi(i, k), lo(i, k));
  }
}
template <typename Real, typename M, typename ML>
inline void Set(M& hi, ML& lo, Eigen::Index i, Eigen::Index k, const Real& v) {
  if constexpr (std::is_same_v<Real, double>) {
    (void)lo;
    hi(i, k) = v;
  } else {
    hi(i, k) = v.hi;
    lo(i, k) = v.lo;
  }
}

// Annihilates row[first..p) (response in row[p]) into [R z] by Givens rotations that keep R's
// diagonal non-negative. Returns the leftover response entry (the recursive residual of the row)
// and multiplies *cprod by the cosines.
template <typename Real, typename M, typename V, typename RV>
[[gnu::always_inline]] inline Real Annihilate(M& r, M& r_lo, V& z, V& z_lo, RV& row, RV& row_lo,
                                              int first, int p, double* cprod) {
  for (int i = first; i < p; ++i) {
    const Real b = Get<Real>(row, row_lo, i, 0);
    if (b == Real(0.0)) continue;  // nothing to rotate in this column
    const Real a = Get<Real>(r, r_lo, i, i);
    const Real rho = Sqrt(a * a + b * b);
    const Real inv = Real(1.0) / rho;
    const Real c = a * inv;
    const Real sn = b * inv;
    *cprod *= ToDouble(c);
    Set<Real>(r, r_lo, i, i, rho);
    for (int k = i + 1; k < p; ++k) {
      const Real rik = Get<Real>(r, r_lo, i, k);
      const Real rk = Get<Real>(row, row_lo, k, 0);
      Set<Real>(r, r_lo, i, k, c * rik + sn * rk);
      Set<Real>(row, row_lo, k, 0, c * rk - sn * rik);
    }
    const Real zi = Get<Real>(z, z_lo, i, 0);
    const Real rz = Get<Real>(row, row_lo, p, 0);
    Set<Real>(z, z_lo, i, 0, c * zi + sn * rz);
    Set<Real>(row, row_lo, p, 0, c * rz - sn * zi);
  }
  return Get<Real>(row, row_lo, p, 0);
}

// v + v_lo in the working precision (v_lo ignored in double).
template <typename Real>
inline Real Widen(double v, const double* v_lo) {
  if constexpr (std::is_same_v<Real, double>) {
    (void)v_lo;
    return v;
  } else {
    return v_lo ? dd::TwoSum(v, *v_lo) : Real(v);
  }
}

}  // namespace rls_detail

template <int P>
RecursiveLeastSquares<P>::RecursiveLeastSquares(const RlsOptions& options, int p)
    : options_(options) {
  assert(options.Validate().ok());
  assert(p >= 1 && (kDynamic || p == P));
  state_.p = kDynamic ? p : P;
  sqrt_lambda_ = std::sqrt(options_.forgetting.lambda);
  Reset();
  if constexpr (kDynamic) SizeWork(dyn_work_);
}

template <int P>
void RecursiveLeastSquares<P>::SizeWork(Work& w) const {
  const int p = state_.p;
  w.r.setZero(p, p);
  w.z.setZero(p);
  w.row.setZero(p + 1);
  if (options_.extended_precision) {
    w.r_lo.setZero(p, p);
    w.z_lo.setZero(p);
    w.row_lo.setZero(p + 1);
  }
}

template <int P>
void RecursiveLeastSquares<P>::Reset() {
  const int p = state_.p;
  State fresh;
  fresh.p = p;
  fresh.extended = options_.extended_precision;
  fresh.r.setZero(p, p);
  fresh.z.setZero(p);
  if (fresh.extended) {
    fresh.r_lo.setZero(p, p);
    fresh.z_lo.setZero(p);
  }
  state_ = std::move(fresh);
}

template <int P>
Status RecursiveLeastSquares<P>::Update(const Sample& s, Innovation* out, RecursiveResidual* rr) {
  return UpdateChecked(s, nullptr, 0.0, out, rr, nullptr);
}

template <int P>
Status RecursiveLeastSquares<P>::Update(const Sample& s, Innovation* out, RecursiveResidual* rr,
                                        const InnovationCheck& check) {
  return UpdateChecked(s, nullptr, 0.0, out, rr, &check);
}

template <int P>
Status RecursiveLeastSquares<P>::UpdateExtended(const Sample& s, std::span<const double> x_lo,
                                                double y_lo, Innovation* out,
                                                RecursiveResidual* rr) {
  if (!options_.extended_precision) {
    return Status::Error(ErrorCode::kInvalidConfig,
                         "UpdateExtended needs the extended_precision option");
  }
  if (x_lo.size() != static_cast<std::size_t>(state_.p)) {
    return Status::Error(ErrorCode::kWrongRegressorCount, "expected " + std::to_string(state_.p) +
                                                              " low-order regressor parts, got " +
                                                              std::to_string(x_lo.size()));
  }
  for (std::size_t i = 0; i < x_lo.size(); ++i) {
    if (!std::isfinite(x_lo[i])) {
      return Status::Error(ErrorCode::kNonFinite,
                           "low-order part of regressor " + std::to_string(i) + " is not finite");
    }
  }
  if (!std::isfinite(y_lo)) {
    return Status::Error(ErrorCode::kNonFinite, "low-order part of y is not finite");
  }
  return UpdateChecked(s, x_lo.data(), y_lo, out, rr, nullptr);
}

template <int P>
Status RecursiveLeastSquares<P>::UpdateChecked(const Sample& s, const double* x_lo, double y_lo,
                                               Innovation* out, RecursiveResidual* rr,
                                               const InnovationCheck* check) {
  Status st = CheckCommonFields(s, static_cast<std::size_t>(state_.p));
  if (!st.ok()) return st;
  if constexpr (kDynamic) {
    return options_.extended_precision
               ? UpdateImpl<DoubleDouble>(dyn_work_, s, x_lo, y_lo, out, rr, check)
               : UpdateImpl<double>(dyn_work_, s, x_lo, y_lo, out, rr, check);
  } else {
    Work w;  // fixed size: on the stack, uninitialised (every entry used is loaded first)
    return options_.extended_precision ? UpdateImpl<DoubleDouble>(w, s, x_lo, y_lo, out, rr, check)
                                       : UpdateImpl<double>(w, s, x_lo, y_lo, out, rr, check);
  }
}

template <int P>
template <typename Real>
Status RecursiveLeastSquares<P>::UpdateImpl(Work& w, const Sample& s, const double* x_lo,
                                            double y_lo, Innovation* out, RecursiveResidual* rr,
                                            const InnovationCheck* check) {
  using namespace rls_detail;
  constexpr bool kExt = !std::is_same_v<Real, double>;
  const int p = kDynamic ? state_.p : P;  // compile-time bound for fixed P (unrolled loops)
  const State& cur = state_;

  const double lambda = ForgettingFactor(options_.forgetting, s.time, cur.previous_time);
  const bool forget = lambda < 1.0;
  const Real sqrt_lambda = (options_.forgetting.half_life > 0.0)
                               ? Sqrt(Real(lambda))
                               : (kExt ? Sqrt(Real(lambda)) : Real(sqrt_lambda_));
  const double dof_prev = cur.n_eff - p;
  const double s2_prev = (cur.identified && dof_prev > 0.0) ? rss() / dof_prev : kNaN;
  const bool have_pred = cur.identified && dof_prev > 0.0 && s2_prev > 0.0;

  // Windup floor for this step's coordinate j (see the header).
  const bool anchor = forget && cur.identified && options_.windup_floor > 0.0;
  const double trace_forgotten = lambda * cur.trace;
  double iota = 0.0;
  if (anchor) {
    const double t_eff = std::max(trace_forgotten, options_.windup_floor * cur.trace_identified);
    iota = options_.windup_floor * t_eff / p;
  }
  const int j = static_cast<int>(cur.anchor);
  double a2 = 0.0;  // information added by the anchor (set by run; the same on a robust re-run)

  // Forgets, anchors and absorbs the row with weight `weight` into the work copy. Returns eta.
  auto run = [&](double weight, double* cprod) __attribute__((always_inline))->Real {
    w.r.template triangularView<Eigen::Upper>() = cur.r;
    w.z = cur.z;
    if constexpr (kExt) {
      w.r_lo.template triangularView<Eigen::Upper>() = cur.r_lo;
      w.z_lo = cur.z_lo;
    }
    if (forget) {
      for (int k = 0; k < p; ++k) {
        for (int i = 0; i <= k; ++i)
          Set<Real>(w.r, w.r_lo, i, k, Get<Real>(w.r, w.r_lo, i, k) * sqrt_lambda);
        Set<Real>(w.z, w.z_lo, k, 0, Get<Real>(w.z, w.z_lo, k, 0) * sqrt_lambda);
      }
    }
    double unused = 1.0;
    const double rjj = w.r(j, j);
    a2 = (anchor && rjj * rjj < iota) ? iota - rjj * rjj : 0.0;
    if (a2 > 0.0) {
      // theta_j by back substitution on rows p-1..j of the (scaled) factor.
      for (int i = p - 1; i >= j; --i) {
        Real acc = Get<Real>(w.z, w.z_lo, i, 0);
        for (int k = i + 1; k < p; ++k)
          acc -= Get<Real>(w.r, w.r_lo, i, k) * Get<Real>(w.row, w.row_lo, k, 0);
        Set<Real>(w.row, w.row_lo, i, 0, acc / Get<Real>(w.r, w.r_lo, i, i));  // theta_i
      }
      const Real a = Sqrt(Real(a2));
      const Real theta_j = Get<Real>(w.row, w.row_lo, j, 0);
      for (int k = j; k < p; ++k) Set<Real>(w.row, w.row_lo, k, 0, Real(0.0));
      Set<Real>(w.row, w.row_lo, j, 0, a);
      Set<Real>(w.row, w.row_lo, p, 0, a * theta_j);
      Annihilate<Real>(w.r, w.r_lo, w.z, w.z_lo, w.row, w.row_lo, j, p, &unused);
    }
    const Real sw = (weight == 1.0) ? Real(1.0) : Sqrt(Real(weight));
    for (int k = 0; k < p; ++k) {
      Set<Real>(w.row, w.row_lo, k, 0, Widen<Real>(s.x[k], x_lo ? x_lo + k : nullptr) * sw);
    }
    Set<Real>(w.row, w.row_lo, p, 0, Widen<Real>(s.y, x_lo ? &y_lo : nullptr) * sw);
    *cprod = 1.0;
    return Annihilate<Real>(w.r, w.r_lo, w.z, w.z_lo, w.row, w.row_lo, 0, p, cprod);
  };

  double cprod = 1.0;
  const Real eta = run(s.weight, &cprod);
  const double eta_d = ToDouble(eta);
  double h = 1.0;
  Real eta_used = eta;
  if (options_.robust && have_pred) {
    const double u = eta_d / std::sqrt(s2_prev);
    if (std::fabs(u) > options_.huber_k) {
      h = options_.huber_k / std::fabs(u);
      double cprod_h = 1.0;
      eta_used = run(s.weight * h, &cprod_h);
    }
  }
  Real rss_new = MakeReal<Real>(cur.rss, cur.rss_lo);
  if (forget) rss_new = rss_new * Real(lambda);
  rss_new += eta_used * eta_used;

  // Check before committing: every new entry finite.
  double sum = ToDouble(rss_new) + eta_d + cprod;
  for (int k = 0; k < p; ++k) {
    sum += w.z(k);
    for (int i = 0; i <= k; ++i) sum += w.r(i, k);
  }
  if (!std::isfinite(sum)) {
    return Status::Error(ErrorCode::kNumericalFailure,
                         "update would overflow (regressor or response too large for the state)");
  }

  // Outputs from the state before this observation.
  const double sw = std::sqrt(s.weight);
  const bool pred_ok = have_pred && cprod > 0.0;
  Innovation inn;
  if (pred_ok && (out || check)) {
    const double inv_scale = 1.0 / (sw * cprod);
    const double sd = std::sqrt(s2_prev);
    inn.valid = true;
    inn.residual = eta_d * inv_scale;
    inn.prediction = (s.y + y_lo) - inn.residual;
    inn.predictive_sd = sd * inv_scale;
    inn.standardized = eta_d / sd;
    inn.log_predictive =
        StudentTLogDensity(inn.standardized, dof_prev) - std::log(inn.predictive_sd);
  }
  if (check) {
    if (Status c = check->check(check->context, inn); !c.ok()) return c;
  }

  // Commit in place, keeping what it replaces: R and z trade places with the work copy (upper
  // triangles only), the scalars are saved. The new state must pass Validate (what Restore checks),
  // else everything goes back.
  const double old_rss = cur.rss, old_rss_lo = cur.rss_lo;
  const double old_n_eff = cur.n_eff, old_n_obs = cur.n_obs;
  const double old_trace = cur.trace, old_trace_identified = cur.trace_identified;
  const double old_previous_time = cur.previous_time, old_anchor = cur.anchor;
  const bool old_identified = cur.identified;
  auto swap_factor = [&] {
    for (int k = 0; k < p; ++k) {
      for (int i = 0; i <= k; ++i) std::swap(state_.r(i, k), w.r(i, k));
      std::swap(state_.z(k), w.z(k));
      if constexpr (kExt) {
        for (int i = 0; i <= k; ++i) std::swap(state_.r_lo(i, k), w.r_lo(i, k));
        std::swap(state_.z_lo(k), w.z_lo(k));
      }
    }
  };
  double x2 = 0.0;
  for (int k = 0; k < p; ++k) x2 += s.x[k] * s.x[k];
  swap_factor();
  if constexpr (kExt) {
    state_.rss = rss_new.hi;
    state_.rss_lo = rss_new.lo;
  } else {
    state_.rss = rss_new;
  }
  state_.n_eff = lambda * state_.n_eff + s.weight * h;
  state_.n_obs += 1.0;
  state_.trace = trace_forgotten + a2 + s.weight * h * x2;
  if (!std::isnan(s.time)) {
    state_.previous_time =
        std::isnan(state_.previous_time) ? s.time : std::max(state_.previous_time, s.time);
  }
  if (anchor) state_.anchor = static_cast<double>((j + 1) % p);
  if (!state_.identified && RankTest(state_.r)) {
    state_.identified = true;
    state_.trace_identified = state_.trace;
  }
  if (Status v = Validate(state_); !v.ok()) {
    swap_factor();
    state_.rss = old_rss;
    state_.rss_lo = old_rss_lo;
    state_.n_eff = old_n_eff;
    state_.n_obs = old_n_obs;
    state_.trace = old_trace;
    state_.trace_identified = old_trace_identified;
    state_.previous_time = old_previous_time;
    state_.anchor = old_anchor;
    state_.identified = old_identified;
    return Status::Error(ErrorCode::kNumericalFailure,
                         "update would leave an invalid state: " + v.message());
  }

  if (out) *out = inn;
  if (rr) {
    RecursiveResidual res;
    res.valid = old_identified && cprod > 0.0;
    res.value = res.valid ? eta_d : kNaN;
    res.robust_weight = h;
    res.lambda = lambda;
    *rr = res;
  }
  return Status::Ok();
}

template <int P>
bool RecursiveLeastSquares<P>::RankTest(const Matrix& r) const {
  const int p = kDynamic ? state_.p : P;
  for (int j = 0; j < p; ++j) {
    double norm2 = 0.0;
    for (int i = 0; i <= j; ++i) norm2 += r(i, j) * r(i, j);
    if (!(std::fabs(r(j, j)) > options_.rank_tolerance * std::sqrt(norm2))) return false;
  }
  return true;
}

template <int P>
Status RecursiveLeastSquares<P>::InflateUncertainty(double factor) {
  if (!(factor > 1.0) || !std::isfinite(factor)) {
    return Status::Error(ErrorCode::kInvalidConfig,
                         "inflation factor must be finite and > 1, got " + std::to_string(factor));
  }
  using namespace rls_detail;
  const int p = state_.p;
  if (state_.extended) {
    const DoubleDouble g = DoubleDouble(1.0) / Sqrt(DoubleDouble(factor));
    for (int k = 0; k < p; ++k) {
      for (int i = 0; i <= k; ++i)
        Set<DoubleDouble>(state_.r, state_.r_lo, i, k,
                          Get<DoubleDouble>(state_.r, state_.r_lo, i, k) * g);
      Set<DoubleDouble>(state_.z, state_.z_lo, k, 0,
                        Get<DoubleDouble>(state_.z, state_.z_lo, k, 0) * g);
    }
  } else {
    const double g = 1.0 / std::sqrt(factor);
    state_.r.template triangularView<Eigen::Upper>() *= g;
    state_.z *= g;
  }
  state_.trace /= factor;
  state_.trace_identified /= factor;
  return Status::Ok();
}

}  // namespace bayline::est
