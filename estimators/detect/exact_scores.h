// ExactScoreStandardizer: turns each observation of a poisson, binomial, exponential or gamma
// channel into a score z that is N(0, 1) and independent across observations while the channel is
// in control, whatever the unknown parameters, from the second observation on (gamma: from the
// third, approximately, see below); and of a logistic or poisson_regression channel into the
// randomized normal score of the plug-in predictive. Detectors calibrated for N(0, 1) i.i.d. input
// then keep their in-control ARL on every family.
//
// Self-starting (Phase I), by the conditional probability integral transform on the sufficient
// statistic (O'Reilly and Quesenberry 1973, Ann. Statist. 1, 74-83; Quesenberry's Q charts, J.
// Qual. Technol. 23, 1991; references from memory): with T_n the statistic of y_1..y_n, the law of
// y_n given T_n does not depend on the parameters, and u_n = F(y_n | T_n) (randomized when
// discrete: u = F(y - 1) + V P(y), score_tails.h) are i.i.d. U(0, 1); z_n = Phi^{-1}(u_n).
//   poisson, exposure e_i:  y_n | T_n ~ Binomial(T_n, e_n / (e_1 + ... + e_n)),  T_n = sum y_i.
//                           (T_n = 0 gives u = V: still exactly uniform, but carries nothing.)
//   binomial, trials m_i:   y_n | T_n ~ Hypergeometric(population m_1 + ... + m_n, successes T_n,
//                           draws m_n).
//   exponential:            y_n / T_n ~ Beta(1, n - 1):  u = 1 - (1 - y_n / T_n)^(n - 1), from
//                           log1p, both tails at full precision.
//   gamma (unknown shape k and rate): given k, y_n / T_n ~ Beta(k, (n - 1) k) whatever the rate,
//                           independent of the ratios y_1..y_{n-1} / T_{n-1} (Lukacs). k is not
//                           known: up to n - 1 = 500 it is integrated out, u = the mean of
//                           I_r(k, (n - 1) k) over the posterior of k given those ratios (their
//                           Dirichlet(k, ..., k) likelihood, prior dk / k; 64-node trapezoid rule
//                           in log k, about 25 us); beyond, k is the conditional ML shape of
//                           y_1..y_{n-1} (the mode of that likelihood). Not exact: first score at
//                           n = 3 (later while all earlier y are equal). In-control z measured
//                           (exact_scores_test.cc) at positions 3..6 / 3..20 / 21..100 / 1001..
//                           2500: variance 1.12 / 1.04 / 1.01 / 1.00 (shape 0.5), 1.09 / 1.03 /
//                           1.00 / 1.00 (shape 3); |mean| < 0.035. The plug-in ML shape instead
//                           gives variance 19-21 at 3..6 and 1.05 at 21..100 (over-confident).
//   first observation: no score (NaN); the conditional law is degenerate.
// Plug-in predictive (logistic, poisson_regression): z is the randomized normal score of y under
// Binomial(trials, predicted_mean / trials), resp. Poisson(predicted_mean), where predicted_mean is
// the watched estimator's E[y] under its estimate from BEFORE this observation (est::Innovation::
// prediction of GlmMl, valid once the fit is determined; NaN gives no score). Exact given the
// parameters; with estimated ones asymptotically exact.
// Known parameters (Phase II, options.known): the same transforms under the given in-control law:
//   poisson Poisson(mean * exposure); binomial Binomial(trials, mean); exponential with mean
//   `mean`; gamma with mean `mean` and sd `sd` (shape (mean / sd)^2). logistic /
//   poisson_regression: the predictive as above (known parameters do not apply).
//
// Sums are plain double sums (counts are exact to 2^53; exposures, y and log y sums carry relative
// rounding about n * 1e-16). The observation weight is ignored (each observation counts once).
// Randomization: V for the i-th randomized score is CounterUniform(seed, i) (score_tails.h); seed
// and i are part of the packed state, so a restored standardizer continues bit-identically.
// Cost per observation: O(1) special-function calls (hypergeometric: score_tails.h; gamma up to
// n = 501: 64 incomplete betas).
// Thread safety: none (one owner per object).
#pragma once

#include <cstdint>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::est {

enum class ScoreFamily : uint8_t {
  kPoisson,
  kBinomial,
  kExponential,
  kGamma,
  kLogistic,
  kPoissonRegression
};

struct ExactScoreOptions {
  ScoreFamily family = ScoreFamily::kPoisson;
  bool known = false;  // Phase II: score against mean / sd below instead of self-starting
  double mean = 1.0;   // poisson rate per unit exposure, binomial p, exponential / gamma mean
  double sd = 1.0;     // gamma only
  // Whether the known parameters fit the family (mean > 0 finite; binomial mean < 1; gamma sd > 0
  // finite). Ok when !known.
  Status Validate() const;
};

class ExactScoreStandardizer {
 public:
  // Largest seed and count held (integers in doubles).
  static constexpr double kMaxInteger = 9007199254740992.0;  // 2^53

  struct State {
    double count = 0;    // observations absorbed
    double sum_y = 0;    // of y (poisson, binomial, exponential, gamma)
    double sum_aux = 0;  // of exposure (poisson), trials (binomial), log y (gamma)
    double seed = 0;     // of the randomization stream, integer in [0, 2^53)
    double draws = 0;    // uniforms used so far, integer in [0, 2^53)

    void Pack(StateWriter& w) const;
    // Reads exactly its own values. kInvalidState on a short input or impossible values (*this may
    // then be partly overwritten: unpack into a temporary).
    Status Unpack(StateReader& r);
  };

  // seed: any value; its low 53 bits key the randomization. Precondition: options valid
  // (asserted); a caller with unvalidated options checks Validate first.
  ExactScoreStandardizer(const ExactScoreOptions& options, uint64_t seed);

  // Scores s (and absorbs it, self-starting). predicted_mean: logistic / poisson_regression only
  // (E[y] before this observation; NaN: no score). *z = NaN when no score exists yet. Bad input
  // (y or trials not whole, y outside its support, exposure <= 0, y <= 0 for exponential / gamma):
  // kOutOfDomain; a sum that would pass 2^53 (counts) or overflow: kNumericalFailure. On error
  // nothing changes.
  Status Update(const Sample& s, double predicted_mean, double* z);

  const State& state() const { return state_; }
  const ExactScoreOptions& options() const { return options_; }
  static Status Validate(const State& s);
  // Validate, then replaces; on error no change.
  Status Restore(const State& s);

 private:
  Status CheckSample(const Sample& s) const;
  double NextUniform(State* next) const;
  double KnownScore(const Sample& s, State* next) const;
  double SelfStartingScore(const Sample& s, State* next) const;

  ExactScoreOptions options_;
  State state_;
};

}  // namespace bayline::est
