// Prints the NIST StRD linear least squares LRE table (Markdown): min LRE over the coefficients and
// over the nonzero certified standard deviations, per dataset and mode.
// Run: build-ls/tests/reference/ls/nist_lre_table
#include <cstdio>

#include "tests/reference/ls/nist_lls.h"

int main() {
  using namespace bayline::est::nist;
  const Mode modes[] = {Mode::kDouble, Mode::kExtended, Mode::kExtendedDoubleInputs,
                        Mode::kCovarianceForm};
  std::printf("| Dataset | n | p |");
  for (Mode m : modes) std::printf(" %s: coef | %s: sd |", ModeName(m), ModeName(m));
  std::printf(" double: ill_conditioned |\n|---|---|---|");
  for (std::size_t i = 0; i < std::size(modes); ++i) std::printf("---|---|");
  std::printf("---|\n");
  for (const auto& name : DatasetNames()) {
    const Dataset d = Load(name);
    std::printf("| %s | %d | %d |", name.c_str(), d.n(), d.p());
    bool flagged = false;
    for (Mode m : modes) {
      const Fit f = Stream(d, m);
      if (m == Mode::kDouble) flagged = f.ill_conditioned;
      const Score s = ScoreFit(d, f);
      if (s.has_sd) {
        std::printf(" %.1f | %.1f |", s.min_b, s.min_sd);
      } else {
        std::printf(" %.1f | (sd 0) |", s.min_b);
      }
    }
    std::printf(" %s |\n", flagged ? "yes" : "no");
  }
  return 0;
}
