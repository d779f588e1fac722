"""`bayline` commands that need no daemon: replay, threshold, plot, and the errors every command
gives for bad input or an absent daemon."""
import json
import os
import xml.etree.ElementTree as ET

from conftest import run_cli, write_gaussian_csv, write_probe_csv

SVG = "{http://www.w3.org/2000/svg}"


def read_jsonl(text):
    return [json.loads(line) for line in text.splitlines() if line.strip()]


def test_replay_detects_a_mean_shift_and_prints_publications(tmp_path):
    data = write_gaussian_csv(tmp_path / "latency.csv", rows=400, shift_at=250, shift=1.5)
    result = run_cli("replay", "--input", data, "--model", "gaussian", "--seq", "seq",
                     "--time", "t", "--detect", "cusum", "--arl0", "1000", check=True)
    records = read_jsonl(result.stdout)
    estimates = [r["estimate"] for r in records if "estimate" in r]
    alarms = [r["alarm"] for r in records if "alarm" in r]
    # One channel named after the file (it has no channel column); every observation published by
    # every estimator the gaussian model allows.
    assert {e["channel"] for e in estimates} == {"latency"}
    estimators = sorted({e["estimator"] for e in estimates})
    assert len(estimators) >= 2
    assert len(estimates) == 400 * len(estimators)
    last = [e for e in estimates if int(e["seq"]) == 400]
    for e in last:
        assert e["names"][0] == "mean"
        assert e["lower"][0] < e["value"][0] < e["upper"][0]
    raised = [a for a in alarms if a["state"] == "raised"]
    assert raised, "the 1.5 sd shift at row 250 must raise an alarm"
    first = raised[0]
    assert 250 <= int(first["seq"]) <= 330
    assert 200 <= int(first["onset_seq"]) <= int(first["seq"])
    assert first["detector"] == "cusum"


def test_replay_output_file_and_every(tmp_path):
    data = write_probe_csv(tmp_path / "probes.csv", rows=60)
    out = tmp_path / "out.jsonl"
    run_cli("replay", "--input", data, "--channel", "probe", "--y", "reading", "--x", "reference",
            "--model", "linear", "--estimators", "ls", "--detect", "none", "--every", "10",
            "--output", out, check=True)
    records = read_jsonl(out.read_text())
    assert not (tmp_path / "out.jsonl.tmp").exists()
    seqs = sorted(int(r["estimate"]["seq"]) for r in records if r["estimate"]["channel"] == "cold/probe1")
    assert seqs == [10, 20, 30, 40, 50, 60]
    e = records[-1]["estimate"]
    assert e["names"] == ["intercept", "reference"]
    assert e["lower"][1] < 1.02 < e["upper"][1] or abs(e["value"][1] - 1.02) < 0.01


def test_replay_bad_csv_names_file_line_and_column(tmp_path):
    bad_value = tmp_path / "bad_value.csv"
    bad_value.write_text("seq,y\n1,2.5\n2,warm\n")
    r = run_cli("replay", "--input", bad_value, "--model", "gaussian", "--output", tmp_path / "o.jsonl")
    assert r.returncode == 1
    assert f"{bad_value}:3: column 2 (y): not a finite number: 'warm'" in r.stderr
    assert not (tmp_path / "o.jsonl").exists() and not (tmp_path / "o.jsonl.tmp").exists()

    ragged = tmp_path / "ragged.csv"
    ragged.write_text("seq,y,x\n1,2,3\n2,3\n")
    r = run_cli("replay", "--input", ragged, "--x", "x")
    assert r.returncode == 1
    assert f"{ragged}:3: column 3 (x): ragged row" in r.stderr

    missing = tmp_path / "missing.csv"
    missing.write_text("seq,value\n1,2\n")
    r = run_cli("replay", "--input", missing)
    assert r.returncode == 1
    assert f"{missing}:1: no column 'y' (--y) in the header" in r.stderr

    jsonl = tmp_path / "broken.jsonl"
    jsonl.write_text('{"y": 1}\n{"y": 2,}\n')
    r = run_cli("replay", "--input", jsonl)
    assert r.returncode == 1
    assert f"{jsonl}:2: not a JSON object" in r.stderr


def test_replay_refuses_bad_specs_with_the_field_named(tmp_path):
    data = write_gaussian_csv(tmp_path / "g.csv", rows=20)
    r = run_cli("replay", "--input", data, "--detect", "cusum", "--arl0", "1")
    assert r.returncode == 1 and "arl0" in r.stderr
    r = run_cli("replay", "--input", data, "--model", "no_such_model")
    assert r.returncode == 1 and "model" in r.stderr
    r = run_cli("replay", "--input", data, "--half-life", "60")
    assert r.returncode == 1 and "--time" in r.stderr
    conf = tmp_path / "bad.conf"
    conf.write_text('rules { match: "**" spec { model: "gaussian" } }\nrules { oops: 1 }\n')
    r = run_cli("replay", "--input", data, "--config", conf)
    assert r.returncode == 1 and f"{conf}:2:" in r.stderr
    r = run_cli("replay", "--input", data, "--config", conf, "--model", "gaussian")
    assert r.returncode == 1 and "exclude" in r.stderr


def test_threshold_table_and_json_agree_with_the_target(tmp_path):
    r = run_cli("threshold", "--arl0", "500", "--shift", "1", "--json", check=True)
    result = json.loads(r.stdout)
    assert result["detector"] == "cusum" and result["k"] == 0.5
    arl = {p["shift"]: p["arl"] for p in result["arl"]}
    # The calibrated h gives back the requested in-control ARL, and the ARL falls with the shift.
    assert abs(arl[0] - 500) / 500 < 0.01
    shifts = sorted(arl)
    assert all(arl[a] > arl[b] for a, b in zip(shifts, shifts[1:]))
    table = run_cli("threshold", "--arl0", "500", "--shift", "1", check=True).stdout
    assert "k = 0.5" in table and f"h = {result['h']:.5g}" in table
    assert "detectors { kind: \"cusum\"" in table

    r = run_cli("threshold", "--detector", "ewma", "--arl0", "370", "--shift", "0.5", "--json",
                check=True)
    ewma = json.loads(r.stdout)
    assert 0 < ewma["lambda"] <= 1 and ewma["limit"] > 0
    assert abs(ewma["arl"][0]["arl"] - 370) / 370 < 0.01

    assert ewma["arl_method"] == "markov_chain" and ewma["arl0_achieved"] == ewma["arl"][0]["arl"]

    r = run_cli("threshold", "--arl0", "1")
    assert r.returncode == 1 and "arl0" in r.stderr


def test_threshold_calibrates_the_simulated_detectors(tmp_path):
    # page_hinkley, glr and bocpd: thresholds by simulation (calibration.h, 1000 runs: relative
    # error about 3 %); the CLI measures the achieved in-control ARL with an independent seed and
    # reports its 95 % half-width from the runs' sample sd. Check: the target lies within that
    # half-width plus 10 % (3 calibration standard errors) of the measurement (the calibration's
    # own contract, no outside source). Small arl0 and --runs keep the simulations short.
    cases = [("page_hinkley", 200, 1000, {"delta", "threshold"}, "simulation_delay"),
             ("glr", 200, 1000, {"window", "threshold"}, "simulation"),
             ("bocpd", 100, 600, {"hazard", "recent", "threshold"}, "simulation_delay")]
    for detector, arl0, runs, settings, method in cases:
        r = run_cli("threshold", "--detector", detector, "--arl0", str(arl0), "--shift", "1",
                    "--runs", str(runs), "--shifts", "0,1,3", "--json", check=True)
        result = json.loads(r.stdout)
        assert result["detector"] == detector and result["arl_method"] == method
        assert settings <= set(result), result
        assert result["runs"] == runs
        achieved, half = result["arl0_achieved"], result["arl0_half_width"]
        assert 0 < half < 0.1 * arl0, result
        assert abs(achieved - arl0) <= half + 0.1 * arl0, result
        # The design shift is caught far sooner than a false alarm, and a larger one sooner still.
        arl = {p["shift"]: p["arl"] for p in result["arl"]}
        assert arl[0] == achieved and result["arl_at_shift"] == arl[1]
        assert arl[3] < arl[1] < 0.25 * arl0, result
        if method == "simulation_delay":
            assert result["change_at"] == 100
    assert 0 < result["threshold"] < 1 and result["hazard"] == 1 / 100  # bocpd: a probability

    table = run_cli("threshold", "--detector", "bocpd", "--arl0", "100", "--runs", "200",
                    "--shifts", "0,2", check=True).stdout
    assert "detectors { kind: \"bocpd\"" in table and "hazard: 0.01" in table
    assert "in control:" in table and "+-" in table and "after 100 in-control" in table

    r = run_cli("threshold", "--detector", "glr", "--arl0", "20000")
    assert r.returncode == 1 and "arl0" in r.stderr
    r = run_cli("threshold", "--detector", "bocpd", "--direction", "up")
    assert r.returncode == 1 and "direction" in r.stderr
    r = run_cli("threshold", "--detector", "page_hinkley", "--runs", "10")
    assert r.returncode == 1 and "runs" in r.stderr


def test_plot_from_replay_has_estimates_intervals_alarm_and_legend(tmp_path):
    data = write_gaussian_csv(tmp_path / "door.csv", rows=400, shift_at=250, shift=2.0)
    out = tmp_path / "door.jsonl"
    run_cli("replay", "--input", data, "--model", "gaussian", "--seq", "seq", "--time", "t",
            "--output", out, check=True)
    svg = tmp_path / "door.svg"
    r = run_cli("plot", "--input", out, "--channel", "door", "--output", svg, "--units", "ms",
                "--title", "Door latency", check=True)
    root = ET.parse(svg).getroot()
    assert root.tag == SVG + "svg"
    ids = {el.get("id") for el in root.iter() if el.get("id")}
    assert "alarm-raised" in ids
    assert any(i.startswith("estimate-") and i.endswith("-mean") for i in ids)
    assert any(i.startswith("interval-") for i in ids)
    texts = " ".join("".join(el.itertext()) for el in root.iter(SVG + "text"))
    assert "alarm raised (cusum)" in texts
    assert "estimated onset to alarm" in texts
    assert "mean (ms)" in texts and "Door latency" in texts
    assert "observation (seq)" in texts

    png = tmp_path / "door.png"
    run_cli("plot", "--input", out, "--channel", "door", "--output", png, check=True)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    r = run_cli("plot", "--input", out, "--channel", "nope", "--output", tmp_path / "x.svg")
    assert r.returncode == 1 and "no estimates of channel 'nope'" in r.stderr and "door" in r.stderr
    assert not (tmp_path / "x.svg").exists()


def test_commands_fail_clearly_without_a_daemon(tmp_path):
    nobody = f"ipc://{tmp_path}/nobody"
    r = run_cli("stats", "--control", nobody, "--timeout", "0.3")
    assert r.returncode == 2 and "no reply from the daemon at " + nobody in r.stderr
    data = write_gaussian_csv(tmp_path / "g.csv", rows=5)
    r = run_cli("send", data, "--connect", nobody, "--timeout", "0.3")
    assert r.returncode == 2 and "did not take observations" in r.stderr


def test_every_command_has_help():
    for command in ("send", "follow", "ask", "list", "reset", "stats", "snapshot", "replay",
                    "threshold", "plot"):
        r = run_cli(command, "--help", check=True)
        assert "Usage" in r.stdout or "usage" in r.stdout.lower()
    r = run_cli("no-such-command")
    assert r.returncode != 0
