"""Recursive coefficients and recursive residuals against statsmodels' RecursiveLS.

Source: Debian python3-statsmodels 0.13, statsmodels.regression.recursive_ls.RecursiveLS (exact
diffuse initialisation). The fixture is generated here with a seeded numpy generator.
"""
import os
import subprocess

import numpy as np
import statsmodels.api as sm

PROBE = os.path.join(os.environ["BAYLINE_BINARY_DIR"], "tests", "reference", "ls", "rls_probe")


def run_probe(x, y):
    lines = [str(x.shape[1])] + [
        " ".join(repr(float(v)) for v in (y[i], *x[i])) for i in range(len(y))
    ]
    out = subprocess.run([PROBE], input="\n".join(lines) + "\n", capture_output=True, text=True,
                         check=True).stdout.split("\n")
    rows = np.array([[float(v) for v in line.split()] for line in out if line.strip()])
    return rows[:, 0], rows[:, 1], rows[:, 2], rows[:, 3:]


def fixture(seed, n, p, collinear_start=False):
    rng = np.random.default_rng(seed)
    x = np.column_stack([np.ones(n)] + [rng.normal(size=n) * (j + 1) for j in range(p - 1)])
    if collinear_start:
        x[1:p, :] = x[0, :]  # the first p rows do not yet span: identification comes later
    theta = np.linspace(-1.0, 2.0, p)
    y = x @ theta + 0.5 * rng.normal(size=n)
    return x, y


def rel(a, b):
    return np.abs(a - b) / np.maximum(np.abs(b), 1e-12)


def check(seed, n, p, collinear_start=False):
    x, y = fixture(seed, n, p, collinear_start)
    ident, rr_valid, rr, theta = run_probe(x, y)
    res = sm.RecursiveLS(y, x).fit()
    coefs = res.recursive_coefficients.filtered  # k x n
    resid = res.resid_recursive
    first = int(np.argmax(ident > 0))
    # After the first p observations (and once identified), every step agrees to 1e-8 relative.
    start = max(p, first + 1)
    assert ident[start:].all()
    assert rel(theta[start:, :], coefs[:, start:].T).max() < 1e-8
    assert rr_valid[start:].all()
    assert rel(rr[start:], resid[start:]).max() < 1e-8
    # Not identified before the regressors span (exact start, no P0 = delta I).
    assert not ident[: p - 1].any()


def test_recursive_coefficients_and_residuals_p3():
    check(seed=20261202, n=200, p=3)


def test_recursive_coefficients_and_residuals_p6():
    check(seed=7, n=300, p=6)


def test_late_identification():
    check(seed=11, n=120, p=4, collinear_start=True)
