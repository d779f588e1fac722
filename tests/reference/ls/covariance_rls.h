// Textbook covariance-form recursive least squares, for comparison only (test tree):
//   k = P x / (1 + x'P x),  theta <- theta + k (y - x'theta),  P <- P - k x'P  (then symmetrised),
// started from theta = 0, P = delta I. The prior delta^-1 I biases the estimate and the update of P
// subtracts nearly equal numbers, which is why the estimator proper uses the square-root form.
#pragma once

#include <Eigen/Dense>

namespace bayline::est::nist {

class CovarianceRls {
 public:
  CovarianceRls(int p, double delta)
      : theta_(Eigen::VectorXd::Zero(p)), pm_(delta * Eigen::MatrixXd::Identity(p, p)) {}
  void Update(const Eigen::VectorXd& x, double y) {
    const Eigen::VectorXd px = pm_ * x;
    const double denom = 1.0 + x.dot(px);
    const Eigen::VectorXd k = px / denom;
    theta_ += k * (y - x.dot(theta_));
    pm_ -= k * px.transpose();
    pm_ = 0.5 * (pm_ + pm_.transpose()).eval();
  }
  const Eigen::VectorXd& theta() const { return theta_; }
  const Eigen::MatrixXd& p_matrix() const { return pm_; }

 private:
  Eigen::VectorXd theta_;
  Eigen::MatrixXd pm_;
};

}  // namespace bayline::est::nist
