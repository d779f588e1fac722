"""Every kind of bad input gets an InputError publication and a counter, changes no state, and the
daemon keeps running."""
import math

import signal

import pytest

from conftest import frame, obs, receive_until

CONFIG = """
limits { max_channel_name_bytes: 64 max_frame_bytes: 4096 }
rules { name: "probes" match: "coldstore/**" spec { model: "linear" regressors: "reference" } }
rules { name: "counts" match: "packing/*/rejects" spec { model: "poisson" } }
"""

CASES = [
    # (name, raw frame bytes or observation, expected reason)
    ("malformed frame", b"\x0a\xff\xff", "malformed_frame"),
    ("empty frame", b"", "malformed_frame"),
    ("oversized frame", b"\x00" * 5000, "oversized_frame"),
    ("NaN y", obs("coldstore/f1/probe1", y=math.nan, x=[1.0], seq=31), "non_finite"),
    ("infinite regressor", obs("coldstore/f1/probe1", y=1.0, x=[math.inf], seq=31), "non_finite"),
    ("wrong regressor count", obs("coldstore/f1/probe1", y=1.0, x=[1.0, 2.0], seq=31),
     "wrong_regressor_count"),
    ("negative count", obs("packing/l1/rejects", y=-2.0, seq=31), "out_of_domain"),
    ("fractional count", obs("packing/l1/rejects", y=1.5, seq=31), "out_of_domain"),
    ("unknown channel", obs("elsewhere/x", y=1.0, seq=1), "no_matching_rule"),
    ("over-long channel name", obs("coldstore/" + "p" * 80, y=1.0, x=[1.0], seq=1),
     "channel_name_too_long"),
]


@pytest.fixture
def running(daemons, tmp_path):
    config = tmp_path / "site.conf"
    config.write_text(CONFIG)
    d = daemons(extra_args=["--config", str(config)]).start()
    push, sub = d.pusher(), d.subscriber(b"input_error/")
    synced = d.sync_subscriber(sub, push)
    for i in range(30):
        push.send(frame(obs("coldstore/f1/probe1", y=0.1 + 1.01 * i, x=[float(i)], seq=i + 1)))
        push.send(frame(obs("packing/l1/rejects", y=float(i % 4), seq=i + 1)))
    d.wait_stats(lambda st: st.observations_accepted == 60, "the good observations")
    return d, push, sub, synced


@pytest.mark.parametrize("name,bad,reason", CASES, ids=[c[0] for c in CASES])
def test_bad_input_is_refused_counted_and_changes_nothing(running, name, bad, reason):
    d, push, sub, synced = running
    before_stats = d.stats()
    before = {c: d.ask(c) for c in ("coldstore/f1/probe1", "packing/l1/rejects")}
    push.send(bad if isinstance(bad, bytes) else frame(bad))
    got = receive_until(sub, lambda t, p: p.input_error.reason == reason)
    error = got[-1][1].input_error
    assert error.message, "an input error explains itself"
    assert got[-1][0] == "input_error/" + error.channel
    if not isinstance(bad, bytes) and reason != "channel_name_too_long":
        assert error.channel == bad.channel
    after_stats = d.wait_stats(
        lambda st: st.rejected_by_reason[reason] == before_stats.rejected_by_reason[reason] + 1,
        f"the {reason} counter")
    assert after_stats.observations_accepted == before_stats.observations_accepted
    assert after_stats.channels == before_stats.channels
    for c, report in before.items():
        assert d.ask(c) == report, f"{name} changed {c}"
    # Still running and still absorbing good input.
    push.send(frame(obs("coldstore/f1/probe1", y=31.0, x=[30.0], seq=31)))
    d.wait_stats(lambda st: st.observations_accepted == 61, "a good observation after bad input")


def test_a_flood_of_bad_frames_is_rate_limited_in_the_log(running):
    d, push, sub, synced = running
    start = d.log_size()
    for _ in range(300):
        push.send(b"\xff\xff")
    d.wait_stats(lambda st: st.rejected_by_reason["malformed_frame"] >= 300 + synced, "300 rejections")
    assert d.stop(signal.SIGINT) == 0  # the pending "suppressed" summaries are logged at exit
    lines = d.lines[start:]
    assert sum("malformed_frame" in l and "suppressed" not in l for l in lines) < 50
    assert any("suppressed" in l for l in lines)
