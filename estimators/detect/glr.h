// Generalized likelihood ratio (GLR) test for a shift of unknown size in the mean of a standardized
// input z (N(0, 1) before the change, N(mu, 1) after it, mu unknown), over a bounded window.
//
// For a change just before the last j observations (1 <= j <= J = min(W, n)), with
// S_j = z_{n-j+1} + ... + z_n, the log-likelihood ratio maximised over mu is S_j^2 / (2 j) at
// mu = S_j / j. The statistic is its maximum over the last W change points:
//   G_n = max_{1<=j<=J} g_j,  g_j = S_j^2 / (2 j)           (kBoth)
//   g_j = max(S_j, 0)^2 / (2 j)  (kUp),   max(-S_j, 0)^2 / (2 j)  (kDown)
// alarm when G_n > threshold. Onset: the first observation of the maximising window j*; shift
// estimate: S_{j*} / j*.
// Each S_j is P_n - P_{n-j} from a ring of prefix sums P (newest at the lowest index, so the scan
// walks memory forwards), so an update is one pass of W independent multiply-adds (O(W), no
// allocation). The prefix sums are re-based every W observations, keeping
// them of the size of a W-term sum, so precision does not decay on long streams.
// A window bounds cost and memory; a change older than W observations is judged on its last W
// only. Choose W a few times the detection delay wanted (delay ~ 2 threshold / mu^2).
// No closed-form ARL is used: calibration.h sets the threshold by simulation.
// Alarm life cycle and hold-off: see chart_cycle.h; a restart empties the window.
// Thread safety: none.
#pragma once

#include <cstdint>
#include <vector>

#include "estimators/core/report.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"
#include "estimators/detect/chart_cycle.h"

namespace bayline::est {

struct GlrOptions {
  std::int64_t window = 50;                // W, change points considered, in [1, 100000]
  double threshold = 8.0;                  // on the log-likelihood ratio, finite and > 0
  Direction direction = Direction::kBoth;  // kUp, kDown or kBoth
  std::int64_t holdoff = 0;                // observations ignored after an alarm, >= 0

  // Ok, or kInvalidConfig naming the field and value.
  Status Validate() const;
};

class Glr {
 public:
  // The window's content in time order (oldest first), as plain values. With n = seq.size():
  struct State {
    std::vector<double> prefix;  // n + 1 prefix sums P_{t-n} .. P_t (differences are the S_j)
    std::vector<double> seq;     // sequence numbers of the last n <= W observations
    std::vector<double> time;    // their times
    double since_rebase = 0;     // observations since the prefix sums were re-based
    AlarmCycle cycle;

    void Pack(StateWriter& w) const;  // n first, then the vectors
    // Reads exactly its own values (a caller owning the whole buffer then checks r.status() to
    // refuse trailing values). kInvalidState on a short input or impossible values; *this may then
    // be partly overwritten, so unpack into a temporary (as a restore does).
    Status Unpack(StateReader& r);
  };

  // Precondition: options.Validate().ok() (asserted). Allocates the window once.
  explicit Glr(const GlrOptions& options);

  // Absorbs one standardized value. A non-finite z, or one that would make a prefix sum overflow
  // (a state Restore refuses), is ignored (nothing changes, no raise/clear).
  DetectorEvent Update(double z, const ObservationMark& mark);

  void Reset();
  const GlrOptions& options() const { return options_; }
  // Builds the time-ordered view of the window (allocates; not for the per-observation path).
  State state() const;
  // Validates (n <= W, consistent lengths, finite values, valid cycle) and replaces; on error
  // nothing changes. Continuing after Restore(state()) is bit-identical to never having stopped.
  Status Restore(const State& s);

 private:
  void Restart();
  double Scan(std::int64_t* best_j) const;  // G_n, and the maximising j when best_j != nullptr

  GlrOptions options_;
  std::int64_t count_ = 0;          // observations in the window, <= W
  std::int64_t head_ = 0;           // ring index of the newest prefix sum
  std::int64_t since_rebase_ = 0;   // observations since the prefix sums were re-based
  std::vector<double> prefix_;      // ring of W + 1 prefix sums
  std::vector<double> inv_two_j_;   // 1 / (2 j), j = 1..W
  std::vector<double> seq_, time_;  // ring of marks of the last W observations
  AlarmCycle cycle_;
};

}  // namespace bayline::est
