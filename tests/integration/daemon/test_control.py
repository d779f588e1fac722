"""Every control request against the real daemon: list, ask, reset, stats, snapshot, reload, and
requests it must refuse without changing anything."""
import os

from bayline.v1 import control_pb2
from conftest import frame, obs

CHANNELS = ["coldstore/freezer1/probe1", "coldstore/freezer1/probe2", "coldstore/freezer2/probe1",
            "packing/line1/weigher"]


def feed(d, per_channel=20):
    push = d.pusher()
    for i in range(per_channel):
        for c in CHANNELS:
            push.send(frame(obs(c, y=1.0 + 0.1 * (i % 5), seq=i + 1)))
    d.wait_handled(per_channel * len(CHANNELS))
    return push


def test_list_with_globs(daemons):
    d = daemons().start()
    feed(d)
    def names(glob):
        reply = d.request(list=glob)
        assert reply.ok, reply.error
        return [c.name for c in reply.channels.channels]
    assert names("") == sorted(CHANNELS)
    assert names("coldstore/*/probe1") == ["coldstore/freezer1/probe1", "coldstore/freezer2/probe1"]
    assert names("coldstore/**") == CHANNELS[:3]
    assert names("nothing/**") == []
    info = d.request(list="packing/line1/weigher").channels.channels[0]
    assert info.model == "gaussian" and info.accepted == 20 and info.last_seq == 20


def test_ask_reports_estimates_and_detectors_and_refuses_unknown_channels(daemons):
    d = daemons().start()
    feed(d)
    report = d.ask("coldstore/freezer1/probe2")
    assert report.info.name == "coldstore/freezer1/probe2"
    assert report.info.accepted == 20
    assert {e.estimator for e in report.estimates} >= {"ml", "map"}
    assert report.detectors and report.detectors[0].detector == "cusum"
    reply = d.request(ask="coldstore/freezer9/probe1")
    assert not reply.ok and "unknown channel" in reply.error


def test_reset_forgets_one_channel_only(daemons):
    d = daemons().start()
    push = feed(d)
    kept = d.ask("coldstore/freezer1/probe1")
    reply = d.request(reset="coldstore/freezer2/probe1")
    assert reply.ok, reply.error
    assert not d.request(ask="coldstore/freezer2/probe1").ok  # forgotten until it is seen again
    assert d.ask("coldstore/freezer1/probe1") == kept
    push.send(frame(obs("coldstore/freezer2/probe1", y=3.0, seq=21)))
    d.wait_stats(lambda st: st.observations_accepted == 81, "the reset channel's next observation")
    assert d.ask("coldstore/freezer2/probe1").info.accepted == 1
    assert not d.request(reset="no/such/channel").ok


def test_stats_counts_frames_observations_channels_and_workers(daemons):
    d = daemons().start()
    push = feed(d, per_channel=10)
    push.send(frame(obs(CHANNELS[0], y=1.0, seq=10)))  # a duplicate: dropped and counted
    push.send(frame(batch=[obs(CHANNELS[1], y=2.0, seq=12), obs(CHANNELS[1], y=2.0, seq=11)]))
    st = d.wait_stats(lambda st: st.seq_duplicates == 1 and st.observations_accepted == 42,
                      "duplicate and reordered observations")
    assert st.frames_received == 42
    assert st.observations_received == 43
    assert st.channels == 4
    assert st.seq_gaps == 1 and st.seq_reordered == 1
    assert len(st.worker_queue_depth) == 2
    assert st.publications >= 42 * 2
    assert st.uptime_s > 0


def test_snapshot_on_request_writes_a_file_in_the_state_dir(daemons):
    d = daemons().start()
    feed(d)
    reply = d.request(snapshot=True)
    assert reply.ok, reply.error
    assert os.path.dirname(reply.snapshot.path) == d.state_dir
    assert os.path.getsize(reply.snapshot.path) == reply.snapshot.bytes
    assert reply.snapshot.channels == 4
    assert d.stats().snapshots_written == 1


def test_reload_without_config_file_changes_nothing(daemons):
    d = daemons().start()
    feed(d)
    before = d.ask(CHANNELS[0])
    reply = d.request(reload=True)
    assert reply.ok and "nothing to reload" in reply.message
    assert d.ask(CHANNELS[0]) == before


def test_malformed_and_empty_requests_get_error_replies(daemons):
    d = daemons().start()
    reply = d.request_raw(b"\xff\xfe not a request")
    assert not reply.ok and "malformed request" in reply.error
    reply = d.request_raw(control_pb2.Request().SerializeToString())
    assert not reply.ok and "empty request" in reply.error
    assert d.stats().frames_received == 0  # still answering


def test_periodic_snapshots_follow_snapshot_every_s(daemons, tmp_path):
    config = tmp_path / "fast.conf"
    config.write_text("snapshot_every_s: 0.2\nuse_default_rules: true\n")
    d = daemons(extra_args=["--config", str(config)]).start()
    feed(d, per_channel=2)
    d.wait_stats(lambda st: st.snapshots_written >= 2, "two periodic snapshots")
    assert d.stop() == 0  # one more at exit; then nothing writes while we look
    files = sorted(os.listdir(d.state_dir))
    assert len(files) == 2 and all(f.endswith(".bls") for f in files), files  # older ones pruned
