"""`bayline` against a real baylined: send (CSV, JSON Lines from stdin, a growing file, PUB mode),
follow, ask, list, reset, stats, snapshot; and replay publishing exactly what the daemon publishes
for the same input and config."""
import json
import os
import signal
import subprocess
import time

from bayline import Sender
from conftest import (BAYLINE, PROBE_CONFIG, TIME_SCALE, LineReader, run_cli, write_gaussian_csv,
                      write_probe_csv)


def probe_send_args(daemon, path):
    return ["send", path, "--connect", daemon.ingest, "--channel", "probe", "--y", "reading",
            "--x", "reference", "--seq", "seq", "--time", "t"]


def list_json(daemon, *glob):
    r = run_cli("list", *glob, "--control", daemon.control_endpoint, "--json", check=True)
    return {c["name"]: c for c in map(json.loads, r.stdout.splitlines())}


def test_send_csv_then_ask_list_stats_reset_snapshot(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    data = write_probe_csv(tmp_path / "probes.csv", rows=150, gain=1.02, offset=0.3)
    r = run_cli(*probe_send_args(daemon, data), check=True)
    assert "sent 300 observations in 300 frames" in r.stderr
    daemon.wait_accepted(300)

    channels = list_json(daemon, "cold/*")
    assert set(channels) == {"cold/probe1", "cold/probe2"}
    assert int(channels["cold/probe1"]["accepted"]) == 150
    assert channels["cold/probe1"]["model"] == "linear"
    table = run_cli("list", "--control", daemon.control_endpoint, check=True).stdout
    assert table.splitlines()[0].split()[:3] == ["CHANNEL", "MODEL", "RULE"]
    assert "cold/probe2" in table and "2 channels" in table

    report = json.loads(run_cli("ask", "cold/probe1", "--control", daemon.control_endpoint,
                                "--json", check=True).stdout)
    ls = next(e for e in report["estimates"] if e["estimator"] == "ls")
    assert ls["names"] == ["intercept", "reference"]
    assert ls["lower"][1] < 1.02 < ls["upper"][1]
    assert abs(ls["value"][0] - 0.3) < 0.2
    text = run_cli("ask", "cold/probe1", "--control", daemon.control_endpoint, check=True).stdout
    assert "reference" in text and "ESTIMATOR" in text and "cusum" in text

    stats = json.loads(run_cli("stats", "--control", daemon.control_endpoint, "--json",
                               check=True).stdout)
    assert int(stats["observations_accepted"]) == 300
    assert "observations accepted" in run_cli("stats", "--control", daemon.control_endpoint,
                                              check=True).stdout

    r = run_cli("ask", "cold/nope", "--control", daemon.control_endpoint)
    assert r.returncode == 1 and "daemon refused" in r.stderr
    run_cli("reset", "cold/probe2", "--control", daemon.control_endpoint, check=True)
    assert "cold/probe2" not in list_json(daemon)
    r = run_cli("reset", "cold/probe2", "--control", daemon.control_endpoint)
    assert r.returncode == 1

    snap = json.loads(run_cli("snapshot", "--control", daemon.control_endpoint, "--json",
                              check=True).stdout)
    assert os.path.exists(snap["path"]) and int(snap["channels"]) == 1


def test_bad_csv_sends_nothing(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    bad = tmp_path / "bad.csv"
    rows = ["probe,seq,t,reference,reading"]
    rows += [f"cold/bad,{i},{1764000000 + i},{-18 + i * 0.01},{-18 + i * 0.01}" for i in range(1, 60)]
    rows.append("cold/bad,60,1764000060,-17,frosty")
    bad.write_text("\n".join(rows) + "\n")
    r = run_cli(*probe_send_args(daemon, bad))
    assert r.returncode == 1
    assert f"{bad}:61: column 5 (reading): not a finite number: 'frosty'" in r.stderr
    good = write_probe_csv(tmp_path / "good.csv", channels=("cold/good",), rows=20)
    run_cli(*probe_send_args(daemon, good), check=True)
    daemon.wait_accepted(20)
    assert set(list_json(daemon)) == {"cold/good"}
    assert daemon.control.stats().observations_received == 20


def follow_process(daemon, *args):
    process = subprocess.Popen([BAYLINE, "follow", "--endpoint", daemon.publish, *args],
                               stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    process.lines = LineReader(process.stdout)
    return process


def read_lines(process, count, timeout_s=30.0, skip=None):
    """Reads `count` lines (not counting those containing `skip`) from a follow process's stdout
    within the timeout."""
    lines = []
    deadline = time.monotonic() + timeout_s
    while len(lines) < count:
        line = process.lines.readline(max(0.0, deadline - time.monotonic()))
        assert line is not None, f"got {len(lines)} of {count} lines"
        if skip is None or skip not in line:
            lines.append(line)
    return lines


def sync_follow(daemon, process, channel, **observation):
    """Sends observations of `channel` until the follow process prints one of its publications
    (so its subscription is in place). Later lines of `channel` must be skipped by the caller."""
    observation.setdefault("y", 1.0)
    with Sender(daemon.ingest) as sender:
        deadline = time.monotonic() + 20
        while time.monotonic() < deadline:
            sender.send(channel=channel, **observation)
            line = process.lines.readline(0.2)
            while line is not None:
                if channel in line:
                    return
                line = process.lines.readline(0.05)
    raise AssertionError("follow never received the synchronisation channel")


def test_follow_filters_kinds_and_channels(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    follow = follow_process(daemon, "--channel", "cold/probe1*", "--kind", "estimate")
    try:
        sync_follow(daemon, follow, "cold/probe1sync", x=[-18.0])
        data = write_probe_csv(tmp_path / "probes.csv", rows=40)
        run_cli(*probe_send_args(daemon, data), check=True)
        # 40 observations x (ls, map) of cold/probe1 only
        lines = read_lines(follow, 80, skip='"cold/probe1sync"')
        records = [json.loads(line) for line in lines]
        assert all(list(r) == ["estimate"] for r in records)
        channels = {r["estimate"]["channel"] for r in records}
        assert channels <= {"cold/probe1", "cold/probe1sync"} and "cold/probe1" in channels
        probe1 = [r["estimate"] for r in records if r["estimate"]["channel"] == "cold/probe1"]
        assert {e["estimator"] for e in probe1} == {"ls", "map"}
    finally:
        follow.send_signal(signal.SIGINT)
        assert follow.wait(timeout=10) == 0


def test_follow_count_stops_by_itself(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    follow = follow_process(daemon, "--count", "5", "--kind", "estimate")
    sync_follow(daemon, follow, "other/sync")
    with_rest = run_cli("send", write_gaussian_csv(tmp_path / "g.csv", rows=10), "--connect",
                        daemon.ingest, check=True)
    assert with_rest.returncode == 0
    assert follow.wait(timeout=20) == 0
    rest = []
    while (line := follow.lines.readline(5)) is not None:
        rest.append(line)
    assert len(rest) <= 4  # 5 in all, at least one of them used to synchronise


def test_replay_publishes_what_the_daemon_publishes(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    data = write_probe_csv(tmp_path / "probes.csv", rows=200, drift_at=120, drift_gain=1.3)
    follow = follow_process(daemon, "--channel", "cold/**")
    try:
        sync_follow(daemon, follow, "cold/sync")
        replay = run_cli("replay", "--input", data, "--config", daemon.config_path, "--channel",
                         "probe", "--y", "reading", "--x", "reference", "--seq", "seq", "--time",
                         "t", check=True).stdout.splitlines()
        assert any('"alarm"' in line for line in replay), "the drift must raise an alarm"
        run_cli(*probe_send_args(daemon, data), check=True)
        daemon_lines = read_lines(follow, len(replay), timeout_s=60, skip='"cold/sync"')
    finally:
        follow.send_signal(signal.SIGTERM)
        follow.wait(timeout=10)
    # Channels may interleave differently across the daemon's workers; per channel the lines must
    # be byte-identical and in the same order.
    for channel in ("cold/probe1", "cold/probe2"):
        want = [line for line in replay if f'"channel":"{channel}"' in line]
        have = [line for line in daemon_lines if f'"channel":"{channel}"' in line]
        assert want and have == want


def test_send_jsonl_from_stdin_in_batches(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    lines = [json.dumps({"channel": "line/rejects", "y": float(i % 3)}) for i in range(25)]
    r = run_cli("send", "-", "--connect", daemon.ingest, "--batch", "10",
                stdin="\n".join(lines) + "\n", check=True)
    assert "sent 25 observations in 3 frames" in r.stderr
    daemon.wait_accepted(25)
    assert int(list_json(daemon)["line/rejects"]["accepted"]) == 25


def test_send_follows_a_growing_file(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    path = tmp_path / "growing.csv"
    path.write_text("channel,y\nsite/compressor,41.5\n")
    sender = subprocess.Popen([BAYLINE, "send", str(path), "--follow", "--connect", daemon.ingest],
                              stderr=subprocess.PIPE, text=True)
    try:
        daemon.wait_accepted(1)
        with open(path, "a") as f:
            f.write("site/compressor,42.0\nsite/compressor,40.8\n")
        daemon.wait_accepted(3)
    finally:
        sender.send_signal(signal.SIGINT)
        assert sender.wait(timeout=10) == 0
    assert "sent 3 observations" in sender.stderr.read()


def test_send_over_pub_to_a_subscribing_daemon(tmp_path, start_daemon):
    feed = f"ipc://{tmp_path}/feed"
    daemon = start_daemon(PROBE_CONFIG, extra_args=["--sub-connect", feed])
    data = write_gaussian_csv(tmp_path / "compressor.csv", rows=30)
    r = run_cli("send", data, "--pub-bind", feed, "--seq", "seq", "--time", "t", check=True)
    assert "sent 30 observations" in r.stderr
    daemon.wait_accepted(30)
    assert int(list_json(daemon)["compressor"]["accepted"]) == 30


def test_reload_applies_a_changed_config_and_refuses_a_broken_one(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    data = write_probe_csv(tmp_path / "probes.csv", rows=20, gain=1.0, offset=0.0)
    run_cli(*probe_send_args(daemon, data), check=True)
    daemon.wait_accepted(40)
    assert list_json(daemon)["cold/probe1"]["rule"] == "probes"

    # A changed spec for the probes rule: the daemon resets the channels it governs.
    with open(daemon.config_path, "w") as f:
        f.write(PROBE_CONFIG.replace("arl0: 500", "arl0: 800"))
    r = run_cli("reload", "--control", daemon.control_endpoint, "--timeout", 5 * TIME_SCALE,
                check=True)
    assert r.returncode == 0 and r.stdout.strip()
    assert "cold/probe1" not in list_json(daemon)

    # A broken file is refused with an error naming it; the daemon keeps its configuration.
    with open(daemon.config_path, "w") as f:
        f.write("rules { match: \"**\" spec { model: \"no_such_model\" } }\n")
    r = run_cli("reload", "--control", daemon.control_endpoint, "--timeout", 5 * TIME_SCALE)
    assert r.returncode == 1 and "model" in r.stderr
    run_cli(*probe_send_args(daemon, data), check=True)
    daemon.wait_accepted(80)
    assert list_json(daemon)["cold/probe1"]["rule"] == "probes"


def test_send_at_a_limited_rate_delivers_every_observation(tmp_path, start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    data = write_probe_csv(tmp_path / "probes.csv", rows=25, gain=1.0, offset=0.0)
    r = run_cli(*probe_send_args(daemon, data), "--rate", "2000", "--batch", "4", check=True)
    assert "sent 50 observations" in r.stderr
    daemon.wait_accepted(50)
    assert int(list_json(daemon)["cold/probe2"]["accepted"]) == 25
