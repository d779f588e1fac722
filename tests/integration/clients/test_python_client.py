"""The Python client against a real baylined: Sender (single and batched), Subscriber filters,
Control requests and their errors, prediction requests; JSON Lines loading, DataFrames and the
plot API on real replay output."""
import os
import re
import xml.etree.ElementTree as ET

import pytest

import bayline
from bayline import (Control, ControlError, DaemonTimeout, Sender, Subscriber, channel_history,
                     load_jsonl, to_dataframe)
from conftest import PROBE_CONFIG, SOURCE, run_cli, synchronise, write_gaussian_csv


def test_defaults_match_the_daemon_header():
    with open(os.path.join(SOURCE, "daemon", "defaults.h")) as f:
        header = f.read()
    for name, value in (("Ingest", bayline.DEFAULT_INGEST_ENDPOINT),
                        ("Publish", bayline.DEFAULT_PUBLISH_ENDPOINT),
                        ("Control", bayline.DEFAULT_CONTROL_ENDPOINT)):
        match = re.search(rf'kDefault{name}Endpoint = "([^"]+)"', header)
        assert match and match.group(1) == value


def test_generated_messages_import_as_bayline_v1():
    from bayline.v1 import observation_pb2

    assert observation_pb2.Observation(channel="a").channel == "a"


def test_send_subscribe_and_control(start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    with Subscriber(daemon.publish, kinds=("estimate", "alarm"), channel="room1/**") as sub:
        synchronise(daemon, sub, "room1/sync")
        with Sender(daemon.ingest) as sender:
            for i in range(1, 51):
                sender.send(channel="room1/latency", y=20.0 + (i % 5), seq=i, time_ns=10**18 + i)
            sender.send(channel="room2/latency", y=1.0)  # outside the glob: never received
            sender.send_batch([{"channel": "room1/latency", "y": 22.0, "seq": 51 + k}
                               for k in range(10)])
        estimates = []
        for kind, publication in sub.iterate(timeout_s=10):
            assert kind in ("estimate", "alarm")
            channel = getattr(publication, kind).channel
            assert channel.startswith("room1/")
            if kind == "estimate" and channel == "room1/latency":
                estimates.append(publication.estimate)
                if publication.estimate.accepted == 60:
                    break
    assert estimates[-1].accepted == 60
    assert estimates[-1].names[0] == "mean"

    control = daemon.control
    names = [c.name for c in control.list("room*/**")]
    assert "room1/latency" in names and "room2/latency" in names
    report = control.ask("room1/latency")
    assert report.info.accepted == 60
    with pytest.raises(ControlError):
        control.ask("room9/none")
    assert control.stats().observations_accepted >= 61
    control.reset("room2/latency")
    assert "room2/latency" not in [c.name for c in control.list()]


def test_prediction_request_on_a_linear_channel(start_daemon):
    daemon = start_daemon(PROBE_CONFIG)
    with Subscriber(daemon.publish, kinds="prediction", channel="cold/probe9") as sub:
        with Sender(daemon.ingest) as sender:
            for i in range(30):
                reference = -20 + 0.3 * i
                sender.send(channel="cold/probe9", y=0.5 + 1.01 * reference + 0.01 * ((-1) ** i),
                            x=[reference])
        daemon.wait_accepted(30)

        def predicted():
            with Sender(daemon.ingest) as sender:
                sender.send(channel="cold/probe9", x=[-18.0])
            return sub.receive(timeout_s=0.5)

        kind, publication = _wait_for(predicted)
    assert kind == "prediction"
    p = publication.prediction
    assert p.lower < p.mean < p.upper
    assert abs(p.mean - (0.5 + 1.01 * -18.0)) < 0.2
    assert daemon.control.ask("cold/probe9").info.accepted == 30  # predictions change nothing


def _wait_for(attempt, tries=40):
    for _ in range(tries):
        result = attempt()
        if result:
            return result
    raise AssertionError("no result")


def test_control_timeout_and_bad_kinds(tmp_path):
    with pytest.raises(DaemonTimeout):
        Control(f"ipc://{tmp_path}/nothing", timeout_s=0.2).stats()
    with pytest.raises(ValueError):
        Subscriber(f"ipc://{tmp_path}/nothing", kinds=("estimates",))


def test_load_jsonl_dataframe_and_plot(tmp_path):
    data = write_gaussian_csv(tmp_path / "chiller.csv", rows=300, shift_at=200, shift=2.0)
    out = tmp_path / "chiller.jsonl"
    run_cli("replay", "--input", data, "--model", "gaussian", "--seq", "seq", "--time", "t",
            "--output", out, check=True)
    records = load_jsonl(out)
    assert records and all(isinstance(r["seq"], int) for r in records)
    history = channel_history(records, "chiller")
    assert history["alarms"] and history["estimates"]
    alarms_only = load_jsonl(out, kinds=["alarm"])
    assert {r["kind"] for r in alarms_only} == {"alarm"}
    pandas = pytest.importorskip("pandas")
    frame = to_dataframe(records)
    assert isinstance(frame, pandas.DataFrame) and len(frame) == len(records)
    assert set(frame["kind"]) >= {"estimate", "alarm"}

    from bayline.plot import plot_channel, read_observations

    svg = tmp_path / "chiller.svg"
    observations = read_observations(str(data), "chiller")
    assert len(observations) == 300 and observations[0][0] == 1
    plot_channel(records, "chiller", str(svg), units="ms", observations=observations)
    ids = {el.get("id") for el in ET.parse(svg).getroot().iter() if el.get("id")}
    assert {"observations", "alarm-raised"} <= ids
    with pytest.raises(ValueError):
        load_jsonl(['{"estimate": {"seq": "1"}}', "not json"])
