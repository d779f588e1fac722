// Probe for the R reference test (charts_spc_test.R): prints this project's ARLs and calibrated
// settings as CSV so R spc can be compared with them like for like.
//
//   charts_probe arl cusum <k> <h> <head_start> <shift>        -> one ARL (two-sided CUSUM)
//   charts_probe arl ewma <lambda> <L> <fix|vacl> <shift>      -> one ARL (two-sided EWMA)
//   charts_probe markdown <arl0>                               -> README table for one ARL0
//   charts_probe table                                         -> calibration table, CSV rows
//     chart,limits,arl0,design_shift,p1,p2,shift,arl
//     (cusum: p1 = k, p2 = h; ewma: p1 = lambda, p2 = L; limits fix|vacl|-)
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "estimators/detect/arl.h"
#include "estimators/detect/calibration.h"

using namespace bayline::est;

namespace {

int Table() {
  const std::vector<double> arl0s = {100, 370, 500, 1000};
  const std::vector<double> designs = {0.5, 1.0, 1.5, 2.0, 2.5, 3.0};
  const std::vector<double> shifts = {0.0, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0};
  std::printf("chart,limits,arl0,design_shift,p1,p2,shift,arl\n");
  for (double arl0 : arl0s) {
    for (double d : designs) {
      CusumOptions c;
      if (Status s = CalibrateCusum({arl0, d}, &c); !s.ok()) {
        std::fprintf(stderr, "%s\n", s.ToString().c_str());
        return 1;
      }
      for (double mu : shifts)
        std::printf("cusum,-,%g,%g,%.10g,%.10g,%g,%.10g\n", arl0, d, c.k, c.h, mu, CusumArl(c, mu));
      for (EwmaLimits lim : {EwmaLimits::kAsymptotic, EwmaLimits::kExact}) {
        EwmaOptions e;
        e.limits = lim;
        if (Status s = CalibrateEwma({arl0, d}, &e); !s.ok()) {
          std::fprintf(stderr, "%s\n", s.ToString().c_str());
          return 1;
        }
        const char* name = lim == EwmaLimits::kExact ? "vacl" : "fix";
        for (double mu : shifts)
          std::printf("ewma,%s,%g,%g,%.10g,%.10g,%g,%.10g\n", name, arl0, d, e.lambda, e.L, mu,
                      EwmaArl(e, mu));
      }
    }
  }
  return 0;
}

// Calibrated settings for design shifts 0.5..3 at one ARL0, and their ARLs at shifts 0.5..3, as
// a Markdown table (CUSUM; EWMA with exact and with asymptotic limits), zero-state ARLs.
int Markdown(double arl0) {
  const std::vector<double> ds = {0.5, 1.0, 1.5, 2.0, 2.5, 3.0};
  std::printf(
      "| chart | design shift D | settings | ARL0 | ARL at 0.5 | 1 | 1.5 | 2 | 2.5 | 3 |\n");
  std::printf("|---|---|---|---|---|---|---|---|---|---|\n");
  for (double d : ds) {
    CusumOptions c;
    EwmaOptions e;
    if (!CalibrateCusum({arl0, d}, &c).ok() || !CalibrateEwma({arl0, d}, &e).ok()) return 1;
    std::printf("| CUSUM | %g | k = %.3g, h = %.3f | %.0f |", d, c.k, c.h, CusumArl(c, 0.0));
    for (double mu : ds) std::printf(" %.3g |", CusumArl(c, mu));
    std::printf("\n| EWMA (exact limits) | %g | lambda = %.2g, L = %.3f | %.0f |", d, e.lambda, e.L,
                EwmaArl(e, 0.0));
    for (double mu : ds) std::printf(" %.3g |", EwmaArl(e, mu));
    // Same lambda with asymptotic limits: what a shift arriving long after the start meets.
    EwmaOptions a = e;
    a.limits = EwmaLimits::kAsymptotic;
    if (!CalibrateEwmaWidth(arl0, &a).ok()) return 1;
    std::printf("\n| EWMA (asymptotic limits) | %g | lambda = %.2g, L = %.3f | %.0f |", d, a.lambda,
                a.L, EwmaArl(a, 0.0));
    for (double mu : ds) std::printf(" %.3g |", EwmaArl(a, mu));
    std::printf("\n");
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::vector<std::string> a(argv + 1, argv + argc);
  if (a.size() == 1 && a[0] == "table") return Table();
  if (a.size() == 2 && a[0] == "markdown") return Markdown(std::atof(a[1].c_str()));
  if (a.size() == 6 && a[0] == "arl" && a[1] == "cusum") {
    CusumOptions c;
    c.k = std::atof(a[2].c_str());
    c.h = std::atof(a[3].c_str());
    c.head_start = std::atof(a[4].c_str());
    std::printf("%.10g\n", CusumArl(c, std::atof(a[5].c_str())));
    return 0;
  }
  if (a.size() == 6 && a[0] == "arl" && a[1] == "ewma") {
    EwmaOptions e;
    e.lambda = std::atof(a[2].c_str());
    e.L = std::atof(a[3].c_str());
    e.limits = a[4] == "vacl" ? EwmaLimits::kExact : EwmaLimits::kAsymptotic;
    std::printf("%.10g\n", EwmaArl(e, std::atof(a[5].c_str())));
    return 0;
  }
  std::fprintf(stderr,
               "usage: charts_probe table | markdown arl0 | arl cusum k h hs shift | arl ewma "
               "lambda L fix|vacl shift\n");
  return 2;
}
