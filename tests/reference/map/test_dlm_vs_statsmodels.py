"""Dynamic linear model (square-root Kalman tracker) against statsmodels' Kalman filter
(Debian python3-statsmodels 0.13), on synthetic seeded series.

Initialisation is matched exactly:
  * local level: UnobservedComponents('llevel') with use_exact_diffuse=False uses the approximate
    diffuse initialisation, state mean 0 and variance 1e6 at the first observation, which is the
    probe's `diffuse` option with diffuse_variance = 1e6. statsmodels' llf drops the first
    observation (loglikelihood_burn = 1); its llf_obs holds every term, so both are compared.
  * time-varying regression: an MLEModel with design x_t', identity transition and selection,
    fixed obs_cov V and state_cov diag(W), initialization='known' with the state mean and covariance
    at the first observation (the probe's initial_mean / initial_variance; no drift step before the
    first observation in either).
"""
import os
import subprocess

import numpy as np
import statsmodels.api as sm
from statsmodels.tsa.statespace.mlemodel import MLEModel

PROBE = os.path.join(os.environ.get("BAYLINE_BINARY_DIR", "build"), "tests", "reference", "map",
                     "map_probe")


def run_dlm(p, V, W, diffuse, m1, C1, y, X):
    args = ["dlm", p, 0.95, V, 1 if diffuse else 0, 1e6, *W, *m1, *C1]
    lines = [" ".join(["obs", repr(float(y[t])), "1", "1", "1"] + [repr(float(v)) for v in X[t]])
             for t in range(len(y))]
    out = subprocess.run([PROBE] + [repr(float(a)) if not isinstance(a, str) else a for a in args],
                         input="\n".join(lines) + "\n", capture_output=True, text=True, check=True)
    innov, filt, summary = [], [], None
    for line in out.stdout.splitlines():
        kind, *rest = line.split()
        if kind == "innov":
            innov.append([float(v) for v in rest])
        elif kind == "filtered":
            filt.append([float(v) for v in rest])
        elif kind == "summary":
            summary = [float(v) for v in rest]
    filt = np.array(filt)
    return np.array(innov), filt[:, :p], filt[:, p:].reshape(-1, p, p), summary


def rel(a, b, floor=1e-300):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return np.max(np.abs(a - b) / np.maximum(np.maximum(np.abs(a), np.abs(b)), floor))


def test_local_level_vs_unobserved_components():
    rng = np.random.default_rng(11)
    n, V, W = 200, 0.8, 0.05
    level = 5.0 + np.cumsum(np.sqrt(W) * rng.normal(size=n))
    y = level + np.sqrt(V) * rng.normal(size=n)
    innov, m, C, summary = run_dlm(1, V, [W], True, [0.0], [1.0], y, np.ones((n, 1)))
    # statsmodels UnobservedComponents, approximate diffuse initialisation (variance 1e6).
    mod = sm.tsa.UnobservedComponents(y, "llevel", use_exact_diffuse=False)
    assert mod.initialization.approximate_diffuse_variance == 1e6
    res = mod.filter([V, W])
    assert rel(m[:, 0], res.filtered_state[0]) < 1e-8
    assert rel(C[:, 0, 0], res.filtered_state_cov[0, 0]) < 1e-8
    assert rel(innov[:, 5], res.llf_obs) < 1e-8
    assert rel(summary[2], res.llf_obs.sum()) < 1e-8
    assert rel(innov[1:, 5].sum(), res.llf) < 1e-8  # statsmodels burns the first observation


def test_time_varying_regression_vs_state_space_model():
    rng = np.random.default_rng(12)
    n, p, V = 300, 3, 0.5
    W = np.array([1e-3, 5e-3, 0.0])
    X = np.column_stack([np.ones(n), rng.normal(size=(n, 2))])
    beta = np.array([1.0, -0.5, 2.0]) + np.cumsum(np.sqrt(W) * rng.normal(size=(n, p)), axis=0)
    y = (X * beta).sum(axis=1) + np.sqrt(V) * rng.normal(size=n)
    m1, C1 = np.array([0.5, 0.0, 1.0]), np.array([2.0, 1.0, 4.0])
    innov, m, C, summary = run_dlm(p, V, W, False, m1, C1, y, X)
    # statsmodels state-space model with fixed matrices and a known initial state.
    mod = MLEModel(y, k_states=p, k_posdef=p, initialization="known", initial_state=m1,
                   initial_state_cov=np.diag(C1))
    mod["design"] = X.T[np.newaxis, :, :]
    mod["obs_cov"] = np.array([[V]])
    mod["transition"] = np.eye(p)
    mod["selection"] = np.eye(p)
    mod["state_cov"] = np.diag(W)
    res = mod.ssm.filter()
    assert rel(m, res.filtered_state.T) < 1e-8
    assert rel(C, np.moveaxis(res.filtered_state_cov, 2, 0), 1e-12) < 1e-8
    assert rel(innov[:, 5], res.llf_obs) < 1e-8
    assert rel(summary[2], res.llf_obs.sum()) < 1e-8
    # One-step predictive mean and variance (statsmodels forecasts / forecasts_error_cov).
    assert rel(innov[:, 1], res.forecasts[0]) < 1e-8
    assert rel(innov[:, 3] ** 2, res.forecasts_error_cov[0, 0]) < 1e-8
