// Rls: recursive least squares with the parameter count chosen at run time (what the daemon uses).
// Model, state and contracts are those of RecursiveLeastSquares<P> (recursive_least_squares.h);
// this class only picks the storage: fixed-size Eigen types for p <= kMaxFixedP (no indirection,
// no heap), Eigen::Dynamic above (allocated once, at construction). Dispatch is one switch per
// call.
#pragma once

#include <Eigen/Core>
#include <span>
#include <variant>

#include "estimators/ls/recursive_least_squares.h"

namespace bayline::est {

class Rls {
 public:
  static constexpr int kMaxFixedP = 4;

  // Captured state: the state of the underlying fixed or dynamic estimator. Pack writes that state
  // (whose first value is p); Unpack reads p first to choose the storage, then the rest.
  struct State {
    std::variant<RecursiveLeastSquares<1>::State, RecursiveLeastSquares<2>::State,
                 RecursiveLeastSquares<3>::State, RecursiveLeastSquares<4>::State,
                 RecursiveLeastSquares<Eigen::Dynamic>::State>
        inner;
    void Pack(StateWriter& w) const;
    // kInvalidState on truncation or a bad p. Reads exactly its own values: a caller that owns the
    // whole buffer checks r.status() afterwards to refuse trailing values.
    Status Unpack(StateReader& r);
  };

  // p >= 1; options valid (assert; call options.Validate() on anything from outside).
  Rls(const RlsOptions& options, int p);

  // See RecursiveLeastSquares<P>: same results, same rejection rules (state unchanged on
  // rejection).
  Status Update(const Sample& s, Innovation* out = nullptr, RecursiveResidual* rr = nullptr);
  Status Update(const Sample& s, Innovation* out, RecursiveResidual* rr,
                const InnovationCheck& check);
  Status UpdateExtended(const Sample& s, std::span<const double> x_lo, double y_lo,
                        Innovation* out = nullptr, RecursiveResidual* rr = nullptr);
  ParameterReport Report(double level = 0.95) const;
  Status Predict(std::span<const double> x, double level, Prediction* out) const;
  Status InflateUncertainty(double factor);
  void Reset();

  int p() const { return p_; }
  bool identifiable() const;
  Eigen::VectorXd coefficients() const;
  Eigen::MatrixXd covariance() const;
  double residual_variance() const;
  double dof() const;
  double effective_n() const;
  double rss() const;
  double ConditionNumber() const;
  double ErrorSensitivity() const;
  bool ill_conditioned() const;
  const RlsOptions& options() const { return options_; }

  // A copy of the current state (by value: the storage type varies with p).
  State state() const;
  // The state invariants (RecursiveLeastSquares<P>::Validate, shared with Update); kInvalidState
  // also when the state's p differs from p().
  Status Validate(const State& s) const;
  // Validate, then replaces; kInvalidState (nothing changed) on failure.
  Status Restore(const State& s);

 private:
  template <typename F>
  decltype(auto) Visit(F&& f) {
    return std::visit(std::forward<F>(f), impl_);
  }
  template <typename F>
  decltype(auto) Visit(F&& f) const {
    return std::visit(std::forward<F>(f), impl_);
  }

  RlsOptions options_;
  int p_;
  std::variant<RecursiveLeastSquares<1>, RecursiveLeastSquares<2>, RecursiveLeastSquares<3>,
               RecursiveLeastSquares<4>, RecursiveLeastSquares<Eigen::Dynamic>>
      impl_;
};

}  // namespace bayline::est
