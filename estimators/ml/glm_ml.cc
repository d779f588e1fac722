#include "estimators/ml/glm_ml.h"

#include <algorithm>
#include <cmath>
#include <string>

#include "estimators/core/special_functions.h"
#include "estimators/ml/ml_common.h"

namespace bayline::est {

namespace {

// log(1 + e^z) without overflow or loss for large |z|.
double Softplus(double z) { return z > 0 ? z + std::log1p(std::exp(-z)) : std::log1p(std::exp(z)); }

// Appends the row `row` (destroyed) to the upper-triangular factor r (R'R += row row') with Givens
// rotations, O(p^2).
void AddRow(Eigen::MatrixXd& r, Eigen::VectorXd& row) {
  const Eigen::Index p = r.rows();
  for (Eigen::Index i = 0; i < p; ++i) {
    const double b = row(i);
    if (b == 0.0) continue;
    const double a = r(i, i);
    double h = std::sqrt(a * a + b * b);  // std::hypot is several times slower; it is only
    if (!std::isfinite(h) || h == 0.0)
      h = std::hypot(a, b);  // needed when the squares over/underflow
    const double c = a / h, s = b / h;
    r(i, i) = h;
    for (Eigen::Index j = i + 1; j < p; ++j) {
      const double t = r(i, j);
      r(i, j) = c * t + s * row(j);
      row(j) = c * row(j) - s * t;
    }
  }
}

// step <- (R'R)^{-1} step by two triangular solves.
void SolveInformation(const Eigen::MatrixXd& r, Eigen::VectorXd& step) {
  r.triangularView<Eigen::Upper>().transpose().solveInPlace(step);
  r.triangularView<Eigen::Upper>().solveInPlace(step);
}

}  // namespace

// Binomial with the logit link. aux = trials m.
struct LogitFamily {
  static constexpr const char* kName = "logistic";
  static double Offset(double /*aux*/) { return 0.0; }
  static void Moments(double eta, double m, double* mean, double* var) {
    const double p = 1.0 / (1.0 + std::exp(-eta));
    *mean = m * p;
    *var = m * p * (1.0 - p);
  }
  // log P(y | eta) without the binomial coefficient.
  // y log p + (m - y) log(1 - p) with log p = -softplus(-eta), log(1 - p) = -eta - softplus(-eta).
  static double LogKernel(double y, double eta, double m) {
    return -m * Softplus(-eta) - (m - y) * eta;
  }
  static double LogConst(double y, double m) {
    if (y == 0.0 || y == m) return 0.0;
    return ml_internal::LogFactorial(m) - ml_internal::LogFactorial(y) -
           ml_internal::LogFactorial(m - y);
  }
  static Status CheckDomain(const Sample& s) {
    if (!(s.trials >= 1) || !ml_internal::IsWholeNumber(s.trials)) {
      return Status::Error(ErrorCode::kOutOfDomain,
                           "trials must be a whole number >= 1, got " + std::to_string(s.trials));
    }
    if (!(s.y >= 0) || !ml_internal::IsWholeNumber(s.y)) {
      return Status::Error(ErrorCode::kOutOfDomain,
                           "successes must be a whole number >= 0, got " + std::to_string(s.y));
    }
    if (s.y > s.trials) {
      return Status::Error(
          ErrorCode::kOutOfDomain,
          "successes " + std::to_string(s.y) + " exceed trials " + std::to_string(s.trials));
    }
    return Status::Ok();
  }
  static double Aux(const Sample& s) { return s.trials; }
};

// Poisson with the log link and offset log(exposure). aux = exposure e.
struct PoissonLogFamily {
  static constexpr const char* kName = "poisson_regression";
  static double Offset(double e) { return std::log(e); }
  static void Moments(double eta, double /*e*/, double* mean, double* var) {
    *mean = std::exp(eta);
    *var = *mean;
  }
  static double LogKernel(double y, double eta, double /*e*/) {
    return (y > 0 ? y * eta : 0.0) - std::exp(eta);
  }
  static double LogConst(double y, double /*e*/) { return -ml_internal::LogFactorial(y); }
  static Status CheckDomain(const Sample& s) {
    if (!(s.y >= 0) || !ml_internal::IsWholeNumber(s.y)) {
      return Status::Error(ErrorCode::kOutOfDomain,
                           "poisson count must be a whole number >= 0, got " + std::to_string(s.y));
    }
    if (!(s.exposure > 0)) {
      return Status::Error(ErrorCode::kOutOfDomain,
                           "exposure must be > 0, got " + std::to_string(s.exposure));
    }
    return Status::Ok();
  }
  static double Aux(const Sample& s) { return s.exposure; }
};

Status GlmMlOptions::Validate() const {
  if (num_regressors < 1 || num_regressors > kMaxRegressors) {
    return Status::Error(ErrorCode::kInvalidConfig,
                         "num_regressors must be in 1..64, got " + std::to_string(num_regressors));
  }
  if (!(prior_precision > 0) || !std::isfinite(prior_precision)) {
    return Status::Error(ErrorCode::kInvalidConfig, "prior_precision must be finite and > 0");
  }
  if (startup_observations != 0 &&
      (startup_observations < num_regressors || startup_observations > kMaxStartupRows)) {
    return Status::Error(ErrorCode::kInvalidConfig,
                         "startup_observations must be 0 (automatic) or in p..100000");
  }
  return forgetting.Validate();
}

std::size_t GlmMlOptions::StartupRows() const {
  return startup_observations != 0 ? startup_observations
                                   : std::max<std::size_t>(20, 10 * num_regressors);
}

std::size_t GlmMlOptions::StartupCapacity() const { return kStartupCapacityFactor * StartupRows(); }

// ---- State ----

template <typename Family>
void GlmMl<Family>::State::Pack(StateWriter& w) const {
  w.Put(static_cast<double>(theta.size()));
  w.Put(static_cast<double>(startup.cols()));
  w.Put(theta);
  w.Put(r);
  w.Put(prior_weight);
  w.Put(log_likelihood);
  w.Put(weight_sum);
  w.Put(count);
  w.Put(last_time);
  w.Put(started);
  w.Put(determined);
  w.Put(startup_rows);
  const auto used = static_cast<Eigen::Index>(startup_rows);
  if (used > 0 && used <= startup.cols()) w.Put(startup.leftCols(used));
}

template <typename Family>
Status GlmMl<Family>::State::Unpack(StateReader& rd) {
  double p = 0, n0 = 0;
  rd.Get(p);
  rd.Get(n0);
  if (!rd.status(false).ok()) return rd.status(false);
  if (!(p >= 1 && p <= GlmMlOptions::kMaxRegressors && p == std::floor(p)) ||
      !(n0 >= 0 && n0 <= GlmMlOptions::kMaxStartupRows * GlmMlOptions::kStartupCapacityFactor &&
        n0 == std::floor(n0))) {
    return Status::Error(ErrorCode::kInvalidState, "glm state has an invalid size");
  }
  const auto pi = static_cast<Eigen::Index>(p);
  theta.resize(pi);
  r.resize(pi, pi);
  startup.setZero(pi + 3, static_cast<Eigen::Index>(n0));
  rd.Get(theta);
  rd.Get(r);
  rd.Get(prior_weight);
  rd.Get(log_likelihood);
  rd.Get(weight_sum);
  rd.Get(count);
  rd.Get(last_time);
  rd.Get(started);
  rd.Get(determined);
  rd.Get(startup_rows);
  if (!rd.status(false).ok()) return rd.status(false);
  if (!(startup_rows >= 0 && startup_rows <= n0 && startup_rows == std::floor(startup_rows))) {
    return Status::Error(ErrorCode::kInvalidState, "glm state: start-up row count out of range");
  }
  for (Eigen::Index j = 0; j < static_cast<Eigen::Index>(startup_rows); ++j) {
    Eigen::VectorXd col(pi + 3);
    rd.Get(col);
    startup.col(j) = col;
  }
  Status s = rd.status();
  if (!s.ok()) return s;
  return Validate();
}

template <typename Family>
Status GlmMl<Family>::State::Validate() const {
  const auto bad = [](const std::string& why) {
    return Status::Error(ErrorCode::kInvalidState, why);
  };
  const Eigen::Index p = theta.size();
  if (p < 1 || r.rows() != p || r.cols() != p || startup.rows() != p + 3 ||
      (started != (startup.cols() == 0))) {
    return bad("glm state: inconsistent sizes");
  }
  if (!theta.allFinite() || !r.allFinite()) return bad("glm state: non-finite estimate or factor");
  for (Eigen::Index i = 0; i < p; ++i) {
    if (!(r(i, i) > 0)) return bad("glm state: factor diagonal not positive");
    for (Eigen::Index j = 0; j < i; ++j) {
      if (r(i, j) != 0) return bad("glm state: factor not upper triangular");
    }
  }
  if (!std::isfinite(prior_weight) || !(prior_weight > 0) || !std::isfinite(log_likelihood) ||
      !std::isfinite(weight_sum) || !(weight_sum >= 0) || !std::isfinite(count) || !(count >= 0) ||
      std::isinf(last_time)) {
    return bad("glm state: invalid scalar");
  }
  if (!(startup_rows >= 0 && startup_rows <= static_cast<double>(startup.cols()))) {
    return bad("glm state: start-up row count out of range");
  }
  if (started != (startup_rows == 0 && count > 0))
    return bad("glm state: start-up flag inconsistent");
  if (determined && !started) return bad("glm state: determined before the start");
  if (!started && startup_rows != count) return bad("glm state: start-up rows and count disagree");
  const auto used = static_cast<Eigen::Index>(startup_rows);
  if (used > 0) {
    const auto block = startup.leftCols(used);
    if (!block.allFinite()) return bad("glm state: non-finite start-up row");
    for (Eigen::Index j = 0; j < used; ++j) {
      if (!(block(p + 2, j) > 0) || !(block(p + 1, j) > 0) || block(p, j) < 0) {
        return bad("glm state: invalid start-up row");
      }
    }
  }
  return Status::Ok();
}

// ---- Estimator ----

template <typename Family>
GlmMl<Family>::GlmMl(const Options& options) : options_(options), p_(options.num_regressors) {
  const auto p = static_cast<Eigen::Index>(p_);
  state_.theta.setZero(p);
  state_.r = Eigen::MatrixXd::Identity(p, p) * std::sqrt(options_.prior_precision);
  state_.prior_weight = options_.prior_precision;
  state_.startup.setZero(p + 3, static_cast<Eigen::Index>(options_.StartupCapacity()));
  scratch_theta_.setZero(p);
  scratch_trial_.setZero(p);
  scratch_grad_.setZero(p);
  scratch_step_.setZero(p);
  scratch_row_.setZero(p);
  scratch_r_.setZero(p, p);
  scratch_inv_.setZero(p, p);
}

template <typename Family>
bool GlmMl<Family>::WellDetermined(const Eigen::MatrixXd& r, double prior_weight,
                                   Eigen::MatrixXd& work) {
  work.setIdentity();
  r.triangularView<Eigen::Upper>().solveInPlace(work);  // R^{-1}
  const double trace = work.squaredNorm();              // trace(R^{-1} R^{-T}) = trace(I^{-1})
  return std::isfinite(trace) && trace * prior_weight < 1e-3;
}

template <typename Family>
Status GlmMl<Family>::CheckDomain(const Sample& s) const {
  Status st = CheckCommonFields(s, p_);
  if (!st.ok()) return st;
  return Family::CheckDomain(s);
}

template <typename Family>
bool GlmMl<Family>::FitStartup(std::size_t columns, double old_scale, double prior_weight) {
  const auto p = static_cast<Eigen::Index>(p_);
  const auto n = static_cast<Eigen::Index>(columns);
  const auto& buf = state_.startup;
  const auto weight = [&](Eigen::Index j) {
    return j + 1 < n ? old_scale * buf(p + 2, j) : buf(p + 2, j);
  };
  // Penalised log-likelihood kernel (no constants).
  const auto objective = [&](const Eigen::VectorXd& th) {
    double q = -0.5 * prior_weight * th.squaredNorm();
    for (Eigen::Index j = 0; j < n; ++j) {
      const double aux = buf(p + 1, j);
      const double eta = buf.col(j).head(p).dot(th) + Family::Offset(aux);
      q += weight(j) * Family::LogKernel(buf(p, j), eta, aux);
    }
    return q;
  };
  const double root_prior = std::sqrt(prior_weight);
  // Builds R and the gradient at scratch_theta_.
  const auto linearise = [&]() {
    scratch_r_.setZero();
    scratch_r_.diagonal().setConstant(root_prior);
    scratch_grad_ = -prior_weight * scratch_theta_;
    for (Eigen::Index j = 0; j < n; ++j) {
      const double aux = buf(p + 1, j);
      const double eta = buf.col(j).head(p).dot(scratch_theta_) + Family::Offset(aux);
      double mean = 0, var = 0;
      Family::Moments(eta, aux, &mean, &var);
      const double a = weight(j);
      scratch_grad_ += (a * (buf(p, j) - mean)) * buf.col(j).head(p);
      scratch_row_ = std::sqrt(a * var) * buf.col(j).head(p);
      AddRow(scratch_r_, scratch_row_);
    }
  };

  scratch_theta_.setZero();
  double q = objective(scratch_theta_);
  for (int it = 0; it < 100; ++it) {
    linearise();
    scratch_step_ = scratch_grad_;
    SolveInformation(scratch_r_, scratch_step_);
    const double decrement = scratch_grad_.dot(scratch_step_);  // Newton decrement squared
    if (!std::isfinite(decrement)) return false;
    if (decrement < 1e-20 * (1.0 + std::fabs(q))) break;
    double t = 1.0;
    bool improved = false;
    for (int half = 0; half < 60; ++half, t *= 0.5) {
      scratch_trial_ = scratch_theta_ + t * scratch_step_;
      const double qt = objective(scratch_trial_);
      if (std::isfinite(qt) && qt >= q) {
        scratch_theta_ = scratch_trial_;
        q = qt;
        improved = true;
        break;
      }
    }
    if (!improved) break;  // at the maximum to rounding
  }
  linearise();  // information at the final estimate
  double ll = 0;
  for (Eigen::Index j = 0; j < n; ++j) {
    const double aux = buf(p + 1, j);
    const double eta = buf.col(j).head(p).dot(scratch_theta_) + Family::Offset(aux);
    ll += weight(j) * (Family::LogKernel(buf(p, j), eta, aux) + Family::LogConst(buf(p, j), aux));
  }
  scratch_ll_ = ll;
  return scratch_theta_.allFinite() && scratch_r_.allFinite() && std::isfinite(ll) &&
         (scratch_r_.diagonal().array() > 0).all();
}

template <typename Family>
Status GlmMl<Family>::Update(const Sample& s, Innovation* out) {
  Status st = CheckDomain(s);
  if (!st.ok()) return st;
  const auto p = static_cast<Eigen::Index>(p_);
  const Eigen::Map<const Eigen::VectorXd> x(s.x.data(), p);
  const double aux = Family::Aux(s);
  const double offset = Family::Offset(aux);

  const double eta = x.dot(state_.theta) + offset;  // under theta before the update
  double mean = 0, var = 0;
  Family::Moments(eta, aux, &mean, &var);
  const double log_mass = Family::LogKernel(s.y, eta, aux) + Family::LogConst(s.y, aux);
  Innovation inn;
  if (state_.started && state_.determined)
    ml_internal::FillInnovation(s.y, mean, std::sqrt(var), log_mass, &inn);

  const double f = ml_internal::StepFactor(options_.forgetting, s.time, state_.last_time);
  const double prior_weight = f * state_.prior_weight;
  const double w = s.weight;

  if (!state_.started) {
    const auto j = static_cast<Eigen::Index>(state_.startup_rows);
    // Column j is outside the state until startup_rows grows, so writing it first is safe.
    state_.startup.col(j).head(p) = x;
    state_.startup(p, j) = s.y;
    state_.startup(p + 1, j) = aux;
    state_.startup(p + 2, j) = w;
    const auto rows = static_cast<std::size_t>(j + 1);
    bool start = false;
    if (rows >= options_.StartupRows()) {
      const bool fitted = FitStartup(rows, f, prior_weight) && prior_weight > 0;
      const bool full = j + 1 == state_.startup.cols();
      if (full && !fitted) {
        return Status::Error(ErrorCode::kNumericalFailure,
                             "start-up fit did not converge to finite values");
      }
      start = full || (fitted && WellDetermined(scratch_r_, prior_weight, scratch_inv_));
    }
    // Commit.
    state_.startup.block(p + 2, 0, 1, j) *= f;
    state_.startup_rows = static_cast<double>(rows);
    if (start) {
      state_.theta = scratch_theta_;
      state_.r = scratch_r_;
      state_.log_likelihood = scratch_ll_;
      state_.started = true;
      state_.determined = WellDetermined(state_.r, prior_weight, scratch_inv_);
      state_.startup_rows = 0;
      state_.startup.resize(p + 3, 0);  // frees the buffer
    }
  } else {
    if (!std::isfinite(mean) || !std::isfinite(var)) {
      return Status::Error(ErrorCode::kNumericalFailure,
                           "linear predictor overflows: eta = " + std::to_string(eta));
    }
    scratch_r_ = std::sqrt(f) * state_.r;
    scratch_row_ = std::sqrt(w * var) * x;
    AddRow(scratch_r_, scratch_row_);
    const double score = w * (s.y - mean);
    scratch_step_ = score * x;
    SolveInformation(scratch_r_, scratch_step_);  // I^{-1} g
    const double eta_step = x.dot(scratch_step_);
    const double t = std::fabs(eta_step) > GlmMlOptions::kMaxEtaStep
                         ? GlmMlOptions::kMaxEtaStep / std::fabs(eta_step)
                         : 1.0;
    scratch_theta_ = state_.theta + t * scratch_step_;
    const double ll =
        f * state_.log_likelihood + w * log_mass + (t - 0.5 * t * t) * score * eta_step;
    if (!scratch_theta_.allFinite() || !scratch_r_.allFinite() || !std::isfinite(ll) ||
        !(prior_weight > 0)) {
      return Status::Error(ErrorCode::kNumericalFailure,
                           "scoring step is not finite at y = " + std::to_string(s.y));
    }
    state_.theta.swap(scratch_theta_);
    state_.r.swap(scratch_r_);
    state_.log_likelihood = ll;
    // O(p^3), but only until the information first passes the test.
    if (!state_.determined)
      state_.determined = WellDetermined(state_.r, prior_weight, scratch_inv_);
  }
  state_.prior_weight = prior_weight;
  state_.weight_sum = f * state_.weight_sum + w;
  state_.count += 1;
  state_.last_time = ml_internal::NextLastTime(s.time, state_.last_time);
  if (out) *out = inn;
  return Status::Ok();
}

template <typename Family>
ParameterReport GlmMl<Family>::Report(double level) const {
  ParameterReport rep;
  const auto p = static_cast<Eigen::Index>(p_);
  std::vector<double> value(p_), se(p_);
  bool ok = state_.started;
  if (ok) {
    Eigen::MatrixXd rinv(p, p);
    ok = WellDetermined(state_.r, state_.prior_weight, rinv);  // leaves R^{-1} in rinv
    for (Eigen::Index i = 0; i < p; ++i) {
      value[i] = state_.theta(i);
      se[i] = rinv.row(i).norm();  // sqrt of diag(R^{-1} R^{-T}) = diag(I^{-1})
    }
  }
  ml_internal::FillWaldReport(value, se, ok, level, &rep);
  rep.effective_n = state_.weight_sum;
  rep.log_likelihood = state_.started ? state_.log_likelihood : kNaN;
  return rep;
}

template <typename Family>
Status GlmMl<Family>::Restore(const State& state) {
  Status s = state.Validate();
  if (!s.ok()) return s;
  if (static_cast<std::size_t>(state.theta.size()) != p_ ||
      (!state.started &&
       static_cast<std::size_t>(state.startup.cols()) != options_.StartupCapacity())) {
    return Status::Error(ErrorCode::kInvalidState, "glm state sizes do not match the options");
  }
  // Copy into the existing storage (sizes match, so no reallocation of the working state).
  state_.theta = state.theta;
  state_.r = state.r;
  state_.prior_weight = state.prior_weight;
  state_.log_likelihood = state.log_likelihood;
  state_.weight_sum = state.weight_sum;
  state_.count = state.count;
  state_.last_time = state.last_time;
  state_.started = state.started;
  state_.determined = state.determined;
  state_.startup_rows = state.startup_rows;
  state_.startup = state.startup;
  return Status::Ok();
}

template class GlmMl<LogitFamily>;
template class GlmMl<PoissonLogFamily>;

}  // namespace bayline::est
