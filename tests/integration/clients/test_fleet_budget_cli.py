"""Fleet false-alarm budget offline: `bayline threshold` does the daemon's arithmetic
(ARL0 = N r / B, daemon/pipeline/fleet_budget.h), and `bayline replay` over a generated file of
timed observations from many channels raises the budgeted number of false alarms."""
import json

import numpy as np
from scipy.stats import poisson

from conftest import run_cli


def threshold_json(*args):
    return json.loads(run_cli("threshold", *args, "--json", check=True).stdout)


def test_threshold_derives_the_per_channel_arl0_from_the_fleet_budget():
    fleet = threshold_json("--channels", "10000", "--interval", "30", "--false-alarms-per-day", "20")
    # 10,000 channels x 2880 observations a day / 20 false alarms a day.
    assert fleet["arl0"] == 10000 * 2880 / 20
    assert fleet["channels"] == 10000 and fleet["rate_per_day"] == 2880
    assert fleet["false_alarms_per_day"] == 20
    direct = threshold_json("--arl0", str(10000 * 2880 / 20))
    assert fleet["h"] == direct["h"] and fleet["k"] == direct["k"]
    assert abs(fleet["arl"][0]["arl"] / fleet["arl0"] - 1) < 0.01
    same = threshold_json("--channels", "10000", "--rate-per-day", "2880",
                          "--false-alarms-per-day", "20", "--detector", "ewma")
    assert same["arl0"] == fleet["arl0"] and 0 < same["lambda"] <= 1
    text = run_cli("threshold", "--channels", "500", "--interval", "300", "--false-alarms-per-day",
                   "2", check=True).stdout
    assert "ARL0 = N r / B = 72000 observations per channel" in text, text


def test_threshold_refuses_incomplete_or_clashing_fleet_flags():
    for args, what in [
        (["--channels", "100", "--false-alarms-per-day", "2"], "--rate-per-day or --interval"),
        (["--channels", "100", "--interval", "60", "--rate-per-day", "1440",
          "--false-alarms-per-day", "2"], "--rate-per-day or --interval"),
        (["--channels", "100", "--interval", "60", "--false-alarms-per-day", "2", "--arl0", "500"],
         "exclude each other"),
        (["--channels", "100", "--interval", "60", "--false-alarms-per-day", "-2"], "> 0"),
        (["--channels", "1", "--interval", "60", "--false-alarms-per-day", "5000"], "outside [2, 1e7]"),
    ]:
        r = run_cli("threshold", *args)
        assert r.returncode == 1 and what in r.stderr, (args, r.stderr)


# 200 channels at mean intervals log-uniform in [10 s, 5 min] (each interval jittered +-20 %),
# in-control gaussian values, one hour of warm-up (rates become known) then one day, sorted by
# time as a daemon would receive them; rule: cusum with false_alarms_per_day B = 40.
CHANNELS, BUDGET, WARMUP, DAY = 200, 40, 3600.0, 86400.0
CONFIG = f"""
rules {{ name: "fleet" match: "**" spec {{ model: "gaussian" estimators: "ls"
        publish {{ every_n: 4000000000 }}
        detectors {{ kind: "cusum" false_alarms_per_day: {BUDGET} }} }} }}
"""


def write_fleet_csv(path, seed):
    rng = np.random.default_rng(seed)
    intervals = np.exp(rng.uniform(np.log(10), np.log(300), CHANNELS))
    channel, times = [], []
    for c, mean in enumerate(intervals):
        n = int((WARMUP + DAY) / mean * 1.3) + 2
        t = rng.uniform(0, mean) + np.cumsum(mean * rng.uniform(0.8, 1.2, n)) - mean
        t = t[t < WARMUP + DAY]
        channel.append(np.full(t.size, c))
        times.append(t)
    channel, times = np.concatenate(channel), np.concatenate(times)
    order = np.argsort(times, kind="stable")
    channel, times = channel[order], times[order]
    seq = np.zeros(channel.size, dtype=np.int64)
    counts = np.zeros(CHANNELS, dtype=np.int64)
    for i, c in enumerate(channel):  # per-channel sequence numbers
        counts[c] += 1
        seq[i] = counts[c]
    y = rng.normal(20.0, 2.0, channel.size)
    t0 = 1_700_000_000.0
    with open(path, "w") as f:
        f.write("channel,seq,t,y\n")
        for c, s, t, v in zip(channel, seq, times, y):
            f.write(f"site/probe{c},{s},{t0 + t:.3f},{v:.6f}\n")
    return t0, channel.size


def test_replay_of_a_fleet_raises_the_budgeted_false_alarms(tmp_path):
    conf = tmp_path / "fleet.conf"
    conf.write_text(CONFIG)
    days, total = 0, 0
    for seed in range(1, 8):  # 7 simulated days, about 7 s each
        data = tmp_path / f"fleet{seed}.csv"
        t0, rows = write_fleet_csv(data, seed)
        out = run_cli("replay", "--input", data, "--config", conf, "--channel", "channel",
                      "--seq", "seq", "--time", "t", "--y", "y", timeout=600, check=True).stdout
        alarms = [json.loads(line)["alarm"] for line in out.splitlines() if line.strip()]
        raised = [a for a in alarms if a["state"] == "raised"]
        after = [a for a in raised if int(a["time_ns"]) * 1e-9 - t0 >= WARMUP]
        print(f"seed {seed}: {rows} rows, {len(raised) - len(after)} alarms in warm-up, "
              f"{len(after)} in the day")
        days += 1
        total += len(after)
    # Central 95 % Poisson interval of the total over `days` days (scipy.stats.poisson.interval):
    # for B = 40 and 7 days, mean 280, interval (248, 313). Measured: 48 40 50 37 24 36 45 = 280.
    lo, hi = poisson.interval(0.95, BUDGET * days)
    print(f"total {total} over {days} days, 95 % interval around {BUDGET * days}: [{lo}, {hi}]")
    assert lo <= total <= hi


def test_replay_of_a_budgeted_config_needs_the_time_column(tmp_path):
    # Without --time every row has time 0: the budget could never learn a channel's rate.
    conf = tmp_path / "fleet.conf"
    conf.write_text(CONFIG)
    data = tmp_path / "few.csv"
    data.write_text("channel,seq,y\nsite/probe1,1,20.5\nsite/probe1,2,19.8\n")
    r = run_cli("replay", "--input", data, "--config", conf, "--channel", "channel", "--seq", "seq",
                "--y", "y")
    assert r.returncode != 0 and r.stdout == ""
    assert "false_alarms_per_day" in r.stderr and "needs --time COL" in r.stderr
