#include "estimators/detect/arl.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <optional>
#include <random>

#include "estimators/core/distributions.h"
#include "estimators/detect/delay_simulation.h"

namespace bayline::est {
namespace {

// P(a < X < b), X ~ N(0, 1), computed in the tail the interval lies in.
double NormalProb(double a, double b) {
  if (!(b > a)) return 0.0;
  if (a > 0.0) return dist::NormalSf(a) - dist::NormalSf(b);
  return dist::NormalCdf(b) - dist::NormalCdf(a);
}

// ---- CUSUM: Brook & Evans chain for the upper side -------------------------------------------

// Probability of moving from value v into each of the m states of width w (x ~ N(shift, 1)).
void RowFrom(double v, double k, double shift, double w, int m, double* row) {
  // next = v + x - k lies in [c, d) iff x - shift lies in [c + base, d + base), x - shift ~ N(0,1).
  const double base = k - shift - v;
  // state 0: next < w/2 (it holds the atom at zero); state j: (j-1/2)w <= next < (j+1/2)w
  row[0] = dist::NormalCdf(0.5 * w + base);
  for (int j = 1; j < m; ++j) row[j] = NormalProb((j - 0.5) * w + base, (j + 0.5) * w + base);
}

double ChainArl(double k, double h, double shift, double start, int m) {
  const double w = 2.0 * h / (2.0 * m - 1.0);
  Eigen::MatrixXd a = Eigen::MatrixXd::Identity(m, m);
  Eigen::VectorXd row(m);
  for (int i = 0; i < m; ++i) {
    RowFrom(i * w, k, shift, w, m, row.data());
    a.row(i) -= row.transpose();
  }
  const Eigen::VectorXd arl = a.partialPivLu().solve(Eigen::VectorXd::Ones(m));
  // From the exact start value (not a state centre): one step of the chain, then the state ARLs.
  RowFrom(start, k, shift, w, m, row.data());
  return 1.0 + row.dot(arl);
}

// ---- EWMA: Nystroem method with Gauss-Legendre nodes ------------------------------------------

// Gauss-Legendre nodes and weights on [-1, 1] by Newton's method on P_n.
void GaussLegendre(int n, std::vector<double>* x, std::vector<double>* w) {
  x->assign(n, 0.0);
  w->assign(n, 0.0);
  const double pi = 3.14159265358979323846;
  for (int i = 0; i < (n + 1) / 2; ++i) {
    double z = std::cos(pi * (i + 0.75) / (n + 0.5));
    double dp = 0.0;
    for (int it = 0; it < 100; ++it) {
      double p0 = 1.0, p1 = 0.0;
      for (int j = 1; j <= n; ++j) {
        const double p2 = p1;
        p1 = p0;
        p0 = ((2.0 * j - 1.0) * z * p1 - (j - 1.0) * p2) / j;
      }
      dp = n * (z * p0 - p1) / (z * z - 1.0);
      const double dz = p0 / dp;
      z -= dz;
      if (std::fabs(dz) < 1e-15) break;
    }
    (*x)[i] = -z;
    (*x)[n - 1 - i] = z;
    (*w)[i] = (*w)[n - 1 - i] = 2.0 / ((1.0 - z * z) * dp * dp);
  }
}

struct Grid {
  std::vector<double> z, w;  // nodes and weights on [lo, hi]
};

Grid MakeGrid(const std::vector<double>& x, const std::vector<double>& w, double lo, double hi) {
  Grid g;
  const double half = 0.5 * (hi - lo), mid = 0.5 * (hi + lo);
  for (std::size_t i = 0; i < x.size(); ++i) {
    g.z.push_back(mid + half * x[i]);
    g.w.push_back(half * w[i]);
  }
  return g;
}

// Density of Z_next = (1 - lambda) v + lambda x at u, x ~ N(shift, 1).
inline double Kernel(double u, double v, double lambda, double shift) {
  const double e = (u - (1.0 - lambda) * v) / lambda - shift;
  return std::exp(-0.5 * e * e) * 0.39894228040143267794 / lambda;
}

// Continuation region of an EWMA with limit half-width c: two-sided [-c, c]; one-sided (upper)
// [-(L + 4) c / L, c] (the lower end is a truncation, see arl.h).
void Region(const EwmaOptions& o, double sd, double* lo, double* hi) {
  *hi = o.L * sd;
  *lo = o.direction == Direction::kBoth ? -*hi : -(o.L + 4.0) * sd;
}

}  // namespace

double OneSidedCusumArl(double k, double h, double shift, double start, const ArlAccuracy& acc) {
  if (!(std::isfinite(k) && std::isfinite(h) && h > 0 && std::isfinite(shift) && start >= 0 &&
        start <= h && acc.cusum_states >= 10))
    return kNaN;
  const int m = acc.cusum_states;
  const double coarse = ChainArl(k, h, shift, start, m);
  const double fine = ChainArl(k, h, shift, start, 2 * m);
  return (4.0 * fine - coarse) / 3.0;
}

double CusumArl(const CusumOptions& o, double shift, const ArlAccuracy& acc) {
  if (!o.Validate().ok() || !std::isfinite(shift)) return kNaN;
  const double s = o.head_start;
  if (o.direction == Direction::kUp) return OneSidedCusumArl(o.k, o.h, shift, s, acc);
  if (o.direction == Direction::kDown) return OneSidedCusumArl(o.k, o.h, -shift, s, acc);
  const double up0 = OneSidedCusumArl(o.k, o.h, shift, 0.0, acc);
  const double dn0 = OneSidedCusumArl(o.k, o.h, -shift, 0.0, acc);
  if (s == 0.0) return up0 * dn0 / (up0 + dn0);
  const double ups = OneSidedCusumArl(o.k, o.h, shift, s, acc);
  const double dns = OneSidedCusumArl(o.k, o.h, -shift, s, acc);
  return (ups * dn0 + up0 * dns - up0 * dn0) / (up0 + dn0);
}

double EwmaArl(const EwmaOptions& o, double shift, const ArlAccuracy& acc) {
  if (!o.Validate().ok() || !std::isfinite(shift) || acc.ewma_nodes < 8) return kNaN;
  // A one-sided lower chart is the upper chart of -z.
  const double mu = o.direction == Direction::kDown ? -shift : shift;
  const double lambda = o.lambda;
  const double sd_inf = std::sqrt(lambda / (2.0 - lambda));
  // Small lambda: the kernel (sd lambda) is narrow against the region, and Gauss-Legendre nodes
  // are spaced about pi (hi - lo) / (2 n) apart mid-region: keep that below lambda / 2.
  double lo = 0, hi = 0;
  Region(o, sd_inf, &lo, &hi);
  const int n = std::min(
      400, std::max(acc.ewma_nodes, static_cast<int>(std::ceil(3.1416 * (hi - lo) / lambda))));
  std::vector<double> gx, gw;
  GaussLegendre(n, &gx, &gw);
  const Grid fixed = MakeGrid(gx, gw, lo, hi);
  Eigen::MatrixXd a(n, n);
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < n; ++j)
      a(i, j) = (i == j ? 1.0 : 0.0) - fixed.w[j] * Kernel(fixed.z[j], fixed.z[i], lambda, mu);
  const Eigen::VectorXd arl = a.partialPivLu().solve(Eigen::VectorXd::Ones(n));
  if (o.limits == EwmaLimits::kAsymptotic) {
    double r = 1.0;
    for (int j = 0; j < n; ++j) r += fixed.w[j] * Kernel(fixed.z[j], 0.0, lambda, mu) * arl[j];
    return r;
  }
  // Exact limits: propagate the sub-density of the unstopped EWMA until (1 - lambda)^(2i) < 1e-6,
  // when sigma_i is within 5e-7 of sigma_inf (an ARL error of order 1e-5 relative).
  const double step = (1.0 - lambda) * (1.0 - lambda);
  int steps = 1;
  if (step > 0.0) steps = std::max(1, static_cast<int>(std::ceil(std::log(1e-6) / std::log(step))));
  std::vector<double> f(n), fnext(n);
  Grid prev;
  double total = 1.0;  // S_0
  double decay2 = 1.0;
  for (int i = 1; i <= steps; ++i) {
    decay2 *= step;
    Region(o, sd_inf * std::sqrt(1.0 - decay2), &lo, &hi);
    Grid g = i == steps ? fixed : MakeGrid(gx, gw, lo, hi);
    for (int j = 0; j < n; ++j) {
      double v = 0.0;
      if (i == 1) {
        v = Kernel(g.z[j], 0.0, lambda, mu);
      } else {
        for (int m = 0; m < n; ++m) v += prev.w[m] * f[m] * Kernel(g.z[j], prev.z[m], lambda, mu);
      }
      fnext[j] = v;
    }
    f.swap(fnext);
    prev = std::move(g);
    if (i < steps) {
      double s = 0.0;
      for (int j = 0; j < n; ++j) s += prev.w[j] * f[j];
      total += s;
    }
  }
  for (int j = 0; j < n; ++j) total += prev.w[j] * f[j] * arl[j];
  return total;
}

// ---- Simulation -------------------------------------------------------------------------------

namespace {

template <typename Chart, typename Options>
double SimulateArl(const Options& o, double shift, const SimulationBudget& b,
                   double* standard_error) {
  if (!o.Validate().ok() || !std::isfinite(shift) || b.runs < 1) return kNaN;
  const double cap = b.max_length > 0 ? std::min(b.max_length, kMaxSimulatedRunLength) : 1e7;
  std::mt19937_64 rng(b.seed);
  std::normal_distribution<double> normal(shift, 1.0);
  Chart chart(o);
  double sum = 0.0, sum_sq = 0.0;
  for (int r = 0; r < b.runs; ++r) {
    chart.Reset();
    double t = 0;
    while (t < cap) {
      t += 1.0;
      if (chart.Update(normal(rng), ObservationMark{}).raised) break;
    }
    sum += t;
    sum_sq += t * t;
  }
  const double mean = sum / b.runs;
  if (standard_error) {
    const double var = b.runs > 1 ? std::max(0.0, (sum_sq - sum * mean) / (b.runs - 1)) : kNaN;
    *standard_error = std::sqrt(var / b.runs);
  }
  return mean;
}

template <typename Chart, typename Options>
double SimulateDelay(const Options& o, double shift, int change_at, const SimulationBudget& b,
                     double* standard_error) {
  if (!o.Validate().ok()) return kNaN;
  Chart chart(o);
  return SimulateMeanDelay([&chart] { chart.Reset(); },
                           [&chart](double z) -> std::optional<bool> {
                             return chart.Update(z, ObservationMark{}).raised;
                           },
                           shift, change_at, b, standard_error);
}

}  // namespace

double SimulatePageHinkleyDelay(const PageHinkleyOptions& o, double shift, int change_at,
                                const SimulationBudget& b, double* standard_error) {
  return SimulateDelay<PageHinkley>(o, shift, change_at, b, standard_error);
}

double SimulatePageHinkleyArl(const PageHinkleyOptions& o, double shift, const SimulationBudget& b,
                              double* standard_error) {
  return SimulateArl<PageHinkley>(o, shift, b, standard_error);
}
double SimulateGlrArl(const GlrOptions& o, double shift, const SimulationBudget& b,
                      double* standard_error) {
  return SimulateArl<Glr>(o, shift, b, standard_error);
}
double SimulateCusumArl(const CusumOptions& o, double shift, const SimulationBudget& b,
                        double* standard_error) {
  return SimulateArl<Cusum>(o, shift, b, standard_error);
}
double SimulateEwmaArl(const EwmaOptions& o, double shift, const SimulationBudget& b,
                       double* standard_error) {
  return SimulateArl<Ewma>(o, shift, b, standard_error);
}

}  // namespace bayline::est
