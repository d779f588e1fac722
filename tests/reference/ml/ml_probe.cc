// ml_probe: runs one online maximum-likelihood estimator over observations read from stdin and
// prints its report, so Python reference tests can compare it with scipy / statsmodels.
//
// Usage: ml_probe <family> [p] [--innovations]
//   family: gaussian lognormal poisson binomial exponential gamma logistic poisson_regression
//   stdin, one observation per line: "y [aux [x_1 ... x_p]]", aux = trials (binomial, logistic)
//   or exposure (poisson, poisson_regression); aux defaults to 1.
// Output (whitespace separated, full precision):
//   innovation <valid> <prediction> <sd> <standardized> <log_predictive>   (per line, if asked)
//   value ... / se ... / lower ... / upper ... / loglik L / identifiable 0|1 / effective_n W
// A rejected observation prints "rejected <status>" to stderr and exits with status 2.
#include <cstdio>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "estimators/ml/binomial_ml.h"
#include "estimators/ml/exponential_ml.h"
#include "estimators/ml/gamma_ml.h"
#include "estimators/ml/gaussian_ml.h"
#include "estimators/ml/glm_ml.h"
#include "estimators/ml/lognormal_ml.h"
#include "estimators/ml/poisson_ml.h"

namespace {

using namespace bayline::est;

void PrintVector(const char* key, const std::vector<double>& v) {
  std::printf("%s", key);
  for (double d : v) std::printf(" %.17g", d);
  std::printf("\n");
}

template <typename Est>
int Run(Est& est, std::size_t p, bool poisson_aux, bool innovations) {
  std::string line;
  std::vector<double> x(p);
  while (std::getline(std::cin, line)) {
    std::istringstream in(line);
    Sample s;
    if (!(in >> s.y)) continue;
    double aux = 1.0;
    in >> aux;
    (poisson_aux ? s.exposure : s.trials) = aux;
    for (std::size_t j = 0; j < p; ++j) in >> x[j];
    s.x = std::span<const double>(x.data(), p);
    Innovation inn;
    const Status st = est.Update(s, &inn);
    if (!st.ok()) {
      std::fprintf(stderr, "rejected %s\n", st.ToString().c_str());
      return 2;
    }
    if (innovations) {
      std::printf("innovation %d %.17g %.17g %.17g %.17g\n", inn.valid ? 1 : 0, inn.prediction,
                  inn.predictive_sd, inn.standardized, inn.log_predictive);
    }
  }
  const ParameterReport r = est.Report(0.95);
  PrintVector("value", r.value);
  PrintVector("se", r.std_error);
  PrintVector("lower", r.lower);
  PrintVector("upper", r.upper);
  std::printf("loglik %.17g\nidentifiable %d\neffective_n %.17g\n", r.log_likelihood,
              r.identifiable ? 1 : 0, r.effective_n);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: ml_probe <family> [p] [--innovations]\n");
    return 1;
  }
  const std::string family = argv[1];
  std::size_t p = 0;
  bool innovations = false;
  for (int i = 2; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--innovations")
      innovations = true;
    else
      p = std::stoul(a);
  }
  if (family == "gaussian") {
    GaussianMl e;
    return Run(e, 0, false, innovations);
  }
  if (family == "lognormal") {
    LognormalMl e;
    return Run(e, 0, false, innovations);
  }
  if (family == "poisson") {
    PoissonMl e;
    return Run(e, 0, true, innovations);
  }
  if (family == "binomial") {
    BinomialMl e;
    return Run(e, 0, false, innovations);
  }
  if (family == "exponential") {
    ExponentialMl e;
    return Run(e, 0, false, innovations);
  }
  if (family == "gamma") {
    GammaMl e;
    return Run(e, 0, false, innovations);
  }
  if (family == "logistic" || family == "poisson_regression") {
    GlmMlOptions o;
    o.num_regressors = p;
    if (!o.Validate().ok()) {
      std::fprintf(stderr, "bad p\n");
      return 1;
    }
    if (family == "logistic") {
      LogisticRegressionMl e(o);
      return Run(e, p, false, innovations);
    }
    PoissonRegressionMl e(o);
    return Run(e, p, true, innovations);
  }
  std::fprintf(stderr, "unknown family %s\n", family.c_str());
  return 1;
}
