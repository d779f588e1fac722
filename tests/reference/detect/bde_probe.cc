// bde_probe: recursive residuals from the project's RLS and the Brown-Durbin-Evans paths and
// bounds, for the statsmodels reference test (test_recursive_cusum_vs_statsmodels.py). stdin : "n
// k" then n rows "y x_1 ... x_k". stdout: one line per quantity, "<name> v1 v2 ..." (%.17g):
//   w           recursive residuals w_{k+1..n}
//   cusum_sd    W_j with sigma_hat = sample sd of the w's (ddof 1)
//   cusum_rms   W_j with BDE's sigma_hat^2 = sum w^2 / (n - k)
//   cusum_sq    S_j
//   bound_<alpha>     a (sqrt(N) + 2 j / sqrt(N)) at j = 0 and j = N (alpha 0.05, 0.01)
//   c0_<alpha>        CUSUM-of-squares critical value (alpha 0.2, 0.1, 0.05, 0.02, 0.01)
//   online_sq   block-end statistic of RecursiveCusumSquares with horizon N fed the w's
#include <cstdio>
#include <iostream>
#include <vector>

#include "estimators/detect/recursive_residual_tests.h"
#include "estimators/ls/rls.h"

using namespace bayline::est;

namespace {
void Print(const char* name, const std::vector<double>& v) {
  std::printf("%s", name);
  for (double x : v) std::printf(" %.17g", x);
  std::printf("\n");
}
}  // namespace

int main() {
  int n = 0, k = 0;
  if (!(std::cin >> n >> k) || n <= k || k < 1) return 2;
  Rls rls(RlsOptions{}, k);
  std::vector<double> w, x(static_cast<std::size_t>(k));
  for (int t = 0; t < n; ++t) {
    Sample s;
    std::cin >> s.y;
    for (double& v : x) std::cin >> v;
    s.x = x;
    RecursiveResidual rr;
    if (Status st = rls.Update(s, nullptr, &rr); !st.ok()) {
      std::fprintf(stderr, "%s\n", st.ToString().c_str());
      return 3;
    }
    if (rr.valid) w.push_back(rr.value);
  }
  const double big_n = static_cast<double>(w.size());
  Print("w", w);
  Print("cusum_sd", BdeCusumPath(w, BdeSigma::kSampleSd));
  Print("cusum_rms", BdeCusumPath(w, BdeSigma::kResidualRms));
  Print("cusum_sq", BdeCusumSquaresPath(w));
  for (double alpha : {0.05, 0.01}) {
    const double a = BdeCusumCoefficient(alpha);
    std::printf("bound_%g", alpha);
    Print("", {BdeCusumBoundary(0, big_n, a), BdeCusumBoundary(big_n, big_n, a)});
  }
  for (double alpha : {0.2, 0.1, 0.05, 0.02, 0.01}) {
    std::printf("c0_%g", alpha);
    Print("", {BdeCusumSquaresCriticalValue(big_n, alpha)});
  }
  RecursiveCusumSquares::Options o;
  o.horizon = static_cast<int>(w.size());
  RecursiveCusumSquares online(o);
  DetectorEvent ev;
  for (std::size_t i = 0; i < w.size(); ++i)
    if (!online.Update(w[i], {static_cast<std::int64_t>(i), 0.0}, &ev).ok()) return 1;
  Print("online_sq", {ev.statistic});
  return 0;
}
