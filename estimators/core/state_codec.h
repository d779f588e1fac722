// State codec: every estimator and detector state is a plain struct that flattens to a sequence of
// doubles (counts are exact in a double up to 2^53) and back. The daemon stores that sequence
// verbatim in its snapshot, so a restored object continues bit-identically.
//
// Usage in a class X:
//   void X::State::Pack(StateWriter& w) const { w.Put(n); w.Put(theta); ... }
//   Status X::State::Unpack(StateReader& r) { ... r.Get(n) ... ; return r.status(); }
// A reader that runs past the end, or a Get of a matrix with a mismatched size, marks the reader
// failed; Unpack then returns kInvalidState and the caller keeps its previous state.
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <span>
#include <string>
#include <vector>

#include "estimators/core/status.h"

namespace bayline::est {

class StateWriter {
 public:
  explicit StateWriter(std::vector<double>* out) : out_(out) {}
  void Put(double v) { out_->push_back(v); }
  void Put(bool v) { out_->push_back(v ? 1.0 : 0.0); }
  template <typename Derived>
  void Put(const Eigen::DenseBase<Derived>& m) {
    for (Eigen::Index j = 0; j < m.cols(); ++j)
      for (Eigen::Index i = 0; i < m.rows(); ++i) out_->push_back(m(i, j));
  }

 private:
  std::vector<double>* out_;
};

class StateReader {
 public:
  explicit StateReader(std::span<const double> in) : in_(in) {}
  bool Get(double& v) {
    if (!ok_ || pos_ >= in_.size()) return Fail("state ends early");
    v = in_[pos_++];
    return true;
  }
  bool Get(bool& v) {
    double d = 0;
    if (!Get(d)) return false;
    v = d != 0.0;
    return true;
  }
  // Reads rows*cols values into m (column-major). m must already have the intended size.
  template <typename Derived>
  bool Get(Eigen::DenseBase<Derived>& m) {
    const auto n = static_cast<std::size_t>(m.rows() * m.cols());
    if (!ok_ || in_.size() - pos_ < n) return Fail("state ends early");
    for (Eigen::Index j = 0; j < m.cols(); ++j)
      for (Eigen::Index i = 0; i < m.rows(); ++i) m(i, j) = in_[pos_++];
    return true;
  }
  bool Fail(std::string why) {
    if (ok_) error_ = std::move(why);
    ok_ = false;
    return false;
  }
  bool done() const { return pos_ == in_.size(); }
  // Ok only if every Get succeeded and, when require_end, the input was consumed exactly.
  Status status(bool require_end = true) const {
    if (!ok_) return Status::Error(ErrorCode::kInvalidState, error_);
    if (require_end && !done())
      return Status::Error(ErrorCode::kInvalidState, "state has trailing values");
    return Status::Ok();
  }

 private:
  std::span<const double> in_;
  std::size_t pos_ = 0;
  bool ok_ = true;
  std::string error_;
};

}  // namespace bayline::est
