#include "estimators/ls/rls.h"

#include <cassert>
#include <string>

namespace bayline::est {

namespace {

using Impl =
    std::variant<RecursiveLeastSquares<1>, RecursiveLeastSquares<2>, RecursiveLeastSquares<3>,
                 RecursiveLeastSquares<4>, RecursiveLeastSquares<Eigen::Dynamic>>;

Impl Make(const RlsOptions& o, int p) {
  switch (p) {
    case 1:
      return RecursiveLeastSquares<1>(o);
    case 2:
      return RecursiveLeastSquares<2>(o);
    case 3:
      return RecursiveLeastSquares<3>(o);
    case 4:
      return RecursiveLeastSquares<4>(o);
    default:
      return RecursiveLeastSquares<Eigen::Dynamic>(o, p);
  }
}

}  // namespace

Rls::Rls(const RlsOptions& options, int p) : options_(options), p_(p), impl_(Make(options, p)) {
  assert(p >= 1);
}

Status Rls::Update(const Sample& s, Innovation* out, RecursiveResidual* rr) {
  return Visit([&](auto& e) { return e.Update(s, out, rr); });
}
Status Rls::Update(const Sample& s, Innovation* out, RecursiveResidual* rr,
                   const InnovationCheck& check) {
  return Visit([&](auto& e) { return e.Update(s, out, rr, check); });
}
Status Rls::UpdateExtended(const Sample& s, std::span<const double> x_lo, double y_lo,
                           Innovation* out, RecursiveResidual* rr) {
  return Visit([&](auto& e) { return e.UpdateExtended(s, x_lo, y_lo, out, rr); });
}
ParameterReport Rls::Report(double level) const {
  return Visit([&](const auto& e) { return e.Report(level); });
}
Status Rls::Predict(std::span<const double> x, double level, Prediction* out) const {
  return Visit([&](const auto& e) { return e.Predict(x, level, out); });
}
Status Rls::InflateUncertainty(double factor) {
  return Visit([&](auto& e) { return e.InflateUncertainty(factor); });
}
void Rls::Reset() {
  Visit([](auto& e) { e.Reset(); });
}
bool Rls::identifiable() const {
  return Visit([](const auto& e) { return e.identifiable(); });
}
Eigen::VectorXd Rls::coefficients() const {
  return Visit([](const auto& e) { return Eigen::VectorXd(e.coefficients()); });
}
Eigen::MatrixXd Rls::covariance() const {
  return Visit([](const auto& e) { return Eigen::MatrixXd(e.covariance()); });
}
double Rls::residual_variance() const {
  return Visit([](const auto& e) { return e.residual_variance(); });
}
double Rls::dof() const {
  return Visit([](const auto& e) { return e.dof(); });
}
double Rls::effective_n() const {
  return Visit([](const auto& e) { return e.effective_n(); });
}
double Rls::rss() const {
  return Visit([](const auto& e) { return e.rss(); });
}
double Rls::ConditionNumber() const {
  return Visit([](const auto& e) { return e.ConditionNumber(); });
}
double Rls::ErrorSensitivity() const {
  return Visit([](const auto& e) { return e.ErrorSensitivity(); });
}
bool Rls::ill_conditioned() const {
  return Visit([](const auto& e) { return e.ill_conditioned(); });
}

Rls::State Rls::state() const {
  State s;
  Visit([&](const auto& e) { s.inner = e.state(); });
  return s;
}

Status Rls::Validate(const State& s) const {
  return Visit([&](const auto& e) -> Status {
    using S = typename std::decay_t<decltype(e)>::State;
    const S* inner = std::get_if<S>(&s.inner);
    if (!inner) {
      return Status::Error(ErrorCode::kInvalidState,
                           "state storage does not match p = " + std::to_string(p_));
    }
    return e.Validate(*inner);
  });
}

Status Rls::Restore(const State& s) {
  return Visit([&](auto& e) -> Status {
    using S = typename std::decay_t<decltype(e)>::State;
    const S* inner = std::get_if<S>(&s.inner);
    if (!inner) {
      return Status::Error(ErrorCode::kInvalidState,
                           "state storage does not match p = " + std::to_string(p_));
    }
    return e.Restore(*inner);
  });
}

void Rls::State::Pack(StateWriter& w) const {
  std::visit([&](const auto& s) { s.Pack(w); }, inner);
}

Status Rls::State::Unpack(StateReader& r) {
  StateReader peek = r;  // the inner state starts with p: look at it to choose the storage
  double p = 0;
  if (!peek.Get(p)) return peek.status(false);
  Status st;
  auto read = [&](auto tag) {
    decltype(tag) s;
    st = s.Unpack(r);
    if (st.ok()) inner = std::move(s);
  };
  if (p == 1)
    read(RecursiveLeastSquares<1>::State{});
  else if (p == 2)
    read(RecursiveLeastSquares<2>::State{});
  else if (p == 3)
    read(RecursiveLeastSquares<3>::State{});
  else if (p == 4)
    read(RecursiveLeastSquares<4>::State{});
  else
    read(RecursiveLeastSquares<Eigen::Dynamic>::State{});
  return st;
}

}  // namespace bayline::est
