// Helpers shared by the ls unit tests: seeded data, batch least squares, relative comparisons.
#pragma once

#include <Eigen/Dense>
#include <cmath>
#include <cstring>
#include <random>
#include <vector>

#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"

namespace bayline::est::testing {

struct Data {
  Eigen::MatrixXd x;  // n x p
  Eigen::VectorXd y;
};

// y = x'theta + sigma * N(0,1); column 0 is an intercept when `intercept`.
inline Data MakeData(int n, const Eigen::VectorXd& theta, double sigma, std::uint64_t seed,
                     bool intercept = true) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> g(0.0, 1.0);
  const auto p = theta.size();
  Data d{Eigen::MatrixXd(n, p), Eigen::VectorXd(n)};
  for (int i = 0; i < n; ++i) {
    for (Eigen::Index j = 0; j < p; ++j) d.x(i, j) = (intercept && j == 0) ? 1.0 : g(rng);
    d.y(i) = d.x.row(i).dot(theta) + sigma * g(rng);
  }
  return d;
}

inline Sample SampleAt(const Data& d, int i, std::vector<double>* buf, double weight = 1.0) {
  buf->resize(static_cast<std::size_t>(d.x.cols()));
  for (Eigen::Index j = 0; j < d.x.cols(); ++j) (*buf)[static_cast<std::size_t>(j)] = d.x(i, j);
  Sample s;
  s.y = d.y(i);
  s.x = *buf;
  s.weight = weight;
  return s;
}

// Weighted batch least squares (the reference for the identities) by column-pivoted Householder QR
// on sqrt(w)-scaled rows.
inline Eigen::VectorXd BatchLs(const Eigen::MatrixXd& x, const Eigen::VectorXd& y,
                               const Eigen::VectorXd* w = nullptr) {
  Eigen::MatrixXd xs = x;
  Eigen::VectorXd ys = y;
  if (w) {
    for (Eigen::Index i = 0; i < x.rows(); ++i) {
      xs.row(i) *= std::sqrt((*w)(i));
      ys(i) *= std::sqrt((*w)(i));
    }
  }
  // Columns equilibrated to unit norm first, so pivoted QR's rank threshold sees the scaled
  // problem.
  const Eigen::VectorXd norms = xs.colwise().norm().transpose();
  for (Eigen::Index j = 0; j < xs.cols(); ++j) xs.col(j) /= norms(j);
  Eigen::VectorXd t = xs.colPivHouseholderQr().solve(ys);
  return t.cwiseQuotient(norms);
}

inline double MaxRelErr(const Eigen::VectorXd& a, const Eigen::VectorXd& b) {
  double m = 0.0;
  for (Eigen::Index i = 0; i < a.size(); ++i) {
    m = std::max(m, std::fabs(a(i) - b(i)) / std::max(std::fabs(b(i)), 1e-300));
  }
  return m;
}

template <typename State>
std::vector<double> Packed(const State& s) {
  std::vector<double> v;
  StateWriter w(&v);
  s.Pack(w);
  return v;
}

inline bool BitIdentical(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0;
}

}  // namespace bayline::est::testing
