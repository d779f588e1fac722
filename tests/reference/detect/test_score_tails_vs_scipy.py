"""Conditional laws of the exact scores (estimators/detect/score_tails.h, exact_scores.h) against
scipy.stats.

Source of the reference values: Debian's python3-scipy (1.10), evaluated at run time:
scipy.stats.binom, poisson, hypergeom, beta, gamma (cdf / pmf / sf) and norm.ppf. The project's
side comes from score_tails_probe (below = P(Y < y), at = P(Y = y), above = P(Y > y)).
Tolerances: the small tail (the one on y's side, computed directly) and the pmf to 1e-8 relative
(log-gamma rounding at populations of 1e6 is about 1e-9, score_tails.h); the large tail, 1 minus
those, to 1e-8 absolute.
"""
import os
import subprocess

import numpy as np
import pytest
from scipy import stats

PROBE = os.path.join(os.environ["BAYLINE_BINARY_DIR"], "tests/reference/detect/score_tails_probe")


def run_probe(lines):
    out = subprocess.run([PROBE], input="\n".join(lines) + "\n", capture_output=True, text=True,
                         check=True)
    return [[float(v) for v in line.split()] for line in out.stdout.splitlines()]


def check_tails(got, below, at, above):
    small_is_below = below <= above
    small_got, small_ref = (got[0], below) if small_is_below else (got[2], above)
    large_got, large_ref = (got[2], above) if small_is_below else (got[0], below)
    assert small_got == pytest.approx(small_ref, rel=1e-8, abs=1e-300)
    assert got[1] == pytest.approx(at, rel=1e-8, abs=1e-300)
    assert large_got == pytest.approx(large_ref, abs=1e-8)


BINOM = [(0, 10, 0.3), (3, 10, 0.3), (10, 10, 0.3), (7, 50, 0.02), (0, 1, 0.01), (1, 1, 0.01),
         (25, 2_000_000, 1e-5), (5, 2_000_000, 1e-5), (60, 2_000_000, 1e-5), (480, 1000, 0.5),
         (3, 7, 0.999), (0, 0, 0.4)]


@pytest.mark.parametrize("y,n,p", BINOM)
def test_binomial_tails_match_scipy_binom(y, n, p):
    [got] = run_probe([f"binom {y} {n} {p!r}"])
    b = stats.binom(n, p)  # scipy.stats.binom
    check_tails(got, b.cdf(y - 1), b.pmf(y), b.sf(y))


POIS = [(0, 0.2), (1, 0.2), (4, 0.2), (2, 2.0), (9, 2.0), (950, 1000.0), (1100, 1000.0)]


@pytest.mark.parametrize("y,mean", POIS)
def test_poisson_tails_match_scipy_poisson(y, mean):
    [got] = run_probe([f"pois {y} {mean!r}"])
    d = stats.poisson(mean)  # scipy.stats.poisson
    check_tails(got, d.cdf(y - 1), d.pmf(y), d.sf(y))


# (y, population, successes, draws)
HYPER = [(0, 100, 2, 50), (1, 100, 2, 50), (2, 100, 2, 50), (3, 1000, 20, 50), (0, 1000, 20, 50),
         (0, 20, 0, 1), (1, 200, 3, 1), (5, 200, 199, 5), (30, 1_000_000, 20_000, 1000),
         (20, 1_000_000, 20_000, 1000), (5, 1_000_000, 20_000, 1000), (60, 1_000_000, 20_000, 1000),
         (500, 1_000_000, 500_000, 1000), (40, 100, 60, 50)]


@pytest.mark.parametrize("y,population,successes,draws", HYPER)
def test_hypergeometric_tails_match_scipy_hypergeom(y, population, successes, draws):
    [got] = run_probe([f"hyper {y} {population} {successes} {draws}"])
    h = stats.hypergeom(population, successes, draws)  # scipy.stats.hypergeom(M, n, N)
    check_tails(got, h.cdf(y - 1), h.pmf(y), h.sf(y))


BETA = [(0.3, 1.0, 4.0), (0.001, 1.0, 99.0), (0.2, 0.5, 9.5), (0.9, 3.0, 3.0), (1e-5, 2.0, 5000.0)]


@pytest.mark.parametrize("x,a,b", BETA)
def test_beta_tails_match_scipy_beta(x, a, b):
    [got] = run_probe([f"beta {x!r} {a!r} {b!r}"])
    d = stats.beta(a, b)  # scipy.stats.beta
    check_tails(got, d.cdf(x), 0.0, d.sf(x))


GAMMA = [(0.01, 0.5, 0.25), (3.0, 0.5, 0.25), (1.0, 1.0, 1.0 / 3.0), (20.0, 3.0, 1.5)]


@pytest.mark.parametrize("y,shape,rate", GAMMA)
def test_gamma_tails_match_scipy_gamma(y, shape, rate):
    [got] = run_probe([f"gamma {y!r} {shape!r} {rate!r}"])
    d = stats.gamma(shape, scale=1.0 / rate)  # scipy.stats.gamma
    check_tails(got, d.cdf(y), 0.0, d.sf(y))


def stream_scores(family, rows):
    lines = [f"stream {family} {len(rows)}"] + [f"{y!r} {aux!r}" for y, aux in rows]
    return run_probe(lines)


def test_poisson_stream_scores_are_the_conditional_binomial_pit():
    # y_n | T_n ~ Binomial(T_n, e_n / E_n): u = binom.cdf(y - 1) + v binom.pmf(y) (scipy).
    rng = np.random.default_rng(7)
    exposure = rng.uniform(0.5, 2.0, 60)
    y = rng.poisson(1.7 * exposure)
    got = stream_scores("poisson", list(zip(y.tolist(), exposure.tolist())))
    assert np.isnan(got[0][0])
    for n in range(1, 60):
        total, e_total = y[: n + 1].sum(), exposure[: n + 1].sum()
        b = stats.binom(total, exposure[n] / e_total)
        z, v = got[n]
        u = b.cdf(y[n] - 1) + v * b.pmf(y[n])
        assert z == pytest.approx(stats.norm.ppf(u), rel=1e-8, abs=1e-9)


def test_binomial_stream_scores_are_the_conditional_hypergeometric_pit():
    rng = np.random.default_rng(8)
    trials = rng.integers(1, 40, 60)
    y = rng.binomial(trials, 0.15)
    got = stream_scores("binomial", list(zip(y.tolist(), trials.tolist())))
    assert np.isnan(got[0][0])
    for n in range(1, 60):
        h = stats.hypergeom(trials[: n + 1].sum(), y[: n + 1].sum(), trials[n])
        z, v = got[n]
        u = h.cdf(y[n] - 1) + v * h.pmf(y[n])
        assert z == pytest.approx(stats.norm.ppf(u), rel=1e-8, abs=1e-9)


def test_exponential_stream_scores_are_the_conditional_beta_pit():
    rng = np.random.default_rng(9)
    y = rng.exponential(2.5, 60)
    got = stream_scores("exponential", [(v, 1.0) for v in y.tolist()])
    assert np.isnan(got[0][0])
    for n in range(1, 60):
        u = stats.beta(1, n).cdf(y[n] / y[: n + 1].sum())  # y_n / T_n ~ Beta(1, n - 1), 1-based
        assert got[n][0] == pytest.approx(stats.norm.ppf(u), rel=1e-8, abs=1e-9)
