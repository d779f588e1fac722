"""State survives a restart exactly; a damaged newest snapshot falls back to the previous one."""
import glob
import os
import signal

import numpy as np
import pytest

from conftest import frame, obs, receive_until

T0 = 1_800_000_000_000_000_000


def stream():
    """Three channels of an invented cold-storage site, 300 observations each, interleaved."""
    rng = np.random.default_rng(2026)
    out = []
    for i in range(300):
        t = T0 + i * 10**9
        out.append(obs("coldstore/freezer1/probe1", y=float(rng.normal(-18, 0.4)), seq=i + 1, time_ns=t))
        ref = float(rng.uniform(-25, 5))
        out.append(obs("coldstore/freezer1/probe2", y=float(0.2 + 0.98 * ref + rng.normal(0, 0.1)),
                       x=[ref], seq=i + 1, time_ns=t))
        out.append(obs("packing/line1/weigher", y=float(rng.normal(500, 2)), seq=i + 1, time_ns=t))
    return out


CHANNELS = ["coldstore/freezer1/probe1", "coldstore/freezer1/probe2", "packing/line1/weigher"]


def send(d, observations, batch=30):
    push = d.pusher()
    for start in range(0, len(observations), batch):
        push.send(frame(batch=observations[start:start + batch]))
    push.close()


def run_and_collect(d, observations, already_accepted=0):
    """Feeds observations; returns the estimates published for them (by channel, estimator, seq)
    and the channels' reports."""
    sub = d.subscriber(b"estimate/")
    d.sync_subscriber(sub, d.pusher())
    send(d, observations)
    last = {(o.channel) : o.seq for o in observations}
    pending = set(last)
    estimates = {}

    def done(topic, p):
        if p.HasField("estimate"):
            e = p.estimate
            estimates[(e.channel, e.estimator, e.seq)] = p.SerializeToString()
            if e.seq == last[e.channel] and e.estimator == "map":
                pending.discard(e.channel)
        return not pending

    receive_until(sub, done)
    d.wait_stats(lambda st: st.observations_accepted >= len(observations), "all accepted")
    return estimates, {c: d.ask(c) for c in CHANNELS}


@pytest.mark.parametrize("transport", ["tcp", "ipc"])
def test_restart_continues_exactly_as_an_uninterrupted_run(daemons, tmp_path, transport):
    data = stream()
    first, second = data[:450], data[450:]

    a = daemons(name="a", transport=transport).start()
    run_and_collect(a, first)
    assert a.stop(signal.SIGTERM) == 0
    assert a.wait_log(r"snapshot .*: 3 channels")
    a.start()
    assert a.wait_log(r"restored 3 channels from ")
    resumed_estimates, resumed_reports = run_and_collect(a, second)

    b = daemons(name="b", transport=transport).start()
    whole_estimates, whole_reports = run_and_collect(b, data)

    for c in CHANNELS:
        assert resumed_reports[c] == whole_reports[c], c
    assert resumed_estimates, "no estimates after the restart"
    for key, publication in resumed_estimates.items():
        assert whole_estimates[key] == publication, key


@pytest.mark.parametrize("damage", ["flip", "truncate"])
def test_damaged_newest_snapshot_falls_back_to_the_previous(daemons, damage):
    data = stream()
    d = daemons().start()
    send(d, data[:150])
    d.wait_stats(lambda st: st.observations_accepted == 150, "first part")
    reply = d.request(snapshot=True)
    assert reply.ok and reply.snapshot.channels == 3
    older = reply.snapshot.path
    send(d, data[150:])
    d.wait_stats(lambda st: st.observations_accepted == 900, "second part")
    assert d.stop() == 0
    files = sorted(glob.glob(os.path.join(d.state_dir, "snapshot-*.bls")))
    assert len(files) == 2 and files[0] == older
    newest = files[1]
    content = bytearray(open(newest, "rb").read())
    if damage == "flip":
        content[len(content) // 2] ^= 0x10
    else:
        content = content[: len(content) - 7]
    open(newest, "wb").write(bytes(content))

    d.start()
    d.wait_log(r"snapshot not used: .*" + os.path.basename(newest))
    d.wait_log(r"restored 3 channels from .*" + os.path.basename(older))
    for c in CHANNELS:
        assert d.ask(c).info.accepted == 50
