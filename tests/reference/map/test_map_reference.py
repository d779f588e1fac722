"""Reference checks of the map (Bayesian sequential posterior) estimators.

Sources, named beside each check:
  * scipy.stats from Debian's python3-scipy: t, invgamma, beta, gamma quantiles (ppf); the
    multivariate_t, betabinom, nbinom and lomax log densities; norm.ppf for normal scores.
  * statsmodels from Debian's python3-statsmodels 0.13: OLS confidence intervals (the flat-prior
    credible intervals), UnobservedComponents and a state-space MLEModel (Kalman filter).
The posterior parameters themselves are computed here in batch (closed form, numpy) from the same
data, independently of the sequential C++ updates; the probe is tests/reference/map/map_probe.cc.
"""
import os
import subprocess

import numpy as np
import pytest
from scipy import stats

PROBE = os.path.join(os.environ.get("BAYLINE_BINARY_DIR", "build"), "tests", "reference", "map",
                     "map_probe")
LEVEL = 0.9
Q = 0.5 - 0.5 * LEVEL  # lower tail probability of the equal-tailed interval


def t_ppf(p, df, loc=0.0, scale=1.0):
    """Student-t quantile: scipy.stats.t.ppf polished by Newton steps on scipy.stats.t.cdf.

    scipy 1.10's t.ppf (cephes stdtrit) misses its own t.cdf by up to ~2e-10 in probability
    (measured: t.ppf(0.05, 39) has t.cdf - 0.05 = 2.2e-10), i.e. ~1e-9 relative in the quantile,
    too coarse for a 1e-10 check. Two Newton steps on scipy's t.cdf / t.pdf give the root of
    scipy's own distribution function to ~1e-15; the raw t.ppf is still checked to 1e-8.
    """
    x = stats.t.ppf(p, df)
    for _ in range(2):
        x = x - (stats.t.cdf(x, df) - p) / stats.t.pdf(x, df)
    return loc + scale * x


def check_t_interval(lower, upper, df, loc, scale):
    # Equal-tailed t interval vs scipy (python3-scipy): 1e-10 against the polished quantile,
    # 1e-8 against the raw t.ppf.
    assert rel(lower, t_ppf(Q, df, loc, scale)) < 1e-10
    assert rel(upper, t_ppf(1 - Q, df, loc, scale)) < 1e-10
    assert rel(lower, stats.t.ppf(Q, df, loc=loc, scale=scale)) < 1e-8
    assert rel(upper, stats.t.ppf(1 - Q, df, loc=loc, scale=scale)) < 1e-8


def run_probe(args, lines):
    out = subprocess.run([PROBE] + [repr(float(a)) if not isinstance(a, str) else a for a in args],
                         input="\n".join(lines) + "\n", capture_output=True, text=True, check=True)
    result = {"innov": [], "report": [], "prediction": [], "filtered": [], "status": []}
    for line in out.stdout.splitlines():
        kind, *rest = line.split()
        if kind == "status":
            result["status"].append(rest[0])
        elif kind == "summary":
            result["summary"] = [float(v) for v in rest]
        else:
            result[kind].append([float(v) for v in rest])
    for k in ("innov", "report", "prediction", "filtered"):
        result[k] = np.array(result[k])
    return result


def obs_line(y, w=1.0, trials=1.0, exposure=1.0, x=()):
    return " ".join(["obs"] + [repr(float(v)) for v in (y, w, trials, exposure, *x)])


def rel(a, b):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return np.max(np.abs(a - b) / np.maximum(np.maximum(np.abs(a), np.abs(b)), 1e-300))


def regression_data(n, p, seed):
    rng = np.random.default_rng(seed)
    X = np.column_stack([np.ones(n), rng.normal(2.0, 1.5, size=(n, p - 1))])
    beta = rng.normal(0, 2, size=p)
    y = X @ beta + 0.8 * rng.normal(size=n)
    return X, y


@pytest.fixture(scope="module", autouse=True)
def probe_exists():
    if not os.path.exists(PROBE):
        pytest.fail(f"{PROBE} not built (cmake --build <tree> --target map_probe)")


def test_nig_posterior_intervals_and_marginal_likelihood_vs_scipy():
    n, p = 40, 3
    X, y = regression_data(n, p, 1)
    m0, lam0, a0, b0 = np.array([0.5, -1.0, 0.2]), np.array([0.3, 1.0, 2.0]), 2.5, 1.5
    lines = [obs_line(y[i], x=X[i]) for i in range(n)] + ["predict 1 2.5 -0.5"]
    r = run_probe(["nig", p, LEVEL, 0, a0, b0, *m0, *lam0], lines)
    # Batch conjugate posterior (closed form).
    L0 = np.diag(lam0)
    Ln = L0 + X.T @ X
    mn = np.linalg.solve(Ln, L0 @ m0 + X.T @ y)
    an = a0 + n / 2
    bn = b0 + 0.5 * (y @ y + m0 @ L0 @ m0 - mn @ Ln @ mn)
    Vn = np.linalg.inv(Ln)
    scale = np.sqrt(bn / an * np.diag(Vn))
    rep = r["report"]
    assert rel(rep[:, 2], mn) < 1e-10
    # Credible intervals: scipy.stats.t.ppf of the Student-t marginals (python3-scipy).
    check_t_interval(rep[:, 4], rep[:, 5], 2 * an, mn, scale)
    assert rel(rep[:, 3], stats.t.std(2 * an, loc=mn, scale=scale)) < 1e-10
    # Log marginal likelihood: y ~ multivariate t(X m0, (b0/a0)(I + X L0^-1 X'), 2 a0)
    # (scipy.stats.multivariate_t, python3-scipy).
    shape = b0 / a0 * (np.eye(n) + X @ np.linalg.inv(L0) @ X.T)
    log_ml = stats.multivariate_t.logpdf(y, loc=X @ m0, shape=shape, df=2 * a0)
    assert rel(r["summary"][2], log_ml) < 1e-9
    # ... and it is the running sum of the one-step log predictive densities.
    assert rel(r["innov"][:, 5].sum(), log_ml) < 1e-9
    # Prediction interval for a new observation: t.ppf with scale sqrt(b/a (1 + x'V x)).
    x = np.array([1, 2.5, -0.5])
    s_new = np.sqrt(bn / an * (1 + x @ Vn @ x))
    pred = r["prediction"][0]
    assert rel(pred[1], x @ mn) < 1e-12
    check_t_interval(pred[4], pred[5], 2 * an, x @ mn, s_new)


def test_nig_one_step_predictive_and_normal_score_vs_scipy():
    n, p = 25, 2
    X, y = regression_data(n, p, 2)
    m0, lam0, a0, b0 = np.zeros(p), np.array([0.5, 0.5]), 3.0, 2.0
    r = run_probe(["nig", p, LEVEL, 0, a0, b0, *m0, *lam0],
                  [obs_line(y[i], x=X[i]) for i in range(n)])
    L, Lm, a, S = np.diag(lam0), np.zeros(p), a0, 2 * b0
    for i in range(n):
        m = np.linalg.solve(L, Lm)
        b = 0.5 * (S - m @ L @ m)
        s = np.sqrt(b / a * (1 + X[i] @ np.linalg.solve(L, X[i])))
        t = (y[i] - X[i] @ m) / s
        inn = r["innov"][i]
        # Student-t one-step predictive (scipy.stats.t.logpdf); normal score norm.ppf(t.cdf).
        assert rel(inn[5], stats.t.logpdf(y[i], 2 * a, loc=X[i] @ m, scale=s)) < 1e-10
        z = stats.norm.ppf(stats.t.cdf(t, 2 * a)) if t < 0 else -stats.norm.ppf(stats.t.cdf(-t, 2 * a))
        assert abs(inn[4] - z) < 1e-9 * max(1.0, abs(z))
        L = L + np.outer(X[i], X[i])
        Lm = Lm + X[i] * y[i]
        S += y[i] ** 2
        a += 0.5


def test_nig_flat_prior_intervals_equal_ols_confidence_intervals_statsmodels():
    import statsmodels.api as sm
    n, p = 30, 3
    X, y = regression_data(n, p, 3)
    r = run_probe(["nig", p, LEVEL, 1, 1, 1, *np.zeros(p), *np.ones(p)],
                  [obs_line(y[i], x=X[i]) for i in range(n)])
    # Under p(beta, sigma^2) ∝ 1/sigma^2 the marginal posterior of beta_j is t_{n-p}(OLS, se_j),
    # so the credible interval equals the OLS confidence interval (statsmodels OLS, python3-statsmodels).
    fit = sm.OLS(y, X).fit()
    ci = fit.conf_int(alpha=1 - LEVEL)
    rep = r["report"]
    assert rel(rep[:, 1], fit.params) < 1e-10
    # statsmodels' interval uses scipy's t.ppf (accurate to ~1e-9 relative here, see t_ppf).
    assert rel(rep[:, 4], ci[:, 0]) < 1e-8
    assert rel(rep[:, 5], ci[:, 1]) < 1e-8
    check_t_interval(rep[:, 4], rep[:, 5], n - p, fit.params, fit.bse)
    assert int(r["summary"][0]) == 1
    assert (r["innov"][:p, 0] == 0).all() and (r["innov"][p + 1:, 0] == 1).all()


def test_normal_gamma_vs_scipy():
    rng = np.random.default_rng(4)
    y = rng.normal(3.0, 1.7, size=35)
    m0, k0, a0, b0 = 1.0, 0.4, 2.0, 1.0
    r = run_probe(["normal_gamma", LEVEL, 0, m0, k0, a0, b0], [obs_line(v) for v in y])
    n, ybar = len(y), y.mean()
    kn, mn, an = k0 + n, (k0 * m0 + n * ybar) / (k0 + n), a0 + n / 2
    bn = b0 + 0.5 * ((y - ybar) ** 2).sum() + k0 * n * (ybar - m0) ** 2 / (2 * kn)
    mean_rep, var_rep = r["report"]
    # mean: Student-t marginal (scipy.stats.t.ppf); variance: inverse gamma (scipy.stats.invgamma.ppf).
    scale = np.sqrt(bn / (an * kn))
    check_t_interval(mean_rep[4], mean_rep[5], 2 * an, mn, scale)
    assert rel(var_rep[4], stats.invgamma.ppf(Q, an, scale=bn)) < 1e-10
    assert rel(var_rep[5], stats.invgamma.ppf(1 - Q, an, scale=bn)) < 1e-10
    assert rel(var_rep[2], stats.invgamma.mean(an, scale=bn)) < 1e-12
    assert rel(var_rep[3], stats.invgamma.std(an, scale=bn)) < 1e-10
    # Log marginal likelihood: y ~ multivariate t(m0 1, (b0/a0)(I + 11'/k0), 2 a0) (scipy).
    shape = b0 / a0 * (np.eye(n) + np.ones((n, n)) / k0)
    log_ml = stats.multivariate_t.logpdf(y, loc=np.full(n, m0), shape=shape, df=2 * a0)
    assert rel(r["summary"][2], log_ml) < 1e-9
    assert rel(r["innov"][:, 5].sum(), log_ml) < 1e-9


def test_beta_binomial_vs_scipy():
    rng = np.random.default_rng(5)
    trials = rng.integers(1, 30, size=60)
    y = rng.binomial(trials, 0.37)
    a0, b0 = 1.5, 2.5
    r = run_probe(["beta_binomial", LEVEL, a0, b0],
                  [obs_line(y[i], trials=trials[i]) for i in range(len(y))])
    # Chain of one-step beta-binomial predictives (scipy.stats.betabinom.logpmf).
    al, be, chain = a0, b0, []
    for k, n in zip(y, trials):
        chain.append(stats.betabinom.logpmf(k, n, al, be))
        mean = stats.betabinom.mean(n, al, be)
        sd = stats.betabinom.std(n, al, be)
        al, be = al + k, be + n - k
    chain = np.array(chain)
    assert rel(r["innov"][:, 5], chain) < 1e-10
    assert rel(r["summary"][2], chain.sum()) < 1e-9
    rep = r["report"][0]
    # Posterior Beta(a0 + sum y, b0 + sum (n - y)): scipy.stats.beta.ppf / mean / std.
    an, bn = a0 + y.sum(), b0 + (trials - y).sum()
    assert rel(rep[4], stats.beta.ppf(Q, an, bn)) < 1e-10
    assert rel(rep[5], stats.beta.ppf(1 - Q, an, bn)) < 1e-10
    assert rel(rep[2], stats.beta.mean(an, bn)) < 1e-13
    assert rel(rep[3], stats.beta.std(an, bn)) < 1e-12
    # Last innovation's predictive mean and sd (scipy.stats.betabinom.mean / std).
    assert rel(r["innov"][-1, 1], mean) < 1e-12 and rel(r["innov"][-1, 3], sd) < 1e-12


def test_gamma_poisson_vs_scipy():
    rng = np.random.default_rng(6)
    exposure = rng.uniform(0.2, 5.0, size=60)
    y = rng.poisson(2.3 * exposure)
    a0, b0 = 0.5, 0.1
    r = run_probe(["gamma_poisson", LEVEL, a0, b0],
                  [obs_line(y[i], exposure=exposure[i]) for i in range(len(y))])
    # Negative binomial one-step predictives (scipy.stats.nbinom with n = a, p = b / (b + e)).
    a, b, chain, std = a0, b0, [], []
    for k, e in zip(y, exposure):
        chain.append(stats.nbinom.logpmf(k, a, b / (b + e)))
        std.append(stats.nbinom.std(a, b / (b + e)))
        a, b = a + k, b + e
    assert rel(r["innov"][:, 5], chain) < 1e-10
    assert rel(r["innov"][:, 3], std) < 1e-12
    assert rel(r["summary"][2], np.sum(chain)) < 1e-9
    rep = r["report"][0]
    # Posterior Gamma(a, rate b): scipy.stats.gamma.ppf with scale 1/b.
    assert rel(rep[4], stats.gamma.ppf(Q, a, scale=1 / b)) < 1e-10
    assert rel(rep[5], stats.gamma.ppf(1 - Q, a, scale=1 / b)) < 1e-10


def test_gamma_exponential_vs_scipy():
    rng = np.random.default_rng(7)
    y = rng.exponential(1 / 0.8, size=50)
    a0, b0 = 2.0, 1.0
    r = run_probe(["gamma_exponential", LEVEL, a0, b0], [obs_line(v) for v in y])
    # Lomax one-step predictives (scipy.stats.lomax with c = a, scale = b); normal score
    # norm.ppf(lomax.cdf) (scipy.stats.norm).
    a, b, chain, z = a0, b0, [], []
    for v in y:
        chain.append(stats.lomax.logpdf(v, a, scale=b))
        F = stats.lomax.cdf(v, a, scale=b)
        z.append(stats.norm.ppf(F) if F < 0.5 else -stats.norm.ppf(stats.lomax.sf(v, a, scale=b)))
        a, b = a + 1, b + v
    assert rel(r["innov"][:, 5], chain) < 1e-10
    assert np.max(np.abs(r["innov"][:, 4] - z)) < 1e-9
    assert rel(r["summary"][2], np.sum(chain)) < 1e-9
    rep = r["report"][0]
    assert rel(rep[4], stats.gamma.ppf(Q, a, scale=1 / b)) < 1e-10
    assert rel(rep[5], stats.gamma.ppf(1 - Q, a, scale=1 / b)) < 1e-10


def test_bad_observations_are_rejected_by_name():
    r = run_probe(["gamma_exponential", LEVEL, 1, 1],
                  [obs_line(1.0), obs_line(-1.0), "obs nan 1 1 1", obs_line(1.0, w=0)])
    assert r["status"] == ["out_of_domain", "non_finite", "invalid_weight"]
    assert len(r["innov"]) == 1
