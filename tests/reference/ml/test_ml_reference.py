"""Online maximum likelihood (estimators/ml) against Debian's statsmodels and scipy.

Each check names its source. The C++ side is tests/reference/ml/ml_probe (built in the same tree).
Data are synthetic from seeded numpy generators.
"""
import os
import subprocess

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import stats

PROBE = os.path.join(os.environ.get("BAYLINE_BINARY_DIR", "build-ml"), "tests", "reference", "ml", "ml_probe")


def run_probe(family, rows, p=None, innovations=False):
    args = [PROBE, family]
    if p is not None:
        args.append(str(p))
    if innovations:
        args.append("--innovations")
    text = "\n".join(" ".join(repr(float(v)) for v in row) for row in rows) + "\n"
    out = subprocess.run(args, input=text, capture_output=True, text=True, check=True).stdout
    result = {"innovations": []}
    for line in out.splitlines():
        key, *vals = line.split()
        nums = [float(v) for v in vals]
        if key == "innovation":
            result["innovations"].append(nums)
        else:
            result[key] = nums
    return result


# ---- GLM: statsmodels GLM (python3-statsmodels 0.13) batch MLE vs the online estimate at n = 1e5 ----

def test_logistic_regression_matches_statsmodels_glm_at_n_1e5():
    rng = np.random.default_rng(20251)
    n, theta = 100_000, np.array([-0.4, 0.9, -0.6])
    X = np.column_stack([np.ones(n), rng.normal(size=n), rng.normal(1.0, 2.0, size=n)])
    m = rng.integers(1, 4, size=n).astype(float)
    y = rng.binomial(m.astype(int), 1 / (1 + np.exp(-X @ theta))).astype(float)
    online = run_probe("logistic", np.column_stack([y, m, X]), p=3)
    # Source: statsmodels GLM, Binomial family (logit link), endog = [successes, failures].
    fit = sm.GLM(np.column_stack([y, m - y]), X, family=sm.families.Binomial()).fit()
    diff_in_se = np.abs(np.array(online["value"]) - fit.params) / fit.bse
    print("logistic |online - statsmodels| / se:", diff_in_se)
    assert np.all(diff_in_se < 0.1)
    assert np.allclose(online["se"], fit.bse, rtol=0.02)
    assert abs(online["loglik"][0] - fit.llf) < 1.0
    assert online["identifiable"] == [1.0]


def test_poisson_regression_with_exposure_matches_statsmodels_glm_at_n_1e5():
    rng = np.random.default_rng(20252)
    n, theta = 100_000, np.array([0.5, 0.3, -0.2])
    X = np.column_stack([np.ones(n), rng.normal(size=n), rng.uniform(-1, 1, size=n)])
    e = rng.uniform(0.2, 5.0, size=n)
    y = rng.poisson(e * np.exp(X @ theta)).astype(float)
    online = run_probe("poisson_regression", np.column_stack([y, e, X]), p=3)
    # Source: statsmodels GLM, Poisson family (log link) with exposure (offset log e).
    fit = sm.GLM(y, X, family=sm.families.Poisson(), exposure=e).fit()
    diff_in_se = np.abs(np.array(online["value"]) - fit.params) / fit.bse
    print("poisson |online - statsmodels| / se:", diff_in_se)
    assert np.all(diff_in_se < 0.1)
    assert np.allclose(online["se"], fit.bse, rtol=0.02)
    assert abs(online["loglik"][0] - fit.llf) < 1.0


# ---- Gamma shape: scipy.stats.gamma.fit(floc=0) (python3-scipy) ----

def test_gamma_shape_matches_scipy_fit_with_floc_zero():
    rng = np.random.default_rng(20253)
    y = rng.gamma(shape=1.7, scale=3.0, size=5000)
    online = run_probe("gamma", y[:, None])
    # Source: scipy.stats.gamma.fit(data, floc=0) returns (shape, loc, scale); rate = 1 / scale.
    a, loc, scale = stats.gamma.fit(y, floc=0)
    assert loc == 0
    print("gamma shape online / scipy:", online["value"][0], a)
    assert online["value"][0] == pytest.approx(a, rel=1e-8)
    assert online["value"][1] == pytest.approx(1 / scale, rel=1e-8)


def test_gamma_shape_small_shape_and_tight_data_match_scipy():
    rng = np.random.default_rng(20254)
    for shape, scale in [(0.15, 2.0), (400.0, 0.01)]:
        y = rng.gamma(shape=shape, scale=scale, size=3000)
        online = run_probe("gamma", y[:, None])
        a, _, sc = stats.gamma.fit(y, floc=0)  # source: scipy.stats.gamma.fit
        assert online["value"][0] == pytest.approx(a, rel=1e-7), shape
        assert online["value"][1] == pytest.approx(1 / sc, rel=1e-7), shape


# ---- Log-likelihoods vs scipy logpdf / logpmf sums at the online estimates ----

def _families(rng):
    n = 2000
    e = rng.uniform(0.5, 2.0, size=n)
    m = rng.integers(1, 8, size=n).astype(float)
    return {
        "gaussian": (np.column_stack([rng.normal(3.0, 1.5, size=n)]),
                     lambda v, r: stats.norm.logpdf(r[:, 0], v[0], np.sqrt(v[1]))),
        "lognormal": (np.column_stack([rng.lognormal(0.5, 0.8, size=n)]),
                      lambda v, r: stats.lognorm.logpdf(r[:, 0], s=v[1], scale=np.exp(v[0]))),
        "poisson": (np.column_stack([rng.poisson(3.5 * e), e]),
                    lambda v, r: stats.poisson.logpmf(r[:, 0], v[0] * r[:, 1])),
        "binomial": (np.column_stack([rng.binomial(m.astype(int), 0.3), m]),
                     lambda v, r: stats.binom.logpmf(r[:, 0], r[:, 1].astype(int), v[0])),
        "exponential": (np.column_stack([rng.exponential(2.5, size=n)]),
                        lambda v, r: stats.expon.logpdf(r[:, 0], scale=1 / v[0])),
        "gamma": (np.column_stack([rng.gamma(2.2, 1.3, size=n)]),
                  lambda v, r: stats.gamma.logpdf(r[:, 0], v[0], scale=1 / v[1])),
    }


@pytest.mark.parametrize("family", ["gaussian", "lognormal", "poisson", "binomial", "exponential", "gamma"])
def test_log_likelihood_equals_scipy_sum_at_the_estimate(family):
    rows, logdens = _families(np.random.default_rng(20255))[family]
    online = run_probe(family, rows)
    # Source: scipy.stats <dist>.logpdf / logpmf summed over the data at the online estimate.
    ref = np.sum(logdens(online["value"], rows))
    assert online["loglik"][0] == pytest.approx(ref, rel=1e-10, abs=1e-9)


@pytest.mark.parametrize("family", ["gaussian", "lognormal", "poisson", "binomial", "exponential", "gamma"])
def test_innovation_log_predictive_equals_scipy_at_the_previous_estimate(family):
    rows, logdens = _families(np.random.default_rng(20256))[family]
    before = run_probe(family, rows[:-1])
    after = run_probe(family, rows, innovations=True)
    last = after["innovations"][-1]
    assert last[0] == 1.0
    # Source: scipy.stats logpdf / logpmf of the last observation under the plug-in estimate
    # computed from all earlier observations.
    ref = logdens(before["value"], rows[-1:])[0]
    assert last[4] == pytest.approx(ref, rel=1e-10, abs=1e-12)
