#!/usr/bin/env python3
"""In-control and out-of-control ARL of bayline's detectors, measured through the real pipeline.

For every model family, simulated streams (one channel each) are written to a CSV file and run
through `bayline replay` (the pipeline the daemon runs); the ARL is read from the alarms it prints.

  fresh ARL  the observation number of each channel's first alarm. Streams are cut at L = 5 * ARL0,
             so a few runs are censored; the estimate is the censored-exponential maximum likelihood
             sum(min(T_i, L)) / #(T_i <= L) (run lengths of a calibrated chart are close to
             geometric; common practice, no source).
  re-armed   the gaps between successive raised alarms of a channel (the chart restarts after each
             alarm), with the stretch after the last alarm as a censored gap: same estimator.
  95 % CI    exp(+-1.96 / sqrt(alarms)) around the estimate (the exponential mean's interval on the
             log scale; common practice, no source).
  shifted    the mean delay to the first alarm after a one-sd shift in the family's natural
             parameter at observation TAU, over the streams without an alarm before it (the
             conditional expected delay, reported, not checked).

Run by ctest with --check (fails when an in-control ARL is outside its tolerance or its interval is
wider than the tolerance), and by hand with --markdown to print the README's table.
"""
import argparse
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np

TAU = 100  # observations before the shift in the out-of-control streams


def _gaussian(rng, n, shifted):
    y = rng.normal(10.0, 2.0, n)
    if shifted:
        y[TAU:] += 2.0
    return {"y": y}


def _linear(rng, n, shifted):
    x1, x2 = rng.normal(0.0, 1.0, n), rng.normal(0.0, 1.0, n)
    offset = np.full(n, 1.0)
    if shifted:
        offset[TAU:] += 1.0  # the intercept moves by one residual sd
    return {"y": offset + 2.0 * x1 - x2 + rng.normal(0.0, 1.0, n), "x1": x1, "x2": x2}


def _poisson(rate):
    def make(rng, n, shifted):
        lam = np.full(n, rate)
        if shifted:
            lam[TAU:] += math.sqrt(rate)
        return {"y": rng.poisson(lam)}
    return make


def _binomial(trials, p):
    def make(rng, n, shifted):
        prob = np.full(n, p)
        if shifted:
            prob[TAU:] += math.sqrt(p * (1 - p) / trials)
        return {"y": rng.binomial(trials, prob), "trials": np.full(n, trials)}
    return make


def _exponential(rng, n, shifted):
    mean = np.full(n, 1.0)
    if shifted:
        mean[TAU:] *= 2.0  # mean + one sd
    return {"y": rng.exponential(mean)}


def _gamma(rng, n, shifted):
    shape, scale = np.full(n, 3.0), 1.0
    if shifted:
        shape[TAU:] += math.sqrt(3.0)  # mean + one sd at fixed scale
    return {"y": rng.gamma(shape, scale)}


def _lognormal(rng, n, shifted):
    mu = np.zeros(n)
    if shifted:
        mu[TAU:] += 0.5
    return {"y": rng.lognormal(mu, 0.5)}


# name -> (model, generator, extra replay flags)
FAMILIES = {
    "gaussian": ("gaussian", _gaussian, []),
    "linear, 2 regressors": ("linear", _linear, ["--x", "x1,x2"]),
    "poisson, rate 2": ("poisson", _poisson(2.0), []),
    "poisson, rate 0.2": ("poisson", _poisson(0.2), []),
    "binomial, 50 trials, p 0.02": ("binomial", _binomial(50, 0.02), ["--trials", "trials"]),
    "binomial, 1 trial, p 0.01": ("binomial", _binomial(1, 0.01), ["--trials", "trials"]),
    "exponential": ("exponential", _exponential, []),
    "gamma, shape 3": ("gamma", _gamma, []),
    "lognormal": ("lognormal", _lognormal, []),
}


def write_streams(path, make, runs, length, shifted, seed):
    rng = np.random.default_rng(seed)
    with open(path, "w") as f:
        columns = None
        for r in range(runs):
            data = make(rng, length, shifted)
            if columns is None:
                columns = list(data)
                f.write("channel," + ",".join(columns) + "\n")
            text = [data[c].astype(str) if data[c].dtype.kind == "i" else
                    np.char.mod("%.17g", data[c]) for c in columns]
            f.write("".join(f"s{r}," + ",".join(row) + "\n" for row in zip(*text)))


def raised_alarms(bayline, csv_path, model, extra, detector, arl0):
    """{channel: [seq of each raised alarm]} from `bayline replay`."""
    cmd = [bayline, "replay", "--input", csv_path, "--model", model, "--detect", detector,
           "--arl0", str(arl0), "--every", "1000000000", *extra]
    proc = subprocess.run(cmd, capture_output=True, text=True, check=False)
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd)} failed: {proc.stderr}")
    alarms = {}
    for line in proc.stdout.splitlines():
        if '"raised"' not in line:
            continue
        a = json.loads(line)["alarm"]
        alarms.setdefault(a["channel"], []).append(int(a["seq"]))
    return alarms


def censored_mean(times, exposure):
    """Censored-exponential MLE: total exposure / events, with its 95 % interval."""
    events = len(times)
    if events == 0:
        return math.inf, (math.inf, math.inf), 0
    est = exposure / events
    half = 1.96 / math.sqrt(events)
    return est, (est * math.exp(-half), est * math.exp(half)), events


def measure(bayline, workdir, name, detector, arl0, runs, seed, with_delay=True):
    model, make, extra = FAMILIES[name]
    length = int(5 * arl0)
    path = os.path.join(workdir, "in_control.csv")
    write_streams(path, make, runs, length, False, seed)
    alarms = raised_alarms(bayline, path, model, extra, detector, arl0)
    first, fresh_exposure, gaps, rearm_exposure = [], 0, [], 0
    for r in range(runs):
        seqs = sorted(alarms.get(f"s{r}", []))
        fresh_exposure += seqs[0] if seqs else length
        if seqs:
            first.append(seqs[0])
            gaps += [b - a for a, b in zip(seqs, seqs[1:])]
            rearm_exposure += length - seqs[0]
    fresh = censored_mean(first, fresh_exposure)
    rearm = censored_mean(gaps, rearm_exposure)

    if not with_delay:
        return {"family": name, "detector": detector, "arl0": arl0, "runs": runs, "fresh": fresh,
                "rearmed": rearm, "shifted_delay": math.nan}
    shifted_path = os.path.join(workdir, "shifted.csv")
    shifted_runs = max(200, runs // 5)
    write_streams(shifted_path, make, shifted_runs, int(TAU + arl0), True, seed + 1)
    shifted_alarms = raised_alarms(bayline, shifted_path, model, extra, detector, arl0)
    delays = []
    for r in range(shifted_runs):
        seqs = sorted(shifted_alarms.get(f"s{r}", []))
        if seqs and seqs[0] <= TAU:
            continue  # a false alarm before the shift
        delays.append(seqs[0] - TAU if seqs else arl0)
    delay = float(np.mean(delays)) if delays else math.nan
    return {"family": name, "detector": detector, "arl0": arl0, "runs": runs, "fresh": fresh,
            "rearmed": rearm, "shifted_delay": delay}


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawTextHelpFormatter)
    ap.add_argument("--bayline", required=True)
    ap.add_argument("--detector", default="cusum")
    ap.add_argument("--arl0", type=float, nargs="+", default=[200.0])
    ap.add_argument("--runs", type=int, default=1000, help="in-control streams per family")
    ap.add_argument("--families", nargs="*", default=list(FAMILIES))
    ap.add_argument("--tolerance", type=float, default=0.10, help="relative, e.g. 0.10")
    ap.add_argument("--seed", type=int, default=20261203)
    ap.add_argument("--check", action="store_true")
    ap.add_argument("--no-delay", action="store_true", help="skip the shifted streams")
    ap.add_argument("--markdown", action="store_true")
    args = ap.parse_args()

    failures, rows = [], []
    with tempfile.TemporaryDirectory() as workdir:
        for arl0 in args.arl0:
            for i, name in enumerate(args.families):
                m = measure(args.bayline, workdir, name, args.detector, arl0, args.runs,
                            args.seed + 17 * i, not args.no_delay)
                rows.append(m)
                for what in ("fresh", "rearmed"):
                    est, (lo, hi), events = m[what]
                    line = (f"{args.detector} arl0 {arl0:g} {name}: {what} ARL {est:.1f} "
                            f"[{lo:.1f}, {hi:.1f}] from {events} alarms")
                    print(line, flush=True)
                    if abs(est / arl0 - 1) > args.tolerance:
                        failures.append(line + f" (outside +-{args.tolerance:.0%})")
                    if (hi - lo) / 2 > args.tolerance * arl0:
                        failures.append(line + " (interval wider than the tolerance)")
                print(f"{args.detector} arl0 {arl0:g} {name}: mean delay after a one-sd shift "
                      f"{m['shifted_delay']:.1f}", flush=True)
    if args.markdown:
        print(f"\n| family | detector | ARL0 | fresh ARL (95 % CI) | re-armed ARL (95 % CI) |"
              " delay at a one-sd shift |")
        print("|---|---|---|---|---|---|")
        for m in rows:
            cells = []
            for what in ("fresh", "rearmed"):
                est, (lo, hi), _ = m[what]
                cells.append(f"{est:.0f} ({lo:.0f}-{hi:.0f})")
            print(f"| {m['family']} | {m['detector']} | {m['arl0']:g} | {cells[0]} | {cells[1]} |"
                  f" {m['shifted_delay']:.1f} |")
    if args.check and failures:
        print("\nFAILED:\n" + "\n".join(failures), file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
