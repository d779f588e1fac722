#include "tests/reference/ls/nist_lls.h"

#include <Eigen/Dense>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "estimators/ls/rls.h"
#include "tests/reference/ls/covariance_rls.h"

namespace bayline::est::nist {

namespace {

[[noreturn]] void Die(const std::string& why) {
  std::fprintf(stderr, "nist: %s\n", why.c_str());
  std::abort();
}

DoubleDouble ParseDd(const std::string& s) {
  DoubleDouble v;
  if (!ParseDoubleDouble(s.c_str(), &v)) Die("bad number '" + s + "'");
  return v;
}

}  // namespace

Dataset Load(const std::string& name) {
  const std::string path =
      std::string(BAYLINE_SOURCE_DIR) + "/tests/reference/data/nist-strd/" + name + ".txt";
  std::ifstream in(path);
  if (!in) Die("cannot open " + path);
  Dataset d;
  d.name = name;
  std::string line;
  bool header = false;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::istringstream ss(line);
    if (line[0] == '#') {
      std::string hash, key, which, b, sd;
      ss >> hash >> key;
      if (key != "certified") continue;
      ss >> which;
      if (which == "residual_sd") {
        ss >> b;
        d.certified_residual_sd = ParseDd(b).hi;
      } else if (which.size() > 1 && which[0] == 'B') {
        ss >> b >> sd;
        d.powers.push_back(std::atoi(which.c_str() + 1));
        d.certified_b.push_back(std::strtod(b.c_str(), nullptr));
        d.certified_sd.push_back(std::strtod(sd.c_str(), nullptr));
      }
      continue;
    }
    if (!header) {  // column names
      std::string col;
      int cols = 0;
      while (ss >> col) ++cols;
      d.multi_column = cols > 2;
      header = true;
      continue;
    }
    std::string y, x;
    ss >> y;
    d.y_text.push_back(y);
    std::vector<std::string> xs;
    while (ss >> x) xs.push_back(x);
    d.x_text.push_back(xs);
  }
  if (d.powers.empty() || d.y_text.empty()) Die("no data in " + path);
  return d;
}

void RowDouble(const Dataset& d, int i, std::vector<double>* x, double* y) {
  const auto& xs = d.x_text[static_cast<std::size_t>(i)];
  *y = std::strtod(d.y_text[static_cast<std::size_t>(i)].c_str(), nullptr);
  x->resize(d.powers.size());
  for (std::size_t j = 0; j < d.powers.size(); ++j) {
    const int k = d.powers[j];
    if (d.multi_column) {
      (*x)[j] = k == 0 ? 1.0 : std::strtod(xs[static_cast<std::size_t>(k - 1)].c_str(), nullptr);
    } else {
      const double v = std::strtod(xs[0].c_str(), nullptr);
      double pw = 1.0;
      for (int e = 0; e < k; ++e) pw *= v;
      (*x)[j] = pw;
    }
  }
}

void RowExtended(const Dataset& d, int i, std::vector<double>* x_hi, std::vector<double>* x_lo,
                 double* y_hi, double* y_lo) {
  const auto& xs = d.x_text[static_cast<std::size_t>(i)];
  const DoubleDouble y = ParseDd(d.y_text[static_cast<std::size_t>(i)]);
  *y_hi = y.hi;
  *y_lo = y.lo;
  x_hi->resize(d.powers.size());
  x_lo->resize(d.powers.size());
  for (std::size_t j = 0; j < d.powers.size(); ++j) {
    const int k = d.powers[j];
    DoubleDouble v(1.0);
    if (d.multi_column) {
      if (k > 0) v = ParseDd(xs[static_cast<std::size_t>(k - 1)]);
    } else {
      const DoubleDouble base = ParseDd(xs[0]);
      for (int e = 0; e < k; ++e) v = v * base;
    }
    (*x_hi)[j] = v.hi;
    (*x_lo)[j] = v.lo;
  }
}

const char* ModeName(Mode m) {
  switch (m) {
    case Mode::kDouble:
      return "double";
    case Mode::kExtended:
      return "extended";
    case Mode::kExtendedDoubleInputs:
      return "extended, double rows";
    case Mode::kCovarianceForm:
      return "covariance form";
  }
  return "?";
}

Fit Stream(const Dataset& d, Mode mode) {
  const int p = d.p();
  Fit f;
  std::vector<double> x, x_lo;
  double y = 0, y_lo = 0;
  if (mode == Mode::kCovarianceForm) {
    CovarianceRls cov(p, 1e8);
    Eigen::MatrixXd xm(d.n(), p);
    Eigen::VectorXd ym(d.n());
    for (int i = 0; i < d.n(); ++i) {
      RowDouble(d, i, &x, &y);
      const Eigen::Map<const Eigen::VectorXd> xv(x.data(), p);
      cov.Update(xv, y);
      xm.row(i) = xv.transpose();
      ym(i) = y;
    }
    const double s2 = (ym - xm * cov.theta()).squaredNorm() / (d.n() - p);
    f.identifiable = true;
    f.residual_sd = std::sqrt(s2);
    for (int j = 0; j < p; ++j) {
      f.b.push_back(cov.theta()(j));
      f.sd.push_back(std::sqrt(s2 * cov.p_matrix()(j, j)));
    }
    return f;
  }
  RlsOptions opt;
  opt.extended_precision = mode != Mode::kDouble;
  Rls est(opt, p);
  for (int i = 0; i < d.n(); ++i) {
    Sample s;
    Status st;
    if (mode == Mode::kExtended) {
      RowExtended(d, i, &x, &x_lo, &y, &y_lo);
      s.y = y;
      s.x = x;
      st = est.UpdateExtended(s, x_lo, y_lo);
    } else {
      RowDouble(d, i, &x, &y);
      s.y = y;
      s.x = x;
      st = est.Update(s);
    }
    if (!st.ok()) Die(d.name + ": " + st.ToString());
  }
  const ParameterReport rep = est.Report();
  f.identifiable = rep.identifiable;
  f.ill_conditioned = est.ill_conditioned();
  f.b = rep.value;
  f.sd = rep.std_error;
  f.residual_sd = std::sqrt(est.residual_variance());
  return f;
}

double Lre(double estimate, double certified) {
  constexpr double kDigits = 15.0;  // NIST certifies 15 significant digits
  if (!std::isfinite(estimate)) return 0.0;
  const double err = std::fabs(estimate - certified);
  if (err == 0.0) return kDigits;
  const double lre = -std::log10(err / std::fabs(certified));
  return std::max(0.0, std::min(kDigits, lre));
}

Score ScoreFit(const Dataset& d, const Fit& f) {
  Score s;
  s.min_b = s.min_sd = 15.0;
  for (int j = 0; j < d.p(); ++j) {
    const auto k = static_cast<std::size_t>(j);
    s.min_b = std::min(s.min_b, Lre(f.b[k], d.certified_b[k]));
    if (d.certified_sd[k] != 0.0) {
      s.has_sd = true;
      s.min_sd = std::min(s.min_sd, Lre(f.sd[k], d.certified_sd[k]));
    }
  }
  return s;
}

}  // namespace bayline::est::nist
