"""Accepted values leave a restorable state: channels fed extreme but finite values (y or
regressors near 1e154, weights of 1e300 and 1e-300, an exact line then a far outlier) under the
default rule and under rules enabling every model family, estimator and detector come back after
SIGTERM and a restart exactly as they were, beside normal channels; and a channel whose saved
state cannot be restored is set aside alone, logged, and counted by stats."""
import glob
import os
import pathlib
import signal
import struct
import zlib

from bayline.v1 import snapshot_pb2
from conftest import frame, obs

T0 = 1_800_000_000_000_000_000

# tests/data/every_family.conf: one rule per model family and estimator variant.
RULES = (pathlib.Path(os.environ["BAYLINE_SOURCE_DIR"]) / "tests" / "data" /
         "every_family.conf").read_text()

FAMILIES = ["auto", "auto_x", "linear", "robust", "extended", "drift", "gaussian", "forget",
            "lognormal", "poisson", "binomial", "exponential", "gamma", "logistic",
            "poisson_regression"]
WITH_X = {"auto_x", "linear", "robust", "extended", "drift", "logistic", "poisson_regression"}


def plain(n):
    """(y, x, extra) rows valid for every family: counts 1..7, regressor 1..7."""
    return [(float(1 + (i * 3) % 7), float(1 + i % 7), {}) for i in range(n)]


def cases():
    heavy, light = {"weight": 1e300}, {"weight": 1e-300}
    out = {
        "huge_y": [(1e154, 1.0, {}), (2.0, 1.0, {}), (1e154, 2.0, {}), (1e154, 3.0, {})],
        "huge_x": [(2.0, 1e154, {}), (3.0, 2.0, {}), (1e154, 1e154, {}), (4.0, -1e154, {})],
        "near_max": [(1e300, 1.0, {}), (1.7e308, 2.0, {}), (1.0, 1e300, {})],
        "heavy_weight": [(2.0, 1.0, heavy), (3.0, 2.0, heavy), (5.0, 3.0, heavy)],
        "light_weight": [(2.0, 1.0, light), (3.0, 2.0, light), (5.0, 3.0, light)],
        "weights_mixed": [(2.0, 1.0, heavy), (3.0, 2.0, light), (4.0, 3.0, heavy), (9.0, 4.0, light)],
        "huge_y_heavy": [(1e154, 1.0, heavy), (2.0, 1e154, heavy), (1e154, 1e154, light)],
        "tiny_y": [(1e-300, 1.0, {}), (2e-300, 2.0, {}), (5e-324, 3.0, {})],
        "huge_trials": [(5e299, 1.0, {"trials": 1e300}), (1e154, 2.0, {"trials": 1e154})],
        "huge_exposure": [(3.0, 1.0, {"exposure": 1e300}), (1e154, 3.0, {"exposure": 1e-300})],
    }
    out = {name: plain(12) + rows + plain(6) for name, rows in out.items()}
    line = [(2.0 + 3.0 * (1 + i % 5), float(1 + i % 5), {}) for i in range(12)]
    tail = [(1e150, 3.0, {}), (5.0, 1.0, {}), (1e154, 2.0, {})]
    out["exact_line_then_outlier"] = line + tail
    out["constant_then_outlier"] = [(5.0, 1.0, {})] * 12 + tail
    out["normal"] = plain(40)
    return out


def observations():
    out = []
    for family in FAMILIES:
        for name, rows in cases().items():
            channel = f"{family}/{name}"
            for i, (y, x, extra) in enumerate(rows):
                xs = [x] if family in WITH_X else []
                out.append(obs(channel, y=y, x=xs, seq=i + 1, time_ns=T0 + i * 10**9, **extra))
    return out


def ask_all(d, channels):
    """ask reply per channel: the serialized report, or None for a channel the daemon lacks."""
    out = {}
    for c in channels:
        reply = d.request(ask=c)
        out[c] = reply.channel.SerializeToString() if reply.ok else None
    return out


def start_and_feed(daemons, tmp_path):
    config = tmp_path / "hostile.conf"
    config.write_text(RULES)
    d = daemons(extra_args=["--config", str(config)]).start()
    data = observations()
    push = d.pusher()
    for start in range(0, len(data), 50):
        push.send(frame(batch=data[start:start + 50]))
    push.close()
    d.wait_handled(len(data))
    return d, sorted({o.channel for o in data})


def test_every_accepted_state_is_restored_exactly(daemons, tmp_path):
    d, channels = start_and_feed(daemons, tmp_path)
    before = ask_all(d, channels)
    for family in FAMILIES:
        assert before[f"{family}/normal"] is not None, family
    assert d.stop(signal.SIGTERM) == 0
    d.wait_log(r"snapshot .*: \d+ channels")

    d.start()  # a fresh log
    d.wait_log(r"restored \d+ channels from ")
    assert not [l for l in d.lines if "not restored" in l or "snapshot not used" in l]
    assert d.stats().channels_not_restored == 0
    after = ask_all(d, channels)
    for c in channels:
        # A channel every observation of which was refused at input does not exist before or after.
        assert after[c] == before[c], c


def rewrite_snapshot(path, edit):
    """Applies edit(Snapshot) to a snapshot file and writes it back with valid checksums
    (layout of daemon/server/snapshot_file.h)."""
    raw = open(path, "rb").read()
    header, payload = raw[:40], raw[40:]
    snapshot = snapshot_pb2.Snapshot()
    snapshot.ParseFromString(payload)
    edit(snapshot)
    payload = snapshot.SerializeToString()
    head = header[:12] + struct.pack("<IQ", zlib.crc32(payload), len(payload)) + header[24:32]
    head += struct.pack("<II", zlib.crc32(head), 0)
    open(path, "wb").write(head + payload)


def test_unrestorable_channel_is_set_aside_alone(daemons, tmp_path):
    d, channels = start_and_feed(daemons, tmp_path)
    before = ask_all(d, channels)
    assert d.stop(signal.SIGTERM) == 0
    d.wait_log(r"snapshot .*: \d+ channels")
    victim = "gaussian/normal"

    def poison(snapshot):
        for c in snapshot.channels:
            if c.name == victim:
                values = c.components[0].values
                for i in range(len(values)):
                    values[i] = float("-inf")

    newest = sorted(glob.glob(os.path.join(d.state_dir, "snapshot-*.bls")))[-1]
    rewrite_snapshot(newest, poison)

    d.start()  # a fresh log
    line = d.wait_log(r"restored \d+ channels from ")
    assert os.path.basename(newest) in line
    set_aside = [l for l in d.lines if "not restored" in l]
    assert len(set_aside) == 1 and f'"{victim}"' in set_aside[0], set_aside
    assert d.stats().channels_not_restored == 1
    after = ask_all(d, channels)
    assert after[victim] is None
    for c in channels:
        if c != victim:
            assert after[c] == before[c], c
