#include "estimators/detect/calibration.h"

#include <algorithm>
#include <cmath>
#include <optional>
#include <random>
#include <string>

#include "estimators/detect/delay_simulation.h"

namespace bayline::est {
namespace {

Status Invalid(const std::string& why) { return Status::Error(ErrorCode::kInvalidConfig, why); }

// Solves log(arl(x)) = log(target) for x > 0 with arl increasing in x: expands [lo, hi] from
// x0 until it brackets the root, then Illinois regula falsi on g = log arl - log target (nearly
// linear in x for these charts, so a handful of evaluations suffice).
template <typename Arl>
bool SolveIncreasing(Arl arl, double target, double x0, double* out) {
  const double lt = std::log(target);
  auto g = [&](double x) { return std::log(arl(x)) - lt; };
  double lo = x0, hi = x0, glo = g(lo), ghi = glo;
  if (!std::isfinite(glo)) return false;
  for (int i = 0; glo > 0 && i < 60; ++i) {
    hi = lo, ghi = glo;
    lo *= 0.5;
    glo = g(lo);
  }
  for (int i = 0; ghi < 0 && i < 60; ++i) {
    lo = hi, glo = ghi;
    hi *= 1.5;
    ghi = g(hi);
  }
  if (!(glo <= 0 && ghi >= 0) || !std::isfinite(glo) || !std::isfinite(ghi)) return false;
  int side = 0;
  for (int i = 0; i < 100; ++i) {
    if (hi - lo <= 1e-10 * hi) break;
    double x = (glo == ghi) ? 0.5 * (lo + hi) : lo - glo * (hi - lo) / (ghi - glo);
    if (!(x > lo && x < hi)) x = 0.5 * (lo + hi);
    const double gx = g(x);
    if (!std::isfinite(gx)) return false;
    if (std::fabs(gx) < 1e-11) {
      lo = hi = x;
      break;
    }
    if (gx < 0) {
      lo = x, glo = gx;
      if (side == -1) ghi *= 0.5;
      side = -1;
    } else {
      hi = x, ghi = gx;
      if (side == 1) glo *= 0.5;
      side = 1;
    }
  }
  *out = 0.5 * (lo + hi);
  return true;
}

// Simulation calibration by records (calibration.h). `chart_options` has an unreachable threshold,
// so each run's statistic path is the same whatever threshold is finally chosen. `grow` widens the
// bracket: a factor when > 1, else an additive step of -grow.
template <typename Chart, typename Options>
bool SimulatedThreshold(const Options& chart_options, double arl0, const SimulationBudget& budget,
                        double guess, double grow, double* out, int coarse_runs = 0) {
  const double cap =
      std::min(budget.max_length > 0 ? std::min(budget.max_length, kMaxSimulatedRunLength) : 1e7,
               50.0 * arl0);
  std::vector<double> value, time;       // records of all runs, flat
  std::vector<std::size_t> start(1, 0);  // run r's records are [start[r], start[r + 1])
  auto simulate = [&](int runs, double h_hi) {
    value.clear();
    time.clear();
    start.assign(1, 0);
    std::mt19937_64 rng(budget.seed);
    std::normal_distribution<double> normal(0.0, 1.0);
    Chart chart(chart_options);
    for (int r = 0; r < runs; ++r) {
      chart.Reset();
      double best = 0.0, t = 0.0;
      while (t < cap && best <= h_hi) {
        t += 1.0;
        const double s = chart.Update(normal(rng), ObservationMark{}).statistic;
        if (s > best) {
          best = s;
          value.push_back(s);
          time.push_back(t);
        }
      }
      start.push_back(value.size());
    }
  };
  auto arl_at = [&](double h) {
    double sum = 0.0;
    const std::size_t runs = start.size() - 1;
    for (std::size_t r = 0; r < runs; ++r) {
      const auto b = value.begin() + static_cast<std::ptrdiff_t>(start[r]);
      const auto e = value.begin() + static_cast<std::ptrdiff_t>(start[r + 1]);
      const auto it = std::upper_bound(b, e, h);  // first record above h
      sum += it == e ? cap : time[static_cast<std::size_t>(it - value.begin())];
    }
    return sum / static_cast<double>(runs);
  };
  // Pilot runs find an upper bracket cheaply; the full set of runs then fixes the threshold.
  // coarse_runs > 0: a first bracket from that few runs, for charts whose updates are costly (each
  // bracket tried costs runs * ARL(bracket) updates).
  const int pilot = std::max(200, budget.runs / 8);
  double h_hi = guess;
  for (int i = 0; coarse_runs > 0 && i < 40; ++i) {
    simulate(coarse_runs, h_hi);
    if (arl_at(h_hi) >= 1.3 * arl0) break;
    h_hi = grow > 1.0 ? h_hi * grow : h_hi - grow;
  }
  for (int i = 0; i < 40; ++i) {
    simulate(pilot, h_hi);
    if (arl_at(h_hi) >= 1.3 * arl0) break;
    h_hi = grow > 1.0 ? h_hi * grow : h_hi - grow;
  }
  // Tighten the bracket to where the pilot's ARL is 1.25 ARL0 (5 pilot standard errors above the
  // target at the minimum 200 pilot runs), so the full runs stop soon after the threshold sought.
  {
    double lo = 0.0, hi = h_hi;
    for (int i = 0; i < 100 && hi - lo > 1e-6 * hi; ++i) {
      const double mid = 0.5 * (lo + hi);
      (arl_at(mid) < 1.25 * arl0 ? lo : hi) = mid;
    }
    h_hi = hi;
  }
  for (int i = 0; i < 40; ++i) {
    simulate(budget.runs, h_hi);
    if (arl_at(h_hi) >= arl0) break;
    h_hi = grow > 1.0 ? h_hi * grow : h_hi - grow;
  }
  if (!(arl_at(h_hi) >= arl0)) return false;
  double lo = 0.0, hi = h_hi;
  for (int i = 0; i < 200 && hi - lo > 1e-9 * hi; ++i) {
    const double mid = 0.5 * (lo + hi);
    (arl_at(mid) < arl0 ? lo : hi) = mid;
  }
  *out = hi;
  return true;
}

// Bocpd seen as a chart for SimulatedThreshold: reads y, reports u = -ln(1 - statistic), an
// increasing map of the statistic onto [0, 37] (so bracket growth by a factor works and records
// near 1 keep their resolution). Reset() restores the empty state (capacity kept).
class BocpdChart {
 public:
  explicit BocpdChart(const Bocpd::Options& o) : bocpd_(o) {}
  void Reset() { (void)bocpd_.Restore(Bocpd::State{}); }
  DetectorEvent Update(double y, const ObservationMark& mark) {
    Sample s;
    s.y = y;
    DetectorEvent ev;
    if (!bocpd_.Update(s, mark, &ev).ok()) ev.statistic = 0.0;  // N(0,1) input: never happens
    ev.statistic = BocpdStatisticToLogScale(ev.statistic);
    return ev;
  }

 private:
  Bocpd bocpd_;
};

Status ValidateArl0(double arl0) {
  if (!(arl0 >= 2.0 && arl0 <= 1e7))
    return Invalid("arl0 must be in [2, 1e7], got " + std::to_string(arl0));
  return Status::Ok();
}

}  // namespace

Status AlarmTarget::Validate() const {
  if (Status s = ValidateArl0(arl0); !s.ok()) return s;
  if (!(std::isfinite(shift) && shift > 0.0))
    return Invalid("design shift must be finite and > 0 sd, got " + std::to_string(shift));
  return Status::Ok();
}

Status CalibrateCusumInterval(double arl0, CusumOptions* options, double head_start_fraction,
                              const ArlAccuracy& acc) {
  if (Status s = ValidateArl0(arl0); !s.ok()) return s;
  if (!(head_start_fraction >= 0.0 && head_start_fraction < 1.0))
    return Invalid("head start fraction must be in [0, 1), got " +
                   std::to_string(head_start_fraction));
  CusumOptions o = *options;
  o.h = 1.0;
  o.head_start = 0.0;
  if (Status s = o.Validate(); !s.ok()) return s;
  auto arl = [&](double h) {
    CusumOptions c = o;
    c.h = h;
    c.head_start = head_start_fraction * h;
    return CusumArl(c, 0.0, acc);
  };
  double h = 0;
  if (!SolveIncreasing(arl, arl0, 4.0, &h))
    return Status::Error(ErrorCode::kNumericalFailure,
                         "cusum h: no solution for arl0 " + std::to_string(arl0));
  o.h = h;
  o.head_start = head_start_fraction * h;
  *options = o;
  return Status::Ok();
}

Status CalibrateCusum(const AlarmTarget& target, CusumOptions* options, double head_start_fraction,
                      const ArlAccuracy& acc) {
  if (Status s = target.Validate(); !s.ok()) return s;
  CusumOptions o = *options;
  o.k = 0.5 * target.shift;
  if (Status s = CalibrateCusumInterval(target.arl0, &o, head_start_fraction, acc); !s.ok())
    return s;
  *options = o;
  return Status::Ok();
}

Status CalibrateEwmaWidth(double arl0, EwmaOptions* options, const ArlAccuracy& acc) {
  if (Status s = ValidateArl0(arl0); !s.ok()) return s;
  EwmaOptions o = *options;
  o.L = 3.0;
  if (Status s = o.Validate(); !s.ok()) return s;
  auto arl = [&](double L) {
    EwmaOptions e = o;
    e.L = L;
    return EwmaArl(e, 0.0, acc);
  };
  double L = 0;
  if (!SolveIncreasing(arl, arl0, 2.5, &L))
    return Status::Error(ErrorCode::kNumericalFailure,
                         "ewma L: no solution for arl0 " + std::to_string(arl0));
  o.L = L;
  *options = o;
  return Status::Ok();
}

Status CalibrateEwma(const AlarmTarget& target, EwmaOptions* options, const ArlAccuracy& acc) {
  if (Status s = target.Validate(); !s.ok()) return s;
  EwmaOptions o = *options;
  bool failed = false;
  // lambda is chosen on the chart with asymptotic limits (see calibration.h), whatever o.limits.
  auto arl_at_shift = [&](double log_lambda) {
    EwmaOptions e = o;
    e.limits = EwmaLimits::kAsymptotic;
    e.lambda = std::exp(log_lambda);
    if (!CalibrateEwmaWidth(target.arl0, &e, acc).ok()) {
      failed = true;
      return kNaN;
    }
    return EwmaArl(e, target.shift, acc);
  };
  // Golden-section search for the lambda minimising ARL(D) on [0.02, 1], to 3% in lambda.
  const double phi = 0.6180339887498949;
  double a = std::log(0.02), b = 0.0;
  double c = b - phi * (b - a), d = a + phi * (b - a);
  double fc = arl_at_shift(c), fd = arl_at_shift(d);
  // Each step keeps 0.618 of [a, b]: from its width 3.9 to 0.03 takes 11 steps; the bound only
  // guards against a NaN comparison.
  for (int step = 0; step < 100 && !failed && b - a > 0.03; ++step) {
    if (fc < fd) {
      b = d, d = c, fd = fc;
      c = b - phi * (b - a);
      fc = arl_at_shift(c);
    } else {
      a = c, c = d, fc = fd;
      d = a + phi * (b - a);
      fd = arl_at_shift(d);
    }
  }
  if (failed) return Status::Error(ErrorCode::kNumericalFailure, "ewma: calibration failed");
  // Round lambda to two significant digits (a readable setting; the ARL curve is flat there).
  double lambda = std::exp(fc < fd ? c : d);
  const double scale = std::pow(10.0, std::floor(std::log10(lambda)) - 1.0);
  o.lambda = std::min(1.0, std::round(lambda / scale) * scale);
  if (Status s = CalibrateEwmaWidth(target.arl0, &o, acc); !s.ok()) return s;
  *options = o;
  return Status::Ok();
}

Status CalibratePageHinkley(const AlarmTarget& target, PageHinkleyOptions* options,
                            const SimulationBudget& budget) {
  if (Status s = target.Validate(); !s.ok()) return s;
  if (budget.runs < 100) return Invalid("simulation runs must be >= 100");
  PageHinkleyOptions o = *options;
  o.delta = 0.5 * target.shift;
  o.threshold = 1e300;
  if (Status s = o.Validate(); !s.ok()) return s;
  // The CUSUM with k = delta is a close relative; its h is a good first bracket.
  CusumOptions c;
  c.k = o.delta;
  c.direction = o.direction;
  double guess = 5.0;
  if (CalibrateCusumInterval(target.arl0, &c).ok()) guess = 1.1 * c.h;
  double h = 0;
  if (!SimulatedThreshold<PageHinkley>(o, target.arl0, budget, guess, 1.15, &h))
    return Status::Error(ErrorCode::kNumericalFailure,
                         "page_hinkley: threshold not found by simulation");
  o.threshold = h;
  *options = o;
  return Status::Ok();
}

Status CalibrateGlr(const AlarmTarget& target, GlrOptions* options,
                    const SimulationBudget& budget) {
  if (Status s = target.Validate(); !s.ok()) return s;
  if (budget.runs < 100) return Invalid("simulation runs must be >= 100");
  GlrOptions o = *options;
  if (o.window == 0) {
    const double w = std::round(8.0 * std::log(target.arl0) / (target.shift * target.shift));
    o.window = static_cast<std::int64_t>(std::clamp(w, 10.0, 1000.0));
  }
  o.threshold = 1e300;
  if (Status s = o.Validate(); !s.ok()) return s;
  double h = 0;
  // Grow additively: the in-control ARL rises about e-fold per unit of threshold.
  if (!SimulatedThreshold<Glr>(o, target.arl0, budget, std::log(target.arl0), -0.5, &h))
    return Status::Error(ErrorCode::kNumericalFailure, "glr: threshold not found by simulation");
  o.threshold = h;
  *options = o;
  return Status::Ok();
}

Status CalibrateBocpdThreshold(double arl0, Bocpd::Options* options,
                               const SimulationBudget& budget) {
  if (Status s = ValidateArl0(arl0); !s.ok()) return s;
  if (budget.runs < 100) return Invalid("simulation runs must be >= 100");
  if (options->model != BocpdModel::kNormalGamma)
    return Invalid("bocpd calibration needs the normal-gamma model (an N(0,1) score)");
  Bocpd::Options o = *options;
  o.threshold = 1.0;  // raised only at a statistic of exactly 1, a record above any bracket
  o.holdoff = 0;
  if (Status s = o.Validate(); !s.ok()) return s;
  double u = 0;
  if (!SimulatedThreshold<BocpdChart>(o, arl0, budget, 0.01, 1.6, &u, 50) ||
      !(u < kBocpdMaxLogStatistic))
    return Status::Error(ErrorCode::kNumericalFailure, "bocpd: threshold not found by simulation");
  o.threshold = -std::expm1(-u);
  o.holdoff = options->holdoff;
  if (Status s = o.Validate(); !s.ok()) return s;
  *options = o;
  return Status::Ok();
}

Status CalibrateBocpd(const AlarmTarget& target, Bocpd::Options* options,
                      const SimulationBudget& budget) {
  if (Status s = target.Validate(); !s.ok()) return s;
  Bocpd::Options o = *options;
  o.hazard = 1.0 / target.arl0;
  if (o.window == 0) o.window = BocpdWindowForShift(target);
  if (Status s = CalibrateBocpdThreshold(target.arl0, &o, budget); !s.ok()) return s;
  *options = o;
  return Status::Ok();
}

int BocpdWindowForShift(const AlarmTarget& target) {
  const double m = std::round(8.0 * std::log(target.arl0) / (target.shift * target.shift));
  return static_cast<int>(std::clamp(m, 10.0, 200.0));
}

double BocpdStatisticToLogScale(double statistic) {
  return -std::log1p(-std::clamp(statistic, 0.0, kBocpdMaxStatistic));
}

double SimulateBocpdDelay(const Bocpd::Options& o, double shift, int change_at,
                          const SimulationBudget& b, double* standard_error) {
  if (!o.Validate().ok() || o.model != BocpdModel::kNormalGamma) return kNaN;
  Bocpd chart(o);
  return SimulateMeanDelay([&chart] { (void)chart.Restore(Bocpd::State{}); },
                           [&chart](double z) -> std::optional<bool> {
                             Sample s;
                             s.y = z;
                             DetectorEvent ev;
                             if (!chart.Update(s, ObservationMark{}, &ev).ok()) return std::nullopt;
                             return ev.raised;
                           },
                           shift, change_at, b, standard_error);
}

std::vector<double> CusumArlProfile(const CusumOptions& o, std::span<const double> shifts,
                                    const ArlAccuracy& acc) {
  std::vector<double> out;
  for (double d : shifts) out.push_back(CusumArl(o, d, acc));
  return out;
}

std::vector<double> EwmaArlProfile(const EwmaOptions& o, std::span<const double> shifts,
                                   const ArlAccuracy& acc) {
  std::vector<double> out;
  for (double d : shifts) out.push_back(EwmaArl(o, d, acc));
  return out;
}

}  // namespace bayline::est
