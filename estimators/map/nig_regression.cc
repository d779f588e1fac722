#include "estimators/map/nig_regression.h"

#include <cassert>
#include <cmath>
#include <limits>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/core/t_log_density.h"
#include "estimators/map/posterior_util.h"

namespace bayline::est {

using map_internal::AbsorbRow;
using map_internal::kInf;

namespace {
constexpr double kDefaultPrecision = 1e-6;
constexpr int kMaxP = 10000;
// A diagonal of R below this fraction of its column's norm counts as rank deficient.
constexpr double kRankTol = 64 * std::numeric_limits<double>::epsilon();
}  // namespace

template <int P>
Status NigRegression<P>::Options::Validate() const {
  if (p < 1 || p > kMaxP || (P != Eigen::Dynamic && p != P)) {
    return map_internal::Config("p = " + std::to_string(p) + " does not fit this regression");
  }
  if (!flat_prior) {
    const auto n = static_cast<std::size_t>(p);
    if (!prior_mean.empty() && prior_mean.size() != n) {
      return map_internal::Config("prior_mean must have p entries");
    }
    for (double v : prior_mean) {
      if (!std::isfinite(v)) return map_internal::Config("prior_mean has a non-finite entry");
    }
    if (!prior_precision.empty() && prior_precision.size() != n) {
      return map_internal::Config("prior_precision must have p entries");
    }
    for (double v : prior_precision) {
      if (!(v > 0) || !std::isfinite(v)) {
        return map_internal::Config("prior_precision entries must be > 0 and finite");
      }
    }
    if (!(a0 > 0) || !std::isfinite(a0)) return map_internal::Config("a0 must be > 0 and finite");
    if (!(b0 > 0) || !std::isfinite(b0)) return map_internal::Config("b0 must be > 0 and finite");
  }
  return discount.Validate();
}

template <int P>
NigRegression<P>::NigRegression(const Options& options) : options_(options), p_(options.p) {
  assert(options.Validate().ok());
  const int n = p_ + 1;
  prior_factor_.setZero(n, n);
  if (options_.flat_prior) {
    prior_a_ = -0.5 * p_;
  } else {
    for (int i = 0; i < p_; ++i) {
      const double lam =
          options_.prior_precision.empty() ? kDefaultPrecision : options_.prior_precision[i];
      const double m0 = options_.prior_mean.empty() ? 0.0 : options_.prior_mean[i];
      prior_factor_(i, i) = std::sqrt(lam);
      prior_factor_(i, p_) = std::sqrt(lam) * m0;
    }
    prior_factor_(p_, p_) = std::sqrt(2.0 * options_.b0);
    prior_a_ = options_.a0;
  }
  state_.factor = prior_factor_;
  state_.a = prior_a_;
  work_.resize(n, n);
  row_.resize(n);
}

template <int P>
bool NigRegression<P>::FullRank(const AugMatrix& F, int p) {
  for (int k = 0; k < p; ++k) {
    const double col = F.col(k).head(k + 1).norm();
    if (!(F(k, k) > kRankTol * col) || !(col > 0)) return false;
  }
  return true;
}

template <int P>
bool NigRegression<P>::proper() const {
  return state_.a > 0 && b() > 0 && FullRank(state_.factor, p_);
}

template <int P>
double NigRegression<P>::b() const {
  const double f = state_.factor(p_, p_);
  return 0.5 * f * f;
}

template <int P>
typename NigRegression<P>::Vector NigRegression<P>::mean() const {
  const auto R = state_.factor.topLeftCorner(p_, p_).template triangularView<Eigen::Upper>();
  Vector m = state_.factor.col(p_).head(p_);
  R.solveInPlace(m);
  return m;
}

template <int P>
typename NigRegression<P>::Matrix NigRegression<P>::precision_inverse() const {
  Matrix rinv = Matrix::Identity(p_, p_);
  state_.factor.topLeftCorner(p_, p_).template triangularView<Eigen::Upper>().solveInPlace(rinv);
  return rinv * rinv.transpose();
}

template <int P>
Status NigRegression<P>::Update(const Sample& s, Innovation* out) {
  if (Status st = CheckCommonFields(s, static_cast<std::size_t>(p_)); !st.ok()) return st;
  const double delta = ForgettingFactor(options_.discount, s.time, state_.last_time);

  // Discount toward the prior: the rows sqrt(1 - delta) F0 absorbed into sqrt(delta) F.
  work_ = state_.factor;
  double a = state_.a;
  if (delta < 1.0) {
    work_ *= std::sqrt(delta);
    a = delta * a + (1.0 - delta) * prior_a_;
    const double c = std::sqrt(1.0 - delta);
    for (int i = 0; i <= p_; ++i) {
      row_ = c * prior_factor_.row(i);
      AbsorbRow(work_, row_, i);
    }
  }

  // Predictive from the discounted posterior (before the observation).
  const double sw = std::sqrt(s.weight);
  Innovation inn;
  const double bb = 0.5 * work_(p_, p_) * work_(p_, p_);
  if (a > 0 && bb > 0 && FullRank(work_, p_)) {
    for (int i = 0; i < p_; ++i) row_(i) = s.x[i];
    auto u = row_.head(p_).transpose();  // becomes R^{-T} x
    work_.topLeftCorner(p_, p_).template triangularView<Eigen::Upper>().transpose().solveInPlace(u);
    const double q = u.squaredNorm();
    const double f = u.dot(work_.col(p_).head(p_));
    const double nu = 2.0 * a;
    const double scale = std::sqrt(bb / a * (1.0 / s.weight + q));
    const double t = (s.y - f) / scale;
    inn.valid = true;
    inn.prediction = f;
    inn.residual = s.y - f;
    inn.predictive_sd = nu > 2 ? scale * std::sqrt(nu / (nu - 2)) : kInf;
    // The normal score costs an incomplete beta and a normal quantile; only a caller that asked
    // for the innovation reads it.
    if (out) inn.standardized = map_internal::StudentTNormalScore(t, nu);
    inn.log_predictive = StudentTLogDensity(t, nu) - std::log(scale);
    if (!std::isfinite(inn.log_predictive) || (out && !std::isfinite(inn.standardized))) {
      return map_internal::Numerical("predictive density not finite");
    }
  }

  // Absorb the observation row sqrt(w) [x', y].
  for (int i = 0; i < p_; ++i) row_(i) = sw * s.x[i];
  row_(p_) = sw * s.y;
  AbsorbRow(work_, row_, 0);
  a += 0.5;
  if (!work_.allFinite()) return map_internal::Numerical("posterior factor not finite");

  // Commit in place (the factor trades places with the work copy), keeping the old values until
  // the new state passes Validate, the check Restore applies.
  const double old_a = state_.a, old_effective_n = state_.effective_n;
  const double old_log_marginal = state_.log_marginal, old_count = state_.count;
  const double old_last_time = state_.last_time;
  state_.factor.swap(work_);
  state_.a = a;
  state_.effective_n = delta * state_.effective_n + s.weight;
  if (inn.valid) state_.log_marginal += inn.log_predictive;
  state_.count += 1;
  state_.last_time = map_internal::LatestTime(state_.last_time, s.time);
  if (Status v = Validate(state_); !v.ok()) {
    state_.factor.swap(work_);
    state_.a = old_a;
    state_.effective_n = old_effective_n;
    state_.log_marginal = old_log_marginal;
    state_.count = old_count;
    state_.last_time = old_last_time;
    return map_internal::InvalidNext(v);
  }
  if (out) *out = inn;
  return Status::Ok();
}

template <int P>
ParameterReport NigRegression<P>::Report(double level) const {
  ParameterReport r;
  const auto n = static_cast<std::size_t>(p_);
  r.value.assign(n, kNaN);
  r.std_error.assign(n, kNaN);
  r.lower.assign(n, kNaN);
  r.upper.assign(n, kNaN);
  r.posterior_mean.assign(n, kNaN);
  r.level = level;
  r.effective_n = state_.effective_n;
  r.log_likelihood = state_.log_marginal;
  if (!proper()) return r;
  const double a = state_.a, bb = b(), nu = 2 * a;
  const Vector m = mean();
  Matrix rinv = Matrix::Identity(p_, p_);
  state_.factor.topLeftCorner(p_, p_).template triangularView<Eigen::Upper>().solveInPlace(rinv);
  const double tq =
      map_internal::LevelOk(level) ? dist::StudentTQuantile(0.5 + 0.5 * level, nu) : kNaN;
  bool finite_sd = a > 1;
  for (int j = 0; j < p_; ++j) {
    const double d = rinv.row(j).squaredNorm();  // (Lambda^{-1})_jj
    const double scale = std::sqrt(bb / a * d);
    r.value[j] = m(j);
    r.posterior_mean[j] = nu > 1 ? m(j) : kNaN;
    r.std_error[j] = a > 1 ? std::sqrt(bb / (a - 1) * d) : kInf;
    r.lower[j] = m(j) - tq * scale;
    r.upper[j] = m(j) + tq * scale;
    finite_sd = finite_sd && std::isfinite(r.std_error[j]);
  }
  r.identifiable = finite_sd;
  return r;
}

template <int P>
Prediction NigRegression<P>::Predict(std::span<const double> x, double level) const {
  Prediction pr;
  pr.level = level;
  if (x.size() != static_cast<std::size_t>(p_) || !map_internal::LevelOk(level) || !proper()) {
    return pr;
  }
  Vector u = Vector::Zero(p_);
  for (int i = 0; i < p_; ++i) {
    if (!std::isfinite(x[i])) return pr;
    u(i) = x[i];
  }
  state_.factor.topLeftCorner(p_, p_)
      .template triangularView<Eigen::Upper>()
      .transpose()
      .solveInPlace(u);
  const double q = u.squaredNorm();
  const double a = state_.a, bb = b(), nu = 2 * a;
  const double scale = std::sqrt(bb / a * (1.0 + q));
  const double tq = dist::StudentTQuantile(0.5 + 0.5 * level, nu);
  pr.mean = u.dot(state_.factor.col(p_).head(p_));
  pr.mean_sd = a > 1 ? std::sqrt(bb / (a - 1) * q) : kInf;
  pr.sd = nu > 2 ? scale * std::sqrt(nu / (nu - 2)) : kInf;
  pr.lower = pr.mean - tq * scale;
  pr.upper = pr.mean + tq * scale;
  pr.valid = std::isfinite(pr.mean) && std::isfinite(pr.lower) && std::isfinite(pr.upper);
  return pr;
}

template <int P>
void NigRegression<P>::State::Pack(StateWriter& w) const {
  w.Put(static_cast<double>(factor.rows() - 1));
  w.Put(factor);
  w.Put(a);
  w.Put(effective_n);
  w.Put(log_marginal);
  w.Put(count);
  w.Put(last_time);
}

template <int P>
Status NigRegression<P>::State::Unpack(StateReader& r) {
  double pd = 0;
  if (!r.Get(pd)) return r.status();
  if (!(pd >= 1 && pd <= kMaxP) || pd != std::floor(pd) || (P != Eigen::Dynamic && pd != P)) {
    return map_internal::BadState("regression state has p = " + std::to_string(pd));
  }
  const int n = static_cast<int>(pd) + 1;
  factor.resize(n, n);
  r.Get(factor);
  r.Get(a);
  r.Get(effective_n);
  r.Get(log_marginal);
  r.Get(count);
  r.Get(last_time);
  return r.status();
}

template <int P>
Status NigRegression<P>::Validate(const State& s) const {
  if (s.factor.rows() != p_ + 1 || s.factor.cols() != p_ + 1) {
    return map_internal::BadState("regression state has the wrong size");
  }
  if (!s.factor.allFinite() || !std::isfinite(s.a)) {
    return map_internal::BadState("regression state not finite");
  }
  for (int j = 0; j <= p_; ++j) {
    if (s.factor(j, j) < 0) return map_internal::BadState("factor has a negative diagonal");
    for (int i = j + 1; i <= p_; ++i) {
      if (s.factor(i, j) != 0) return map_internal::BadState("factor is not upper triangular");
    }
  }
  return map_internal::CheckBookkeeping(s.effective_n, s.log_marginal, s.count, s.last_time);
}

template <int P>
Status NigRegression<P>::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

template class NigRegression<1>;
template class NigRegression<2>;
template class NigRegression<3>;
template class NigRegression<4>;
template class NigRegression<Eigen::Dynamic>;

}  // namespace bayline::est
