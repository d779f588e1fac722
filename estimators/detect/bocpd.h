// Bayesian online changepoint detection (Adams & MacKay 2007, arXiv:0710.3742) over a conjugate
// observation model, with a constant hazard and bounded run-length storage.
//
// Run length r_t = number of observations of the current segment BEFORE x_t (A&M's convention:
// r_t = 0 means x_t is the first observation after a change). Segments are independent draws of
// the model parameter from the prior; a new segment starts before each observation with
// probability H (`hazard`). With pi_t(r) = p(x_t | x_{t-r..t-1}) the one-step predictive given the
// r previous observations of the run (pi_t(0) is the prior predictive):
//   P(r_t = r + 1, x_{1:t}) = (1 - H) pi_t(r + 1) P(r_{t-1} = r, x_{1:t-1})     (growth)
//   P(r_t = 0,     x_{1:t}) =  H pi_t(0) sum_r P(r_{t-1} = r, x_{1:t-1})        (change)
// then normalised over r_t. The first observation has r_1 = 0 with probability 1. Per run the
// stats are the posterior parameters:
//   kNormalGamma  (y real)    : (mu, kappa, a, b);  y | m, tau ~ N(m, 1/tau),
//        m | tau ~ N(mu, 1/(kappa tau)), tau ~ Gamma(a, b); predictive Student t with 2a dof,
//        location mu, scale^2 = b (kappa + 1) / (a kappa);
//        update mu' = (kappa mu + y)/(kappa + 1), kappa' = kappa + 1, a' = a + 1/2,
//        b' = b + kappa (y - mu)^2 / (2 (kappa + 1)).
//   kGammaPoisson (y counts, exposure e) : (a, b); y | rate ~ Poisson(rate e), rate ~ Gamma(a, b);
//        predictive negative binomial log p = lnG(a+y) - lnG(a) - lnG(y+1) + a ln(b/(b+e))
//        + y ln(e/(b+e)); update a' = a + y, b' = b + e.
//   kBetaBinomial (y successes of n = trials) : (a, b); predictive beta-binomial
//        log p = ln C(n, y) + ln B(a + y, b + n - y) - ln B(a, b);
//        update a' = a + y, b' = b + n - y.
//
// Pruning and its bound. After each update, run lengths whose posterior mass is below
// `prune_epsilon` are dropped (never the most probable one), then, if more than
// `max_run_lengths` remain, the least probable are dropped until `max_run_lengths` remain; the
// retained masses are renormalised. Mass discarded at one step is < K * prune_epsilon (K retained
// before pruning, K <= max_run_lengths + 1) plus, for the cap, at most d / (C + d) when the d least
// probable of C + d candidates are dropped (C = max_run_lengths; normally d = 1, so at most
// 1 / (C + 1); in practice far less). The exact discarded mass is summed in State::discarded_mass.
// With prune_epsilon = 0 and max_run_lengths >= the number of observations the recursion is exact.
// In control the mass of a run length does not decay to 0 but levels off near H times a Bayes
// factor, so the cap, not epsilon, usually bounds the work: measured on in-control normal data
// with the defaults, hazard 1/100: 243 run lengths retained on average, pruned mass 3.6e-5 per
// observation; hazard 1/1000: 102 and 9e-6 (unit test InControlFalseAlarmRateIsMeasured).
// Cost per observation is O(max_run_lengths); storage is allocated once at construction (copies
// reserve the same capacity, so a copy also updates without allocating).
//
// Alarm. statistic = P(the current segment started within the last `window` (m) observations and
// is not the origin segment | x_{1:t}) = sum over retained runs with r_t < m of P(r_t | x_{1:t}),
// excluding the origin run (the run that began at the first observation, or at the first one after
// the last alarm). raised when statistic >= `threshold` (while no alarm is active and not in
// hold-off); every event carries this statistic and the threshold, so a raised event shows
// statistic >= threshold. On raise the detector restarts from its prior, as at its first
// observation (in-control alarms then form a renewal process, so the ARL after re-arming equals the
// calibrated one; a collapse onto the MAP change point kept a segment fitted to the alarming
// observations and halved it), and the next `holdoff` observations update the posterior but cannot
// clear or raise. cleared on the first observation after the hold-off at which statistic <
// threshold. A change inside the hold-off or while the alarm is active is folded into the current
// alarm. onset_seq / onset_time of a raised event = the ObservationMark of the first observation of
// the MAP-change-point run (= seq - r when sequence numbers are contiguous); shift = posterior mean
// of the model parameter (mean, rate or probability) in that run minus the one in the most probable
// retained run that started before the window, direction kUp / kDown by its sign (NaN and kBoth if
// no such run is retained). The restart is a decision, not pruning: it is not added to
// discarded_mass. Other events carry direction kBoth and no onset. map_run_length() is the overall
// MAP run length after the last update. Choosing m and the threshold: the statistic only sums r_t <
// m, so m must exceed the number of observations a change needs to become evident (a 3 sd mean step
// with unknown variance takes about 5); a small hazard lowers both false alarms and sensitivity.
// Measured in-control alarm rates with the defaults (m = 10, threshold 0.5, unit test
// above): 2.75e-3 per observation at hazard 1/100 and 1.5e-4 at 1/1000 (normal data, prior kappa
// 0.1, a = b = 2). calibration.h CalibrateBocpd chooses hazard, m and the threshold for a target
// in-control ARL on an N(0,1) score (a change that grows older than m before the statistic reaches
// the threshold is never alarmed on, so m there grows with ln(ARL0) / shift^2).
//
// Thread safety: none. No heap allocation in Update() after construction (except a rejection's
// message).
#pragma once

#include <array>
#include <cstdint>
#include <vector>

#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"

namespace bayline::est {

enum class BocpdModel : std::uint8_t { kNormalGamma = 0, kGammaPoisson = 1, kBetaBinomial = 2 };

class Bocpd {
 public:
  struct Options {
    BocpdModel model = BocpdModel::kNormalGamma;
    // Prior of every new segment (all > 0 and finite except prior_mean, which is finite).
    double prior_mean = 0.0;      // normal-gamma mu0
    double prior_kappa = 1.0;     // normal-gamma kappa0
    double prior_shape = 1.0;     // normal-gamma a0 (precision shape) or gamma-poisson a0
    double prior_rate = 1.0;      // normal-gamma b0 (precision rate) or gamma-poisson b0
    double prior_alpha = 1.0;     // beta-binomial a0
    double prior_beta = 1.0;      // beta-binomial b0
    double hazard = 0.01;         // H in (0, 1): prior probability of a change per observation
    double prune_epsilon = 1e-5;  // in [0, 1): drop run lengths with posterior mass below it
    int max_run_lengths = 300;    // >= 2: cap on retained run lengths (storage is cap + 1)
    int window = 10;              // m >= 1: "change within the last m observations"
    double threshold = 0.5;       // in (0, 1]
    int holdoff = 0;              // >= 0 observations after a raise
    Status Validate() const;      // ok or kInvalidConfig naming the field
  };

  // One retained run-length hypothesis.
  struct Run {
    double length = 0;              // r_t
    double log_mass = 0;            // log P(r_t | x_{1:t}) (normalised over the retained runs)
    double start_seq = -1;          // mark of the run's first observation
    double start_time = 0;          // NaN when untimed
    std::array<double, 4> stats{};  // posterior parameters, see the header comment
  };

  struct State {
    double count = 0;         // observations absorbed
    double origin_start = 0;  // absolute index (0-based count) of the origin run's first obs
    bool alarm_active = false;
    double holdoff_left = 0;
    double discarded_mass = 0;  // total posterior mass dropped by pruning so far
    std::vector<Run> runs;      // ordered by decreasing length; empty before the first obs
    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);  // kInvalidState on a short / long / malformed input
  };

  // Precondition: options.Validate().ok() (asserted). Reserves max_run_lengths + 1 runs.
  explicit Bocpd(const Options& options);
  // Copies reserve max_run_lengths + 1 runs like the original; moves keep the storage.
  Bocpd(const Bocpd& other);
  Bocpd& operator=(const Bocpd& other);
  Bocpd(Bocpd&&) noexcept = default;
  Bocpd& operator=(Bocpd&&) noexcept = default;

  // Absorbs one observation and returns the event. Input by model: normal-gamma y (x empty);
  // gamma-poisson y = count (integer >= 0) in `exposure` > 0; beta-binomial y successes (integer)
  // of `trials` (integer >= 1), y <= trials. weight must be 1 (BOCPD has no weighted form here).
  // Rejections (nothing changes, *event untouched): CheckCommonFields -> its code; kOutOfDomain
  // for the domain rules above; kInvalidWeight for weight != 1; kNumericalFailure if the
  // posterior would be non-finite.
  Status Update(const Sample& s, const ObservationMark& mark, DetectorEvent* event);

  // Most probable run length now (-1 before the first observation).
  std::int64_t map_run_length() const;
  // P(r_t = r | x_{1:t}) for run length r (0 when r is not retained).
  double RunLengthProbability(std::int64_t r) const;

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // Validates (runs <= max_run_lengths, lengths strictly decreasing and < count, finite masses and
  // stats in their domains, holdoff_left >= 0), then replaces; kInvalidState otherwise.
  Status Restore(const State& s);

 private:
  using Stats = std::array<double, 4>;  // a run's posterior parameters (Run::stats)

  // The passes of Update, in order.
  // The prior's posterior parameters for a new segment.
  Stats PriorStats() const;
  // Pass 1, no state change: the unnormalised log masses of every run's growth and of the change
  // into scratch_ (scratch_[i] for runs[i], scratch_[runs.size()] for the change), their log-sum
  // into *log_norm, and the new run's posterior into *fresh_stats. kNumericalFailure (nothing
  // changed) when a predictive or a posterior is not finite.
  Status ScoreRuns(const Sample& s, double* log_norm, Stats* fresh_stats);
  // Pass 2, commit: every run grows by one (keeping the longest-first order) with its normalised
  // mass and absorbed stats, the new run (length 0) goes last, count advances.
  void GrowRuns(const Sample& s, const ObservationMark& mark, double log_norm,
                const Stats& fresh_stats);
  // Pruning: drops runs below prune_epsilon (never the MAP), then the least probable down to
  // max_run_lengths; renormalises and adds the dropped mass to discarded_mass.
  void PruneRuns();
  // The alarm statistic and life cycle (raise with a restart from the prior, hold-off,
  // clear) for the observation just absorbed.
  DetectorEvent AdvanceAlarm();

  Options options_;
  State state_;
  std::vector<double> scratch_;     // preallocated: new log masses / selection buffer
  std::vector<double> half_gamma_;  // normal-gamma: log G(a + 1/2) - log G(a) by observation count
};

}  // namespace bayline::est
