// map_probe: runs one map estimator over observations read from stdin and prints what it reports,
// for the Python reference checks (test_map_reference.py). Numbers are printed with 17 significant
// digits so the checks see the estimator's doubles exactly.
//
// Usage (first argument: model; the rest: options, in order):
//   map_probe nig P LEVEL FLAT A0 B0 M0_1..M0_P LAMBDA0_1..LAMBDA0_P
//   map_probe normal_gamma LEVEL FLAT M0 KAPPA0 A0 B0
//   map_probe beta_binomial LEVEL ALPHA0 BETA0
//   map_probe gamma_poisson LEVEL A0 B0
//   map_probe gamma_exponential LEVEL A0 B0
//   map_probe dlm P LEVEL V DIFFUSE DIFFUSE_VAR W_1..W_P M1_1..M1_P C1_1..C1_P
// stdin lines:
//   obs Y WEIGHT TRIALS EXPOSURE X_1..X_P     one observation (trials/exposure ignored if unused)
//   predict X_1..X_P                          (nig, dlm) a prediction at x
// stdout lines:
//   status CODE_NAME                          a rejected observation
//   innov VALID PREDICTION RESIDUAL SD STANDARDIZED LOG_PREDICTIVE
//   filtered M_1..M_P C_11 C_12 .. C_PP       (dlm, after each observation; C row-major)
//   prediction VALID MEAN SD MEAN_SD LOWER UPPER
//   report J VALUE POSTERIOR_MEAN STD_ERROR LOWER UPPER     (at the end, one per parameter)
//   summary IDENTIFIABLE EFFECTIVE_N LOG_LIKELIHOOD
#include <cstdio>
#include <cstdlib>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "estimators/map/beta_binomial.h"
#include "estimators/map/dynamic_linear_model.h"
#include "estimators/map/gamma_exponential.h"
#include "estimators/map/gamma_poisson.h"
#include "estimators/map/nig_regression.h"
#include "estimators/map/normal_gamma.h"

namespace {

using namespace bayline::est;

struct Args {
  std::vector<std::string> v;
  std::size_t i = 2;
  double Next() {
    if (i >= v.size()) {
      std::fprintf(stderr, "map_probe: missing argument %zu\n", i);
      std::exit(2);
    }
    return std::strtod(v[i++].c_str(), nullptr);
  }
  std::vector<double> NextN(int n) {
    std::vector<double> out(n);
    for (double& d : out) d = Next();
    return out;
  }
};

void PrintInnovation(const Innovation& inn) {
  std::printf("innov %d %.17g %.17g %.17g %.17g %.17g\n", inn.valid ? 1 : 0, inn.prediction,
              inn.residual, inn.predictive_sd, inn.standardized, inn.log_predictive);
}

void PrintPrediction(const Prediction& p) {
  std::printf("prediction %d %.17g %.17g %.17g %.17g %.17g\n", p.valid ? 1 : 0, p.mean, p.sd,
              p.mean_sd, p.lower, p.upper);
}

void PrintReport(const ParameterReport& r) {
  for (std::size_t j = 0; j < r.value.size(); ++j) {
    std::printf("report %zu %.17g %.17g %.17g %.17g %.17g\n", j, r.value[j],
                r.posterior_mean.empty() ? 0.0 : r.posterior_mean[j], r.std_error[j], r.lower[j],
                r.upper[j]);
  }
  std::printf("summary %d %.17g %.17g\n", r.identifiable ? 1 : 0, r.effective_n, r.log_likelihood);
}

// Reads stdin; calls on_obs(sample) for "obs" lines and on_predict(x) for "predict" lines.
template <typename OnObs, typename OnPredict>
void Loop(OnObs on_obs, OnPredict on_predict) {
  std::string line;
  while (std::getline(std::cin, line)) {
    std::istringstream in(line);
    std::string kind;
    in >> kind;
    std::vector<double> nums;
    std::string token;
    while (in >> token) nums.push_back(std::strtod(token.c_str(), nullptr));  // accepts nan, inf
    if (kind == "obs" && nums.size() >= 4) {
      Sample s;
      s.y = nums[0];
      s.weight = nums[1];
      s.trials = nums[2];
      s.exposure = nums[3];
      std::vector<double> x(nums.begin() + 4, nums.end());
      s.x = x;
      on_obs(s);
    } else if (kind == "predict") {
      on_predict(nums);
    }
  }
}

template <typename Est>
void Observe(Est& est, const Sample& s) {
  Innovation inn;
  const Status st = est.Update(s, &inn);
  if (!st.ok()) {
    std::printf("status %s\n", std::string(ErrorCodeName(st.code())).c_str());
    return;
  }
  PrintInnovation(inn);
}

template <typename Est>
void RunScalar(Est& est, double level) {
  Loop([&](const Sample& s) { Observe(est, s); }, [](const std::vector<double>&) {});
  PrintReport(est.Report(level));
}

}  // namespace

int main(int argc, char** argv) {
  Args a{std::vector<std::string>(argv, argv + argc)};
  if (argc < 2) {
    std::fprintf(stderr, "usage: see the header of map_probe.cc\n");
    return 2;
  }
  const std::string model = argv[1];
  if (model == "nig") {
    NigRegression<>::Options o;
    o.p = static_cast<int>(a.Next());
    const double level = a.Next();
    o.flat_prior = a.Next() != 0;
    o.a0 = a.Next();
    o.b0 = a.Next();
    o.prior_mean = a.NextN(o.p);
    o.prior_precision = a.NextN(o.p);
    if (!o.Validate().ok()) return 3;
    NigRegression<> est(o);
    Loop([&](const Sample& s) { Observe(est, s); },
         [&](const std::vector<double>& x) { PrintPrediction(est.Predict(x, level)); });
    PrintReport(est.Report(level));
  } else if (model == "normal_gamma") {
    NormalGamma::Options o;
    const double level = a.Next();
    o.flat_prior = a.Next() != 0;
    o.m0 = a.Next();
    o.kappa0 = a.Next();
    o.a0 = a.Next();
    o.b0 = a.Next();
    if (!o.Validate().ok()) return 3;
    NormalGamma est(o);
    RunScalar(est, level);
  } else if (model == "beta_binomial") {
    BetaBinomial::Options o;
    const double level = a.Next();
    o.alpha0 = a.Next();
    o.beta0 = a.Next();
    if (!o.Validate().ok()) return 3;
    BetaBinomial est(o);
    RunScalar(est, level);
  } else if (model == "gamma_poisson" || model == "gamma_exponential") {
    const double level = a.Next();
    const double a0 = a.Next(), b0 = a.Next();
    if (model == "gamma_poisson") {
      GammaPoisson::Options o;
      o.a0 = a0, o.b0 = b0;
      if (!o.Validate().ok()) return 3;
      GammaPoisson est(o);
      RunScalar(est, level);
    } else {
      GammaExponential::Options o;
      o.a0 = a0, o.b0 = b0;
      if (!o.Validate().ok()) return 3;
      GammaExponential est(o);
      RunScalar(est, level);
    }
  } else if (model == "dlm") {
    DynamicLinearModel<>::Options o;
    o.p = static_cast<int>(a.Next());
    const double level = a.Next();
    o.obs_variance = a.Next();
    o.diffuse = a.Next() != 0;
    o.diffuse_variance = a.Next();
    o.state_variance = a.NextN(o.p);
    o.initial_mean = a.NextN(o.p);
    o.initial_variance = a.NextN(o.p);
    if (!o.Validate().ok()) return 3;
    DynamicLinearModel<> est(o);
    Loop(
        [&](const Sample& s) {
          Observe(est, s);
          std::printf("filtered");
          for (int i = 0; i < o.p; ++i) std::printf(" %.17g", est.mean()(i));
          const Eigen::MatrixXd C = est.covariance();
          for (int i = 0; i < o.p; ++i)
            for (int j = 0; j < o.p; ++j) std::printf(" %.17g", C(i, j));
          std::printf("\n");
        },
        [&](const std::vector<double>& x) { PrintPrediction(est.Predict(x, level)); });
    PrintReport(est.Report(level));
  } else {
    std::fprintf(stderr, "map_probe: unknown model %s\n", model.c_str());
    return 2;
  }
  return 0;
}
