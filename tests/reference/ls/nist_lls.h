// NIST StRD linear least squares datasets (tests/reference/data/nist-strd, format in its README):
// loading, streaming through the estimators in several modes, and scoring by NIST's log relative
// error. Shared by the reference test and the nist_lre_table program.
#pragma once

#include <string>
#include <vector>

#include "estimators/ls/double_double.h"

namespace bayline::est::nist {

inline const std::vector<std::string>& DatasetNames() {
  static const std::vector<std::string> names = {"Norris",   "Pontius",  "NoInt1",   "NoInt2",
                                                 "Filip",    "Longley",  "Wampler1", "Wampler2",
                                                 "Wampler3", "Wampler4", "Wampler5"};
  return names;
}

struct Dataset {
  std::string name;
  std::vector<int> powers;          // regressor of B_k: x^k (one x column) or x_k / 1 (Longley)
  std::vector<double> certified_b;  // as printed by NIST, parsed to the nearest double
  std::vector<double> certified_sd;
  double certified_residual_sd = 0;
  bool multi_column = false;  // Longley
  std::vector<std::string> y_text;
  std::vector<std::vector<std::string>> x_text;  // per row, the x column(s)
  int p() const { return static_cast<int>(powers.size()); }
  int n() const { return static_cast<int>(y_text.size()); }
};

// Reads <source>/tests/reference/data/nist-strd/<name>.txt. Aborts the test program on a bad file.
Dataset Load(const std::string& name);

// Row i: regressors and response in double (x^k by repeated multiplication, as a user would), or
// in double-double from the decimal strings (hi + lo).
void RowDouble(const Dataset& d, int i, std::vector<double>* x, double* y);
void RowExtended(const Dataset& d, int i, std::vector<double>* x_hi, std::vector<double>* x_lo,
                 double* y_hi, double* y_lo);

enum class Mode {
  kDouble,                // default RLS, double rows
  kExtended,              // extended precision, double-double rows (UpdateExtended)
  kExtendedDoubleInputs,  // extended precision, rows rounded to double first (Update)
  kCovarianceForm,        // textbook covariance-form RLS, P0 = 1e8 I (test tree only)
};
const char* ModeName(Mode m);

struct Fit {
  std::vector<double> b, sd;
  double residual_sd = 0;
  bool identifiable = false;
  bool ill_conditioned = false;
};
Fit Stream(const Dataset& d, Mode mode);

// NIST's log relative error, capped at the 15 certified digits; 0 for NaN or a hopeless estimate.
double Lre(double estimate, double certified);
struct Score {
  double min_b = 0, min_sd = 0;  // min over coefficients / over the nonzero certified sds
  bool has_sd = false;
};
Score ScoreFit(const Dataset& d, const Fit& f);

}  // namespace bayline::est::nist
