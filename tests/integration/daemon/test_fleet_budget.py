"""A rule with false_alarms_per_day loads in the real daemon, and its channels' thresholds come
from N (counted over every worker) and each channel's own rate (daemon/pipeline/fleet_budget.h)."""
import json
import os
import subprocess

from conftest import BAYLINED, BINARY_DIR, TIME_SCALE, fnv1a64, frame, obs

BAYLINE = os.path.join(BINARY_DIR, "clients", "cli", "bayline")
CONFIG = """
rules { name: "fleet" match: "fleet/**" spec { model: "gaussian" estimators: "ls"
        detectors { kind: "cusum" false_alarms_per_day: 5 } } }
"""
T0 = 1_700_000_000_000_000_000


def fleet_h(channels, interval_s, budget):
    """h for ARL0 = N r / B by `bayline threshold` (direct Markov-chain calibration)."""
    r = subprocess.run([BAYLINE, "threshold", "--channels", str(channels), "--interval",
                        str(interval_s), "--false-alarms-per-day", str(budget), "--json"],
                       capture_output=True, text=True, timeout=60 * TIME_SCALE, check=True)
    return json.loads(r.stdout)["h"]


def names_on_both_workers():
    """Two channel names that the daemon's 2 workers route apart (routing.h: hash % workers)."""
    found = {}
    i = 0
    while len(found) < 2:
        name = f"fleet/probe{i}"
        found.setdefault(fnv1a64(name) % 2, name)
        i += 1
    return found[0], found[1]


def test_rule_with_budget_loads_and_counts_channels_over_all_workers(daemons, tmp_path):
    config = tmp_path / "fleet.conf"
    config.write_text(CONFIG)
    check = subprocess.run([BAYLINED, "--check-config", str(config)], capture_output=True,
                           text=True, timeout=30 * TIME_SCALE)
    assert check.returncode == 0, check.stderr
    d = daemons(workers=2, extra_args=["--config", str(config)]).start()
    a, b = names_on_both_workers()
    push = d.pusher()
    # Both channels exist before either knows its rate, so each sees N = 2 from the start.
    push.send(frame(obs(a, y=1.0, seq=1, time_ns=T0)))
    push.send(frame(obs(b, y=1.0, seq=1, time_ns=T0)))
    d.wait_stats(lambda st: st.observations_accepted == 2, "2 accepted")
    for i in range(1, 20):
        push.send(frame(obs(a, y=1.0 + 0.3 * (i % 5), seq=i + 1, time_ns=T0 + i * 60 * 10**9)))
        push.send(frame(obs(b, y=1.0 + 0.3 * (i % 5), seq=i + 1, time_ns=T0 + i * 10 * 10**9)))
    d.wait_stats(lambda st: st.observations_accepted == 40, "40 accepted")
    # a: 1440 observations a day, b: 8640; N = 2 channels in the daemon, B = 5.
    # The daemon's table look-up agrees with direct calibration to about 1e-4 in h
    # (fleet_budget_test), far below the 0.3 that N = 1 (a per-worker count) would shift h by.
    assert abs(d.ask(a).detectors[0].threshold - fleet_h(2, 60, 5)) < 2e-3
    assert abs(d.ask(b).detectors[0].threshold - fleet_h(2, 10, 5)) < 2e-3
    assert abs(fleet_h(2, 60, 5) - fleet_h(1, 60, 5)) > 0.3


def test_check_config_rejects_budget_with_arl0(tmp_path):
    path = tmp_path / "bad.conf"
    path.write_text(CONFIG.replace("false_alarms_per_day: 5", "false_alarms_per_day: 5 arl0: 900"))
    r = subprocess.run([BAYLINED, "--check-config", str(path)], capture_output=True, text=True,
                       timeout=30 * TIME_SCALE)
    assert r.returncode == 1
    assert "rules[0].spec.detectors[0].false_alarms_per_day" in r.stderr, r.stderr
    assert "exclude each other" in r.stderr, r.stderr
