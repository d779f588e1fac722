// Reference check of Bocpd's run-length posterior against the model's definition, computed here by
// brute force and independently of the detector's recursion.
//
// Source: Adams & MacKay (2007), arXiv:0710.3742: the observations are split into segments; a new
// segment starts before each observation after the first with probability H independently
// (constant hazard); each segment draws its parameter from the conjugate prior. So the joint
// probability of a segmentation g of x_{1:t} with c changes is
//   H^c (1 - H)^(t - 1 - c) * prod_{segments} m(segment),
// with m the segment's marginal likelihood, and P(r_t = r | x_{1:t}) is the total over
// segmentations whose last segment holds r + 1 observations, divided by the total over all.
// Here every one of the 2^(t-1) segmentations is enumerated (no pruning, no recursion) and m is the
// closed-form marginal likelihood (product form, not a product of one-step predictives):
//   normal-gamma : Gamma(a_n)/Gamma(a_0) * b_0^a_0 / b_n^a_n * sqrt(kappa_0/kappa_n) * (2
//   pi)^(-n/2)
//                  (Murphy 2007, "Conjugate Bayesian analysis of the Gaussian distribution",
//                  eq. for the normal-gamma marginal likelihood; from memory)
//   gamma-poisson: prod e_i^y_i / y_i! * b_0^a_0 / Gamma(a_0) * Gamma(a_0 + Y) / (b_0 + E)^(a_0 +
//   Y) beta-binomial: prod C(n_i, y_i) * B(a_0 + Y, b_0 + N - Y) / B(a_0, b_0)
// (the last two: standard conjugate identities, common practice, no source).
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>
#include <vector>

#include "estimators/detect/bocpd.h"

namespace bayline::est {
namespace {

struct Obs {
  double y, trials = 1, exposure = 1;
};

double LogMarginal(BocpdModel model, const Bocpd::Options& o, const Obs* x, int n) {
  switch (model) {
    case BocpdModel::kNormalGamma: {
      double sum = 0, sum_sq = 0;
      for (int i = 0; i < n; ++i) sum += x[i].y;
      const double mean = sum / n;
      for (int i = 0; i < n; ++i) sum_sq += (x[i].y - mean) * (x[i].y - mean);
      const double k0 = o.prior_kappa, m0 = o.prior_mean, a0 = o.prior_shape, b0 = o.prior_rate;
      const double kn = k0 + n, an = a0 + 0.5 * n;
      const double bn = b0 + 0.5 * sum_sq + k0 * n * (mean - m0) * (mean - m0) / (2 * kn);
      return std::lgamma(an) - std::lgamma(a0) + a0 * std::log(b0) - an * std::log(bn) +
             0.5 * std::log(k0 / kn) - 0.5 * n * std::log(2 * std::numbers::pi);
    }
    case BocpdModel::kGammaPoisson: {
      double lp = 0, ys = 0, es = 0;
      for (int i = 0; i < n; ++i) {
        lp += x[i].y * std::log(x[i].exposure) - std::lgamma(x[i].y + 1);
        ys += x[i].y;
        es += x[i].exposure;
      }
      const double a0 = o.prior_shape, b0 = o.prior_rate;
      return lp + a0 * std::log(b0) - std::lgamma(a0) + std::lgamma(a0 + ys) -
             (a0 + ys) * std::log(b0 + es);
    }
    case BocpdModel::kBetaBinomial: {
      double lp = 0, ys = 0, fs = 0;
      for (int i = 0; i < n; ++i) {
        lp += std::lgamma(x[i].trials + 1) - std::lgamma(x[i].y + 1) -
              std::lgamma(x[i].trials - x[i].y + 1);
        ys += x[i].y;
        fs += x[i].trials - x[i].y;
      }
      auto lbeta = [](double a, double b) {
        return std::lgamma(a) + std::lgamma(b) - std::lgamma(a + b);
      };
      return lp + lbeta(o.prior_alpha + ys, o.prior_beta + fs) - lbeta(o.prior_alpha, o.prior_beta);
    }
  }
  return NAN;
}

// P(r_t = r | x_{1:t}) for r = 0..t-1 by enumerating all segmentations of x_{0..t-1}.
std::vector<double> BruteForcePosterior(BocpdModel model, const Bocpd::Options& o,
                                        const std::vector<Obs>& x, int t) {
  std::vector<double> log_terms;  // per segmentation
  std::vector<int> last_len;
  const double lh = std::log(o.hazard), l1h = std::log1p(-o.hazard);
  for (unsigned mask = 0; mask < (1u << (t - 1)); ++mask) {
    // bit i set: a new segment starts at observation i + 1
    double lp = 0;
    int start = 0, changes = 0;
    for (int i = 1; i <= t; ++i) {
      if (i == t || (mask >> (i - 1)) & 1u) {
        lp += LogMarginal(model, o, &x[start], i - start);
        if (i < t) {
          start = i;
          ++changes;
        }
      }
    }
    lp += changes * lh + (t - 1 - changes) * l1h;
    log_terms.push_back(lp);
    last_len.push_back(t - start);
  }
  double mx = -INFINITY;
  for (double v : log_terms) mx = std::max(mx, v);
  std::vector<double> post(t, 0.0);
  double total = 0;
  for (std::size_t i = 0; i < log_terms.size(); ++i) {
    const double w = std::exp(log_terms[i] - mx);
    post[last_len[i] - 1] += w;
    total += w;
  }
  for (double& p : post) p /= total;
  return post;
}

void CheckModel(BocpdModel model, const std::vector<Obs>& x, const Bocpd::Options& base) {
  Bocpd::Options o = base;
  o.model = model;
  o.prune_epsilon = 0;     // exact recursion
  o.max_run_lengths = 64;  // > t
  o.threshold = 1;         // no alarm collapse during the check
  o.window = 1;
  Bocpd d(o);
  for (int t = 1; t <= static_cast<int>(x.size()); ++t) {
    Sample s;
    s.y = x[t - 1].y;
    s.trials = x[t - 1].trials;
    s.exposure = x[t - 1].exposure;
    ASSERT_TRUE(d.Update(s, {t, NAN}, nullptr).ok());
    const std::vector<double> want = BruteForcePosterior(model, o, x, t);
    for (int r = 0; r < t; ++r) {
      // Adams & MacKay (2007) run-length posterior vs enumeration of all segmentations: 1e-10
      EXPECT_NEAR(d.RunLengthProbability(r), want[r], 1e-10)
          << "model " << int(model) << " t=" << t << " r=" << r;
    }
  }
}

TEST(BocpdReferenceTest, NormalGammaRunLengthPosteriorEqualsEnumerationOfSegmentations) {
  std::mt19937_64 rng(17);
  std::normal_distribution<double> n01;
  std::vector<Obs> x;
  for (int t = 0; t < 14; ++t)
    x.push_back({(t >= 7 ? 2.5 : 0.0) + (t >= 10 ? -4.0 : 0.0) + n01(rng)});
  Bocpd::Options o;
  o.hazard = 0.2;
  o.prior_mean = 0.3;
  o.prior_kappa = 0.5;
  o.prior_shape = 1.5;
  o.prior_rate = 0.8;
  CheckModel(BocpdModel::kNormalGamma, x, o);
}

TEST(BocpdReferenceTest, GammaPoissonRunLengthPosteriorEqualsEnumerationOfSegmentations) {
  std::mt19937_64 rng(23);
  std::vector<Obs> x;
  for (int t = 0; t < 14; ++t) {
    const double e = 0.5 + (t % 4);
    std::poisson_distribution<int> pois((t >= 6 ? 9.0 : 2.0) * e);
    x.push_back({static_cast<double>(pois(rng)), 1, e});
  }
  Bocpd::Options o;
  o.hazard = 0.1;
  o.prior_shape = 2;
  o.prior_rate = 0.5;
  CheckModel(BocpdModel::kGammaPoisson, x, o);
}

TEST(BocpdReferenceTest, BetaBinomialRunLengthPosteriorEqualsEnumerationOfSegmentations) {
  std::mt19937_64 rng(29);
  std::vector<Obs> x;
  for (int t = 0; t < 14; ++t) {
    const double n = 10 + 7 * (t % 3);
    std::binomial_distribution<int> bin(static_cast<int>(n), t >= 8 ? 0.7 : 0.25);
    x.push_back({static_cast<double>(bin(rng)), n, 1});
  }
  Bocpd::Options o;
  o.hazard = 0.15;
  o.prior_alpha = 0.7;
  o.prior_beta = 1.3;
  CheckModel(BocpdModel::kBetaBinomial, x, o);
}

}  // namespace
}  // namespace bayline::est
