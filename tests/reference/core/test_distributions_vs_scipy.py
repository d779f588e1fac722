"""Special functions and distributions against scipy (Debian python3-scipy) and mpmath.

Source of the reference values: scipy.special and scipy.stats, and for quantiles the distribution
function in 40-digit arithmetic from mpmath (Debian python3-mpmath), evaluated here at run time.
"""
import os
import subprocess

import mpmath
import numpy as np
import pytest
from scipy import special, stats

PROBE = os.path.join(os.environ["BAYLINE_BINARY_DIR"], "tests/reference/core/dist_probe")


def run_probe(calls):
    text = "\n".join(" ".join([name] + [repr(float(a)) for a in args]) for name, args in calls)
    out = subprocess.run([PROBE], input=text + "\n", capture_output=True, text=True, check=True)
    return [float(v) for v in out.stdout.split()]


def check(cases, rtol, atol=0.0):
    """cases: list of (probe name, args, scipy value)."""
    got = run_probe([(n, a) for n, a, _ in cases])
    assert len(got) == len(cases)
    bad = []
    for (name, args, want), g in zip(cases, got):
        if not np.isclose(g, want, rtol=rtol, atol=atol):
            bad.append(f"{name}{tuple(args)}: got {g!r}, scipy {want!r}")
    assert not bad, "\n".join(bad[:20])


def check_quantiles(cases, rtol_p=1e-12, rtol_x=1e-7):
    """cases: list of (probe name, [p, *params], scipy frozen distribution, mpmath tail function).

    A quantile x_p is judged by the distribution function evaluated in 40-digit arithmetic with
    mpmath (Debian python3-mpmath): F(x_p) must equal p, or S(x_p) = 1 - p in the upper half, so
    both tails keep relative precision; the allowance adds what the rounding of x_p itself to a
    double can move the tail (density * 2 ulp). scipy's ppf is checked too, more loosely: Debian's
    scipy 1.10 t.ppf disagrees with its own cdf by up to 3e-9 in p, and its gamma tail at shape
    1e6 by 7e-6, so it cannot be the tight reference.
    """
    got = run_probe([(c[0], c[1]) for c in cases])
    bad = []
    for (name, args, frozen, tail), x in zip(cases, got):
        p = args[0]
        upper = p > 0.5
        achieved = float(tail(mpmath.mpf(x), upper))
        wanted = 1 - p if upper else p
        allowance = rtol_p * wanted + frozen.pdf(x) * abs(x) * 4.5e-16
        if not abs(achieved - wanted) <= allowance:
            bad.append(f"{name}{tuple(args)} = {x!r}: tail there {achieved!r}, want {wanted!r}")
        if not np.isclose(x, frozen.ppf(p), rtol=rtol_x, atol=1e-15):
            bad.append(f"{name}{tuple(args)} = {x!r}: scipy ppf {frozen.ppf(p)!r}")
    assert not bad, "\n".join(bad[:20])


mpmath.mp.dps = 40


def mp_norm(x, upper):
    return mpmath.ncdf(-x) if upper else mpmath.ncdf(x)


def mp_t(dof):
    nu = mpmath.mpf(dof)

    def tail(x, upper):
        t = -x if upper else x  # P(T > x) = P(T < -x)
        half = mpmath.betainc(nu / 2, mpmath.mpf(1) / 2, 0, nu / (nu + t * t), regularized=True) / 2
        return half if t < 0 else 1 - half
    return tail


def mp_gamma(shape, rate):
    a = mpmath.mpf(shape)
    return lambda x, upper: mpmath.gammainc(a, x * rate, mpmath.inf if upper else 0, regularized=True) \
        if upper else mpmath.gammainc(a, 0, x * rate, regularized=True)


def mp_beta(a, b):
    a, b = mpmath.mpf(a), mpmath.mpf(b)
    return lambda x, upper: mpmath.betainc(a, b, x, 1, regularized=True) if upper \
        else mpmath.betainc(a, b, 0, x, regularized=True)


PS = [1e-10, 1e-6, 0.001, 0.025, 0.05, 0.3, 0.5, 0.7, 0.95, 0.975, 0.999, 1 - 1e-6]


def test_special_functions_match_scipy_special():
    cases = []
    for a in [1e-3, 0.1, 0.5, 1, 2.5, 7, 30, 123.4, 1e4, 1e6]:
        cases.append(("lgamma", [a], special.gammaln(a)))
        cases.append(("digamma", [a], special.digamma(a)))
        cases.append(("trigamma", [a], special.polygamma(1, a)))
        for x in [1e-3, 0.3, 1, 2, 5, 20, 100, 1e4, 1e6]:
            cases.append(("gammainc", [a, x], special.gammainc(a, x)))
            cases.append(("gammaincc", [a, x], special.gammaincc(a, x)))
    for a in [0.2, 0.5, 1, 3, 20, 500, 1e5]:
        for b in [0.3, 1, 4, 50, 2e4]:
            for x in [1e-4, 0.01, 0.2, 0.5, 0.8, 0.99, 0.9999]:
                cases.append(("betainc", [a, b, x], special.betainc(a, b, x)))
    # relative 1e-11, absolute 1e-300 for underflowed tails; the incomplete beta with a parameter of
    # 1e4 or more is judged by mpmath's 40-digit value instead (Debian's scipy 1.10 betainc is off
    # by up to 1e-10 relative there, e.g. betainc(1e5, 0.3, 0.9999))
    # (mpmath's series does not converge when both parameters are 1e4 or more: scipy at 1e-9 there)
    large = [c for c in cases if c[0] == "betainc" and max(c[1][:2]) >= 1e4]
    both_large = [c for c in large if min(c[1][:2]) >= 1e4]
    check([c for c in cases if c not in large], rtol=1e-11, atol=1e-300)
    check(both_large, rtol=1e-9, atol=1e-300)
    mpmath.mp.dps = 40
    check([(n, a, float(mpmath.betainc(a[0], a[1], 0, mpmath.mpf(a[2]), regularized=True)))
           for n, a, _ in large if (n, a, _) not in both_large], rtol=1e-11, atol=1e-300)


def test_incomplete_gamma_around_the_lower_fraction_switch_matches_mpmath():
    """From a = 2e4 P(a, x) below x = a + 1 comes from the continued fraction of the lower
    incomplete gamma instead of the series (and Q = 1 - P there). Both sides of that switch and
    a = 1e6, across the bulk and far tail, against mpmath at 40 digits (Debian python3-mpmath; the
    lower tail as 1 - upper where mpmath's lower series does not converge). Tolerance 2e-12 relative:
    the prefactor x^a e^-x / Gamma(a) carries ~1e-16 |x - a| (measured 4e-13 at a = 1e6,
    x = a - 8 sqrt(a), with the series as well), the fraction's rounding up to 1.3e-13."""
    mpmath.mp.dps = 40
    cases = []
    for a in [19999.0, 20000.0, 20001.0, 1e6]:
        for k in [-30, -8, -2, -0.5, 0.0]:
            x = a + k * np.sqrt(a)
            A, X = mpmath.mpf(a), mpmath.mpf(x)
            q = mpmath.gammainc(A, X, mpmath.inf, regularized=True)
            try:
                p = mpmath.gammainc(A, 0, X, regularized=True)
            except mpmath.libmp.libhyper.NoConvergence:
                p = 1 - q
            cases.append(("gammainc", [a, x], float(p)))
            cases.append(("gammaincc", [a, x], float(q)))
    check(cases, rtol=2e-12, atol=1e-300)


def test_normal_matches_scipy_stats():
    check_quantiles([("norm_ppf", [p], stats.norm, mp_norm) for p in PS])
    cases = [("norm_cdf", [z], stats.norm.cdf(z)) for z in [-30, -8, -2, 0, 0.5, 3]]
    cases += [("norm_sf", [z], stats.norm.sf(z)) for z in [-3, 0, 2, 8, 30]]
    cases += [("norm_logpdf", [x, 1.5, 0.2], stats.norm.logpdf(x, 1.5, 0.2)) for x in [-1, 1.5, 4]]
    check(cases, rtol=1e-12)


def test_student_t_matches_scipy_stats():
    check_quantiles([("t_ppf", [p, dof], stats.t(dof), mp_t(dof)) for dof in [1, 2, 3.5, 10, 57, 1000] for p in PS])
    # dof 1e6: the incomplete beta continued fraction near its crossover leaves about 4e-11 in p
    check_quantiles([("t_ppf", [p, 1e6], stats.t(1e6), mp_t(1e6)) for p in PS], rtol_p=1e-10)
    # ages of old channels, where the quantile solver stops once F's own rounding rules the Newton
    # step; the continued fraction leaves up to 4e-12 in p at dof 1e5
    check_quantiles([("t_ppf", [p, dof], stats.t(dof), mp_t(dof)) for dof in [1e4, 1e5] for p in PS], rtol_p=1e-11)
    cases = []
    for dof in [1, 2, 3.5, 10, 57, 1000, 1e6]:
        for t in [-50, -3, -0.1, 0, 0.7, 2, 12]:
            cases.append(("t_cdf", [t, dof], stats.t.cdf(t, dof)))
            if dof < 1e5:  # above, Debian's scipy 1.10 logpdf loses ~4e-10 (a log-gamma
                # difference); large dof is checked against mpmath below
                cases.append(("t_logpdf", [t, dof], stats.t.logpdf(t, dof)))
    check(cases, rtol=1e-10)


def test_student_t_quantile_around_the_cornish_fisher_switch():
    """StudentTQuantile returns its Cornish-Fisher start directly where dof >= 250 max(1, z^2) and
    |z| <= 10 (z the normal quantile of p) and iterates on the exact distribution function
    elsewhere: on both sides of that switch, for several p, it must meet the same tail precision as
    everywhere else (relative 1e-12, judged by mpmath at 40 digits as in check_quantiles)."""
    cases = []
    for p in [0.3, 0.2, 0.025, 0.975, 1e-6, 1e-10, 1 - 1e-6, 1e-23, 1e-24]:
        z = float(special.ndtri(p))
        switch = 250 * max(1.0, z * z)
        for dof in [switch * 0.5, switch * 0.999, switch, switch * 1.001, switch * 2]:
            cases.append(("t_ppf", [p, dof], stats.t(dof), mp_t(dof)))
    # the Newton start at small dof; from dof 20 the iteration's incomplete beta keeps its central
    # side up to twice its usual switch (|t| up to ~2.5: p = 0.01 and 0.99 lie just beyond); and very
    # large dof (beyond the former normal-limit switch at 1e7, now the expansion too)
    for dof in [0.5, 1.5, 3, 4.99, 19.99, 20, 30, 99.9, 1e7, 1.0000001e7, 1e9]:
        for p in [1e-10, 0.01, 0.025, 0.05, 0.975, 0.99]:
            cases.append(("t_ppf", [p, dof], stats.t(dof), mp_t(dof)))
    check_quantiles(cases, rtol_p=1e-12, rtol_x=1e-7)


def test_gamma_quantile_around_its_switches():
    """GammaQuantile returns its Cornish-Fisher expansion directly where shape^4 >= 1.2e23
    max(1, z^2)^5 and above shape 1e7, starts the iteration from it from shape 20, and from the
    Wilson-Hilferty cube root (or the small-y power law) below: every side must meet the tail
    precision of check_quantiles (mpmath at 40 digits).
    (mpmath's incomplete gamma does not converge for non-integer shapes of a million or more, nor
    its lower tail at 1e7: whole shapes on either side of the switches there, the lower tail as
    1 - upper, which at 40 digits keeps more than 25 for p >= 1e-12.)"""
    def mp_gamma_large(shape, rate):
        a = mpmath.mpf(shape)
        def tail(x, upper):
            q = mpmath.gammainc(a, x * rate, mpmath.inf, regularized=True)
            return q if upper else 1 - q
        return tail
    cases = []
    for p in [0.3, 0.025, 0.975, 1e-6]:
        z = float(special.ndtri(p))
        switch = (1.2e23 * max(1.0, z * z) ** 5) ** 0.25
        for shape in [np.floor(switch), np.ceil(switch)]:
            if shape <= 1e7:
                cases.append(("gamma_ppf", [p, shape, 1.0], stats.gamma(shape), mp_gamma_large(shape, 1.0)))
    # above 1e7 scipy's ppf is looser still (1.3% in the tail at p = 1e-10: 7e-7 relative in x)
    check_quantiles([("gamma_ppf", [p, shape, 2.0], stats.gamma(shape, scale=0.5), mp_gamma_large(shape, 2.0))
                     for shape in [1e7, 1e7 + 1] for p in [1e-10, 1e-6, 0.025, 0.5, 0.975, 1 - 1e-6]],
                    rtol_x=1e-5)
    for shape in [0.999, 1.001, 19.99, 20.0, 20.01, 300]:
        for p in [1e-10, 1e-6, 0.025, 0.5, 0.975, 1 - 1e-6]:
            cases.append(("gamma_ppf", [p, shape, 2.0], stats.gamma(shape, scale=0.5), mp_gamma(shape, 2.0)))
    check_quantiles(cases)


def mp_t_score(t, dof):
    """Phi^{-1}(F_t(t; dof)) in 40-digit arithmetic (mpmath, Debian python3-mpmath): the tail on t's
    own side by mpmath.betainc, then the normal quantile by Newton steps on mpmath.ncdf. None where
    that tail is below 1e-300 (a double's score is then infinite or on the edge of it)."""
    mpmath.mp.dps = 40
    nu, tt = mpmath.mpf(dof), mpmath.mpf(abs(t))
    tail = mpmath.betainc(nu / 2, mpmath.mpf(1) / 2, 0, nu / (nu + tt * tt), regularized=True) / 2
    if tail < 1e-300:
        return None
    z = mpmath.mpf(float(special.ndtri(float(tail))))
    for _ in range(50):
        step = (mpmath.ncdf(z) - tail) / mpmath.npdf(z)
        z -= step
        if abs(step) < mpmath.mpf(10) ** -35 * (1 + abs(z)):
            break
    return float(-z if t > 0 else z)


# StudentTNormalScore's expansion region: |t| <= max_abs_t from dof >= min_dof (distributions.cc)
HILL_REGION = [(1e4, 40.0), (200, 10.0), (100, 6.0), (50, 3.0), (30, 2.0), (20, 1.0)]


def in_hill_region(t, dof):
    for min_dof, max_abs_t in HILL_REGION:
        if dof >= min_dof:
            return abs(t) <= max_abs_t
    return False


def test_student_t_normal_score_matches_mpmath():
    """StudentTNormalScore: Hill's expansion inside HILL_REGION, Phi^{-1} of the exact t tail
    elsewhere. Reference: mp_t_score at 40 digits, on a grid around every step of the region.
    Tolerance inside: 1.6e-11 absolute, the largest truncation error measured over the region
    (45-digit mpmath, 300 t per step: 1.567e-11 at dof 200, t = 10; 1.54e-11 at dof 20, t = 1),
    plus 4e-15 |z| for rounding (measured at most 3e-15 from dof 1000, where truncation is
    negligible). Elsewhere 1e-14 (1 + |z|): the exact tail (incomplete beta, ~1e-15 relative at
    these parameters) mapped to z (a relative tail error e moves z by at most e / |z| in the tails,
    e / phi(0) near 0) and the normal quantile's own 1e-15 relative; the worst measured on this grid
    is 1.1e-15 (2.1e-15 on 400 random points)."""
    cases = []
    dofs = [1, 3, 10, 19.9, 20, 29.9, 30, 49.9, 50, 99.9, 100, 199.9, 200, 200.1, 1000, 9999, 1e4, 1e6,
            1e7, 1.0000001e7, 1e9]
    ts = [1e-8, 0.3, 0.99, 1.0, 1.01, 1.99, 2.0, 2.01, 2.99, 3.0, 3.01, 5.99, 6.0, 6.01, 9.99, 10.0,
          10.01, 15.0, 39.9, 40.0, 40.1]
    for dof in dofs:
        # (t = 300 at dof 1e6 or more underflows: mpmath's betainc does not converge there)
        for t in ts + [300.0] * (dof < 1e6):
            for sign in [1, -1]:
                z = mp_t_score(sign * t, dof)
                if z is None:
                    continue  # the tail underflows: covered below
                tol = 1.6e-11 + 4e-15 * abs(z) if in_hill_region(t, dof) else 1e-14 * (1 + abs(z))
                cases.append(("t_score", [sign * t, dof], z, tol))
    got = run_probe([(n, a) for n, a, _, _ in cases])
    bad = [f"t_score{tuple(a)}: got {g!r}, mpmath {z!r}, tolerance {tol:.1e}"
           for (n, a, z, tol), g in zip(cases, got) if not abs(g - z) <= tol]
    assert not bad, "\n".join(bad[:20])
    # odd in t, exactly; infinite where the tail underflows (dof 1e6, t = 300: tail ~ 1e-19500)
    assert run_probe([("t_score", [2.7, 40]), ("t_score", [-2.7, 40]), ("t_score", [0.0, 5]),
                      ("t_score", [300.0, 1e6]), ("t_score", [-300.0, 1e6])]) == \
        [run_probe([("t_score", [2.7, 40])])[0], -run_probe([("t_score", [2.7, 40])])[0], 0.0,
         float("inf"), -float("inf")]


def test_gamma_and_chi_squared_match_scipy_stats():
    shapes, rates = [0.05, 0.5, 1, 2.5, 40, 1e4, 1e6], [0.01, 1, 250]
    check_quantiles([("gamma_ppf", [p, a, r], stats.gamma(a, scale=1 / r), mp_gamma(a, r)) for a in shapes for r in rates for p in PS])
    check_quantiles([("chi2_ppf", [p, k], stats.chi2(k), mp_gamma(k / 2, 0.5)) for k in [1, 3, 10, 200] for p in PS])
    # shapes of old channels' variance posteriors, below the Wilson-Hilferty switch at 1e7
    check_quantiles([("gamma_ppf", [p, a, 1.0], stats.gamma(a), mp_gamma(a, 1.0)) for a in [1e3 + 0.5, 1e5] for p in PS])
    cases = []
    for shape in shapes:
        for rate in rates:
            for x in [1e-3, 0.5, 2, 40]:
                x = x * shape / rate
                cases.append(("gamma_cdf", [x, shape, rate], stats.gamma.cdf(x, shape, scale=1 / rate)))
                cases.append(("gamma_logpdf", [x, shape, rate], stats.gamma.logpdf(x, shape, scale=1 / rate)))
    for k in [1, 3, 10, 200]:
        cases.append(("chi2_cdf", [k * 1.3, k], stats.chi2.cdf(k * 1.3, k)))
    check(cases, rtol=1e-10, atol=1e-300)


def test_beta_matches_scipy_stats():
    As, Bs = [0.3, 1, 2, 15, 400, 1e5], [0.5, 1, 7, 300, 3e4]
    check_quantiles([("beta_ppf", [p, a, b], stats.beta(a, b), mp_beta(a, b))
                     for a in As for b in Bs for p in PS if min(a, b) < 1e4], rtol_p=2e-11)
    # both parameters >= 1e4: mpmath's series does not converge; scipy's cdf at 1e-9 instead
    check_quantiles([("beta_ppf", [p, 1e5, 3e4], stats.beta(1e5, 3e4),
                      lambda x, upper: stats.beta(1e5, 3e4).sf(float(x)) if upper else stats.beta(1e5, 3e4).cdf(float(x)))
                     for p in PS], rtol_p=1e-9)
    cases = []
    for a in As:
        for b in Bs:
            for x in [0.001, 0.1, 0.5, 0.9]:
                cases.append(("beta_cdf", [x, a, b], stats.beta.cdf(x, a, b)))
                cases.append(("beta_logpdf", [x, a, b], stats.beta.logpdf(x, a, b)))
    check(cases, rtol=1e-9, atol=1e-300)


def test_discrete_log_masses_match_scipy_stats():
    cases = []
    for mean in [0.1, 3, 250]:
        for y in [0, 1, 5, 300]:
            cases.append(("poisson_logpmf", [y, mean], stats.poisson.logpmf(y, mean)))
    for n in [1, 10, 1000]:
        for p in [0.01, 0.5, 0.97]:
            for y in sorted({0, 1, n // 2, n}):
                cases.append(("binom_logpmf", [y, n, p], stats.binom.logpmf(y, n, p)))
    check(cases, rtol=1e-12)


def test_student_t_log_density_at_large_dof_matches_mpmath():
    """Old channels reach huge degrees of freedom; the log density must not lose digits there.
    Reference: the defining formula in 40-digit arithmetic (mpmath, Debian python3-mpmath)."""
    mpmath.mp.dps = 40
    cases = []
    for dof in [1e3, 1e5, 1e6, 1e8, 1e9, 1e12]:
        nu = mpmath.mpf(dof)
        for t in [0.0, 0.5, 3.0, 25.0]:
            tt = mpmath.mpf(t)
            want = (mpmath.loggamma((nu + 1) / 2) - mpmath.loggamma(nu / 2)
                    - mpmath.log(nu * mpmath.pi) / 2 - (nu + 1) / 2 * mpmath.log1p(tt * tt / nu))
            cases.append(("t_logpdf", [t, dof], float(want)))
    check(cases, rtol=1e-13, atol=1e-13)
