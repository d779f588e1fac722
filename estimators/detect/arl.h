// Average run length (ARL): the expected number of observations until a chart's first alarm from
// its (re)start, when z ~ N(shift, 1) i.i.d. (shift = 0: the in-control ARL, the mean number of
// observations between false alarms).
//
// CUSUM (Brook & Evans 1972 Markov chain). One side, C_t = max(0, C_{t-1} + x_t - k), is
// discretised into m states of width w = 2h / (2m - 1): state 0 is [0, w/2) (it holds the atom at
// zero), state j is [(j - 1/2) w, (j + 1/2) w), the last one ending at h. With R the transient
// transition matrix, the ARLs from every state solve (I - R) a = 1; the value starts in the state
// holding the head start. The discretisation error falls like 1/m^2, so two chains (m and 2m) are
// combined by Richardson extrapolation, a = (4 a_2m - a_m) / 3. With the default m = 120 the
// result differs from R spc's Gauss-Legendre solution by < 2e-6 relative over k = 0.25..1.5 and
// ARL0 up to 1000 (tests/reference/detect/charts_spc_test.R), far inside the 0.5% asked.
// Two sides combine as (Lucas & Crosier 1982; exact when the two sides cannot be positive together,
// which holds to a good approximation for k >= 0.25 at the usual h; the same rule as R spc's
// xcusum.arl(sided = "two")):
//   ARL(s) = [a+(s) a-(0) + a+(0) a-(s) - a+(0) a-(0)] / [a+(0) + a-(0)]
// which is 1 / ARL = 1 / a+ + 1 / a- without a head start. a- is the upper-side ARL at -shift.
//
// EWMA (integral equation, Nystroem method with Gauss-Legendre nodes). With kernel
// K(u | v) = phi((u - (1 - lambda) v) / lambda - shift) / lambda on the continuation region:
//   asymptotic limits: a(v) = 1 + int a(u) K(u | v) du solved on the nodes; ARL = a(0). This is
//     what R spc's xewma.arl(l, L, mu, sided = "two", limits = "fix") computes.
//   exact (time-varying) limits: the density of the not-yet-stopped Z_i is propagated over the
//     nodes of [-L sigma_i, L sigma_i] step by step until (1 - lambda)^(2 i) < 1e-6, then
//     ARL = sum_{i<T} P(no alarm by i) + int f_T(v) a(v) dv with a() the fixed-limit solution. R
//     spc calls these limits "vacl" (xewma.arl(..., limits = "vacl")).
// A one-sided EWMA (kUp / kDown) is solved on [-(L + 4) sigma, L sigma]: the EWMA below the
// lower end (probability < 1e-9 per step) is counted as an alarm, a negligible bias.
//
// Page-Hinkley and GLR: by simulation (Monte Carlo mean of `runs` first-passage times, seeded).
//
// Every function returns NaN when the options are invalid or shift is not finite; none allocates
// on a per-observation path (these are configuration-time calls). Thread safe (no shared state).
#pragma once

#include <cstdint>
#include <span>
#include <vector>

#include "estimators/detect/cusum.h"
#include "estimators/detect/ewma.h"
#include "estimators/detect/glr.h"
#include "estimators/detect/page_hinkley.h"

namespace bayline::est {

// Accuracy knobs; the defaults keep the error below 0.1% for ARLs up to 1e5 at the usual designs.
struct ArlAccuracy {
  int cusum_states = 120;  // m for the coarse chain (the fine one has 2m), >= 10
  int ewma_nodes = 48;     // Gauss-Legendre nodes, >= 8 (raised automatically for small lambda)
};

// Zero-state ARL of the CUSUM `o` (k, h, head_start, direction) at mean `shift` (sd units).
double CusumArl(const CusumOptions& o, double shift, const ArlAccuracy& acc = {});

// ARL of the upper side alone (C+ only) starting at `start` in [0, h].
double OneSidedCusumArl(double k, double h, double shift, double start,
                        const ArlAccuracy& acc = {});

// Zero-state ARL of the EWMA `o` (lambda, L, limits, direction) at mean `shift`.
double EwmaArl(const EwmaOptions& o, double shift, const ArlAccuracy& acc = {});

struct SimulationBudget {
  int runs = 4000;             // simulated run lengths; relative standard error about 1/sqrt(runs)
  std::uint64_t seed = 20260;  // mt19937_64 seed: results are reproducible
  double max_length = 1e7;     // a run still going at this length is counted as this length
                               // (at most kMaxSimulatedRunLength; <= 0 or NaN: the default)
};
// Upper bound of max_length: every simulated run ends after at most this many steps, so a
// simulation's work is bounded whatever the budget (beyond 2^53 a step count would stop growing).
inline constexpr double kMaxSimulatedRunLength = 1e9;

// Monte Carlo ARL (mean of `runs` first alarm times) for any chart in this library at `shift`.
// *standard_error (when not null) gets the standard error of the mean from the runs' sample sd.
double SimulatePageHinkleyArl(const PageHinkleyOptions& o, double shift,
                              const SimulationBudget& b = {}, double* standard_error = nullptr);
double SimulateGlrArl(const GlrOptions& o, double shift, const SimulationBudget& b = {},
                      double* standard_error = nullptr);
// Mean detection delay when the mean steps by `shift` after `change_at` in-control observations:
// observations from the first shifted one to the alarm (1 = alarm on it), over b.runs runs without
// a false alarm before the change (runs with one are redrawn, at most 1000 b.runs attempts, else
// NaN). Page-Hinkley measures against the running mean, so a shift present from the first
// observation is no change to it: its detection is measured this way. *standard_error (when not
// null) gets the standard error of the mean from the runs' sample sd.
double SimulatePageHinkleyDelay(const PageHinkleyOptions& o, double shift, int change_at,
                                const SimulationBudget& b = {}, double* standard_error = nullptr);
double SimulateCusumArl(const CusumOptions& o, double shift, const SimulationBudget& b = {},
                        double* standard_error = nullptr);
double SimulateEwmaArl(const EwmaOptions& o, double shift, const SimulationBudget& b = {},
                       double* standard_error = nullptr);

}  // namespace bayline::est
