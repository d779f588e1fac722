"""Bounded resources over the real daemon: ZeroMQ's maximum message size and the queued bytes keep
memory under a ceiling during a flood, control requests overtake full worker queues, list globs
cost O(pattern x name) and are limited in size, one frame's input errors are summarised beyond a
bound, and names and reply text stay safe (README "Bounds")."""
import math
import re
import threading
import time

import zmq
import zmq.utils.monitor
from bayline.v1 import control_pb2

from conftest import TIME_SCALE, TIMEOUT_S, frame, obs, receive_until

# A rule whose observations cost a worker a lot (eight change-point detectors each), so the worker
# queues stay full under a flood.
SLOW_RULE = ('rules { name: "slow" match: "slow/**" spec { model: "gaussian" estimators: ["ls"] '
             'publish { every_n: 1000 } '
             + 'detectors { kind: "bocpd" hazard: 0.01 recent: 5 threshold: 0.9 } ' * 8 + '} }\n'
             'rules { name: "default" match: "**" spec { model: "auto" } }\n')


def start_with(daemons, tmp_path, config, extra_args=()):
    path = tmp_path / "bounds.conf"
    if "rules {" not in config:  # a file that sets no rules says it means the default rule
        config = "use_default_rules: true\n" + config
    path.write_text(config)
    return daemons(extra_args=["--config", str(path), *extra_args]).start()


def vm_kib(pid, field):
    with open(f"/proc/{pid}/status") as status:
        for line in status:
            if line.startswith(field + ":"):
                return int(line.split()[1])
    raise AssertionError(f"no {field} in /proc/{pid}/status")


def flood(push, payload, count, stop):
    """Sends `payload` up to `count` times; ends early when a send blocks for 2 s (the daemon
    stopped reading: backpressure) or `stop` is set. Returns how many were sent."""
    push.setsockopt(zmq.SNDTIMEO, 2000)
    sent = 0
    while sent < count and not stop.is_set():
        try:
            push.send(payload, copy=False)
        except zmq.Again:
            break
        sent += 1
    return sent


# --- 1. message size and queued bytes ------------------------------------------------------------

def test_a_message_over_the_ingest_limit_drops_the_connection_and_nothing_else(daemons, tmp_path):
    d = start_with(daemons, tmp_path, 'limits { max_frame_bytes: 32768 '
                   'max_ingest_message_bytes: 65536 }\n')
    big = d.pusher()
    monitor = big.get_monitor_socket(zmq.EVENT_CONNECTED | zmq.EVENT_DISCONNECTED)
    big.send(b"\x00" * 1_000_000)  # over max_ingest_message_bytes: ZeroMQ refuses it
    events = []
    deadline = time.monotonic() + TIMEOUT_S
    while zmq.EVENT_DISCONNECTED not in events:
        assert monitor.poll(int(max(0.0, deadline - time.monotonic()) * 1000)), events
        events.append(zmq.utils.monitor.recv_monitor_message(monitor)["event"])
    big.disable_monitor()
    big.close(linger=0)

    push = d.pusher()
    push.send(b"\x00" * 50_000)  # over max_frame_bytes only: refused with an InputError
    push.send(frame(obs("site/probe1", y=1.0, seq=1)))
    st = d.wait_stats(lambda st: st.observations_accepted == 1
                      and st.rejected_by_reason["oversized_frame"] == 1, "both frames handled")
    assert st.frames_received == 2  # the 1 MB message never reached the daemon's ingest
    assert d.ask("site/probe1").info.name == "site/probe1"


def test_memory_stays_bounded_under_a_flood_of_allowed_frames(daemons, tmp_path):
    # Ceiling here (README "Bounds"): ZeroMQ 32 MiB for the one producer + 16 MiB queued for the
    # workers + per worker one pending and 8 kept batches of <= 2 MiB, + the process itself.
    d = start_with(daemons, tmp_path, 'limits { max_ingest_message_bytes: 1048576 '
                   'ingest_queue_bytes: 33554432 max_queued_bytes: 16777216 }\n' + SLOW_RULE)
    baseline_kib = vm_kib(d.proc.pid, "VmRSS")
    # 1 MB frames of 3,700 slow observations each; 400 of them is 400 MB, far more than the
    # workers get through during the test, so without bounds the daemon would hold most of it.
    name = "slow/" + "n" * 240
    payload = frame(batch=[obs(f"{name}{i % 8}", y=float(i % 5)) for i in range(3700)])
    assert 0.9e6 < len(payload) < 1048576
    push = d.pusher()
    push.setsockopt(zmq.SNDHWM, 2)
    sent = flood(push, payload, 400, threading.Event())
    assert sent >= 40, f"the daemon took only {sent} frames"

    peak_mib = vm_kib(d.proc.pid, "VmHWM") / 1024
    assert peak_mib < baseline_kib / 1024 + 160, f"peak RSS {peak_mib:.0f} MiB after {sent} frames"
    st = d.stats()  # still serving: a control request is answered under the backlog
    assert st.frames_received > 0
    push.close(linger=0)
    d.proc.kill()


# --- 4. control behind ingest --------------------------------------------------------------------

def test_control_requests_are_answered_promptly_while_the_worker_queues_are_full(
        daemons, tmp_path):
    d = start_with(daemons, tmp_path, SLOW_RULE)
    payload = frame(batch=[obs(f"slow/c{i % 4}", y=float(i % 5)) for i in range(512)])
    stop = threading.Event()
    push = d.pusher()
    producer = threading.Thread(target=flood, args=(push, payload, 10**9, stop))
    producer.start()
    try:
        d.wait_stats(lambda st: st.observations_received >= 64 * 512, "a backlog")
        for op in ["stats", "list", "snapshot"] * 3:
            s = d.ctx.socket(zmq.REQ)
            s.setsockopt(zmq.LINGER, 0)
            # A few batches' work, not a whole queue's.
            s.setsockopt(zmq.RCVTIMEO, int(5000 * TIME_SCALE))
            s.connect(d.control)
            try:
                req = control_pb2.Request()
                if op == "list":
                    req.list.glob = "slow/**"
                else:
                    getattr(req, op).SetInParent()
                s.send(req.SerializeToString())
                try:
                    data = s.recv()
                except zmq.Again:
                    raise AssertionError(f"no reply to {op} within {5 * TIME_SCALE} s under load")
                reply = control_pb2.Reply()
                reply.ParseFromString(data)
                assert reply.ok, reply.error
            finally:
                s.close()
        assert sum(d.stats().worker_queue_depth) > 0  # the load was still there
    finally:
        stop.set()
        producer.join()
        push.close(linger=0)
        d.proc.kill()


def control_socket(d):
    s = d.ctx.socket(zmq.REQ)
    s.setsockopt(zmq.LINGER, 0)
    s.connect(d.control)
    return s


def send_request(s, op):
    req = control_pb2.Request()
    getattr(req, op).SetInParent()
    s.send(req.SerializeToString())


def read_reply(s):
    assert s.poll(int(TIMEOUT_S * 1000)), "no reply"
    reply = control_pb2.Reply()
    reply.ParseFromString(s.recv())
    assert reply.ok, reply.error
    return reply


def test_stats_is_answered_while_a_snapshot_of_many_channels_is_written(daemons, tmp_path):
    # The supervisor only makes the cut; serializing, writing and fsyncing run on the snapshot
    # writer thread, and stats reads counters the workers copy out, so stats replies keep coming
    # while the `snapshot` request waits for its file. (Before: the snapshot blocked the control
    # socket, and every stats reply came after the snapshot reply.)
    d = start_with(daemons, tmp_path, 'snapshot_every_s: 86400 limits { max_channels: 200000 }\n'
                   'rules { name: "many" match: "**" spec { model: "gaussian" estimators: ["ls"] '
                   'publish { every_n: 1000000 } } }\n')
    channels = 100_000
    push = d.pusher()
    for start in range(0, channels, 5000):
        push.send(frame(batch=[obs(f"hall{i % 50}/probe{i}", y=1.0, seq=1)
                               for i in range(start, start + 5000)]))
    d.wait_stats(lambda st: st.channels == channels, "the channels")

    snapshot = control_socket(d)
    stats = control_socket(d)
    try:
        send_request(snapshot, "snapshot")
        answered_before = 0
        while not snapshot.poll(0):
            send_request(stats, "stats")
            assert read_reply(stats).stats.channels == channels
            if not snapshot.poll(0):
                answered_before += 1
        info = read_reply(snapshot).snapshot
        assert info.channels == channels
        assert answered_before > 0, "no stats reply while the snapshot was being written"
        # Two snapshot requests at once: the second waits for a snapshot cut after it was asked.
        second = control_socket(d)
        try:
            send_request(snapshot, "snapshot")
            send_request(second, "snapshot")
            first_path = read_reply(snapshot).snapshot.path
            second_path = read_reply(second).snapshot.path
            assert first_path != second_path and second_path.endswith(".bls")
        finally:
            second.close()
        assert d.stats().snapshots_written == 3
    finally:
        snapshot.close()
        stats.close()
        push.close(linger=0)
    assert d.stop() == 0
    d.start()
    assert d.stats().channels == channels


# --- 2. glob cost and size -----------------------------------------------------------------------

def test_a_pathological_list_glob_is_answered(daemons, tmp_path):
    d = start_with(daemons, tmp_path, 'limits { max_channel_name_bytes: 65536 }\n')
    names = [c * 60000 for c in "abcd"]  # long names without '/'
    push = d.pusher()
    for name in names:
        push.send(frame(obs(name, y=1.0, seq=1)))
    d.wait_stats(lambda st: st.channels == 4, "4 channels")
    # 1,365 "**/" tokens: the old matcher rescanned the name for every position and token
    # (1365 * 60000^2 / 2 steps per channel, hours); the matcher now makes one pass per token.
    stars = "**/" * 1365
    reply = d.request(list=stars + "Z")
    assert reply.ok, reply.error
    assert len(reply.channels.channels) == 0
    reply = d.request(list=stars + "*")
    assert reply.ok, reply.error
    assert sorted(c.name for c in reply.channels.channels) == names


def test_a_list_glob_over_the_limit_gets_a_clear_error(daemons, tmp_path):
    d = start_with(daemons, tmp_path, "")
    reply = d.request(list="*" * 4097)
    assert not reply.ok
    assert "4097 bytes exceeds the limit of 4096" in reply.error
    assert d.request(list="*" * 4096).ok


def test_a_backslash_makes_glob_metacharacters_literal(daemons, tmp_path):
    d = start_with(daemons, tmp_path, "")
    push = d.pusher()
    for name in ["odd*name?", "oddXnameY", "odd\\name"]:
        push.send(frame(obs(name, y=1.0, seq=1)))
    d.wait_stats(lambda st: st.channels == 3, "3 channels")
    listed = lambda glob: sorted(c.name for c in d.request(list=glob).channels.channels)
    assert listed("odd*name?") == ["odd*name?", "oddXnameY"]
    assert listed("odd\\*name\\?") == ["odd*name?"]
    assert listed("odd\\\\name") == ["odd\\name"]


# --- 3. amplification ----------------------------------------------------------------------------

def test_one_frame_of_bad_observations_publishes_a_bounded_number_of_input_errors(
        daemons, tmp_path):
    d = start_with(daemons, tmp_path, "")
    push, sub = d.pusher(), d.subscriber(b"input_error/")
    d.sync_subscriber(sub, push)
    count = 5000
    push.send(frame(batch=[obs(f"amp/{i % 50}", y=math.nan, seq=i + 1) for i in range(count)]))

    individual, summaries = [], []

    def accounted(topic, p):
        e = p.input_error
        if e.reason == "non_finite":
            individual.append(e)
        elif e.reason == "summarized":
            summaries.append(e)
        held = sum(int(n) for n in re.findall(r"non_finite=(\d+)",
                                               " ".join(s.message for s in summaries)))
        return len(individual) + held >= count

    receive_until(sub, accounted)
    workers = 2  # the harness starts two; a frame's errors are bounded per worker
    assert len(individual) <= 16 * workers
    assert 1 <= len(summaries) <= workers
    assert all(s.channel == "" for s in summaries)
    st = d.stats()
    assert st.rejected_by_reason["non_finite"] == count  # every error is still counted


# --- 5. names and text ---------------------------------------------------------------------------

def test_bidirectional_and_c1_control_characters_are_invalid_in_channel_names(daemons, tmp_path):
    d = start_with(daemons, tmp_path, "")
    push = d.pusher()
    for name in ["evil\u202egnp.exe", "iso\u2066late", "c1\u0085here", "fine\u00a0name"]:
        push.send(frame(obs(name, y=1.0, seq=1)))
    st = d.wait_handled(4)
    assert st.rejected_by_reason["invalid_channel_name"] == 3
    assert [c.name for c in d.request(list="").channels.channels] == ["fine\u00a0name"]


def test_reply_errors_are_valid_utf8_when_a_config_holds_other_bytes(daemons, tmp_path):
    d = start_with(daemons, tmp_path, 'rules { name: "all" match: "**" spec { model: "auto" } }\n')
    (tmp_path / "bounds.conf").write_bytes(
        b'rules { name: "all" match: "**" spec { model: "caf\xe9\xff" } }\n')
    reply = d.request(reload=True)  # parses: every string field is valid UTF-8
    assert not reply.ok
    assert "caf\ufffd\ufffd" in reply.error


def test_the_ready_line_is_printed_at_log_level_warn(daemons, tmp_path):
    d = start_with(daemons, tmp_path, 'log_level: "warn"\n')  # start() waits for "ready:"
    assert d.stats().uptime_s >= 0
    d2 = daemons(name="flag", extra_args=["--log-level", "error"]).start()
    assert d2.stats().uptime_s >= 0
