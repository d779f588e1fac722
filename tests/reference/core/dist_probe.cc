// dist_probe: evaluates the project's special functions and distributions for the reference test.
// Reads lines "<function> <arg1> [<arg2> ...]" on stdin; prints one value per line (%.17g).
#include <cstdio>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "estimators/core/distributions.h"
#include "estimators/core/special_functions.h"

namespace d = bayline::est::dist;
namespace s = bayline::est::special;

int main() {
  std::string line;
  while (std::getline(std::cin, line)) {
    std::istringstream in(line);
    std::string f;
    in >> f;
    std::vector<double> a;
    for (double v; in >> v;) a.push_back(v);
    a.resize(4, 0.0);
    double r = 0;
    if (f == "lgamma")
      r = s::LogGamma(a[0]);
    else if (f == "digamma")
      r = s::Digamma(a[0]);
    else if (f == "trigamma")
      r = s::Trigamma(a[0]);
    else if (f == "gammainc")
      r = s::GammaP(a[0], a[1]);
    else if (f == "gammaincc")
      r = s::GammaQ(a[0], a[1]);
    else if (f == "betainc")
      r = s::BetaI(a[0], a[1], a[2]);
    else if (f == "norm_cdf")
      r = d::NormalCdf(a[0]);
    else if (f == "norm_sf")
      r = d::NormalSf(a[0]);
    else if (f == "norm_ppf")
      r = d::NormalQuantile(a[0]);
    else if (f == "norm_logpdf")
      r = d::NormalLogPdf(a[0], a[1], a[2]);
    else if (f == "t_cdf")
      r = d::StudentTCdf(a[0], a[1]);
    else if (f == "t_ppf")
      r = d::StudentTQuantile(a[0], a[1]);
    else if (f == "t_logpdf")
      r = d::StudentTLogPdf(a[0], a[1]);
    else if (f == "t_score")
      r = d::StudentTNormalScore(a[0], a[1]);
    else if (f == "chi2_cdf")
      r = d::ChiSquaredCdf(a[0], a[1]);
    else if (f == "chi2_ppf")
      r = d::ChiSquaredQuantile(a[0], a[1]);
    else if (f == "gamma_cdf")
      r = d::GammaCdf(a[0], a[1], a[2]);
    else if (f == "gamma_ppf")
      r = d::GammaQuantile(a[0], a[1], a[2]);
    else if (f == "gamma_logpdf")
      r = d::GammaLogPdf(a[0], a[1], a[2]);
    else if (f == "beta_cdf")
      r = d::BetaCdf(a[0], a[1], a[2]);
    else if (f == "beta_ppf")
      r = d::BetaQuantile(a[0], a[1], a[2]);
    else if (f == "beta_logpdf")
      r = d::BetaLogPdf(a[0], a[1], a[2]);
    else if (f == "poisson_logpmf")
      r = d::PoissonLogPmf(a[0], a[1]);
    else if (f == "binom_logpmf")
      r = d::BinomialLogPmf(a[0], a[1], a[2]);
    else {
      std::cerr << "unknown function " << f << "\n";
      return 2;
    }
    std::printf("%.17g\n", r);
  }
  return 0;
}
