"""Harness for the baylined integration tests: starts the real daemon process, talks to it over
its real ZeroMQ sockets (tcp loopback with ports the daemon picks, or ipc in a temp dir), and waits
on control replies, stats counters, publications or log lines, each with a bounded timeout."""
import os
import re
import signal
import subprocess
import threading
import time

import pytest
import zmq

from bayline.v1 import control_pb2, observation_pb2, publication_pb2

BINARY_DIR = os.environ.get("BAYLINE_BINARY_DIR", "")
BAYLINED = os.path.join(BINARY_DIR, "daemon", "server", "baylined")
# Slower builds (make check's Debug + sanitizers runs several times slower) stretch every bound.
TIME_SCALE = float(os.environ.get("BAYLINE_TEST_TIME_SCALE", "1"))
TIMEOUT_S = 20.0 * TIME_SCALE  # upper bound of every wait; a healthy run needs far less


def frame(observation=None, batch=None):
    """Serialized IngestFrame holding one Observation or a list of them."""
    f = observation_pb2.IngestFrame()
    if observation is not None:
        f.observation.CopyFrom(observation)
    if batch is not None:
        f.batch.observations.extend(batch)
    return f.SerializeToString()


def obs(channel, y=None, x=(), seq=0, time_ns=0, **optional):
    o = observation_pb2.Observation(channel=channel, seq=seq, time_ns=time_ns)
    if y is not None:
        o.y = y
    o.x.extend(x)
    for name, value in optional.items():
        setattr(o, name, value)
    return o


def fnv1a64(name):
    h = 0xCBF29CE484222325
    for b in name.encode():
        h ^= b
        h = (h * 0x100000001B3) & 0xFFFFFFFFFFFFFFFF
    return h


class Daemon:
    """One baylined process. `transport` is "tcp" (ports chosen by the daemon, read back from its
    "ready" log line) or "ipc" (sockets in the temp dir)."""

    def __init__(self, tmp_path, state_dir=None, transport="tcp", extra_args=(), name="d", workers=2):
        self.tmp_path = tmp_path
        self.workers = workers  # may be changed between restarts
        self.state_dir = state_dir or str(tmp_path / f"state-{name}")
        self.transport = transport
        self.extra_args = list(extra_args)
        self.name = name
        self.ctx = zmq.Context.instance()
        self.proc = None
        self.lines = []
        self.lines_cv = threading.Condition()

    def endpoint(self, role):
        if self.transport == "ipc":
            return f"ipc://{self.tmp_path}/{self.name}-{role}.sock"
        return "tcp://127.0.0.1:*"

    def start(self, expect_ready=True):
        args = [BAYLINED, "--state-dir", self.state_dir, "--workers", str(self.workers),
                "--publish-bind", self.endpoint("pub"), "--control-bind", self.endpoint("ctl")]
        if not any(a.startswith("--pull-bind") for a in self.extra_args):
            args += ["--pull-bind", self.endpoint("pull")]
        args += self.extra_args
        self.lines = []
        self.proc = subprocess.Popen(args, stderr=subprocess.PIPE, text=True,
                                     errors="backslashreplace")
        self.reader = threading.Thread(target=self._read_log, daemon=True)
        self.reader.start()
        if expect_ready:
            line = self.wait_log(r"\bready: ")
            fields = dict(kv.split("=", 1) for kv in line.split("ready: ", 1)[1].split())
            self.pull = fields["pull"].split(",")[0]
            self.publish = fields["publish"]
            self.control = fields["control"]
        return self

    def _read_log(self):
        for line in self.proc.stderr:
            with self.lines_cv:
                self.lines.append(line.rstrip("\n"))
                self.lines_cv.notify_all()

    def wait_log(self, pattern, start=0, timeout=TIMEOUT_S):
        """Waits for a log line (from index `start`) matching `pattern`; returns it."""
        regex = re.compile(pattern)
        deadline = time.monotonic() + timeout
        with self.lines_cv:
            while True:
                for line in self.lines[start:]:
                    if regex.search(line):
                        return line
                remaining = deadline - time.monotonic()
                if remaining <= 0 or not self.reader.is_alive():
                    raise AssertionError(f"no log line /{pattern}/; log:\n" + "\n".join(self.lines))
                self.lines_cv.wait(min(remaining, 0.5))

    def log_size(self):
        with self.lines_cv:
            return len(self.lines)

    # --- control API ---------------------------------------------------------------------------
    def request(self, **op):
        req = control_pb2.Request()
        (kind, value), = op.items()
        if kind in ("stats", "snapshot", "reload"):
            getattr(req, kind).SetInParent()
        elif kind == "list":
            req.list.glob = value
        else:
            getattr(req, kind).channel = value
        return self.request_raw(req.SerializeToString())

    def request_raw(self, data):
        """Sends `data` (bytes, or a list of message parts) on a plain REQ socket; the Reply."""
        s = self.ctx.socket(zmq.REQ)
        s.setsockopt(zmq.LINGER, 0)
        s.setsockopt(zmq.RCVTIMEO, int(TIMEOUT_S * 1000))
        s.connect(self.control)
        try:
            s.send_multipart(data if isinstance(data, list) else [data])
            reply = control_pb2.Reply()
            reply.ParseFromString(s.recv())
            return reply
        finally:
            s.close()

    def stats(self):
        reply = self.request(stats=True)
        assert reply.ok, reply.error
        return reply.stats

    def wait_stats(self, predicate, what):
        deadline = time.monotonic() + TIMEOUT_S
        while True:
            st = self.stats()
            if predicate(st):
                return st
            if time.monotonic() > deadline:
                raise AssertionError(f"timed out waiting for {what}; last stats: {st}")
            time.sleep(0.005)  # pacing of a bounded wait on the counters, not a synchronisation

    def wait_handled(self, count):
        """Waits until `count` observations were absorbed or refused (or dropped as duplicates)."""
        return self.wait_stats(
            lambda st: st.observations_accepted + sum(st.rejected_by_reason.values())
            + st.seq_duplicates >= count, f"{count} observations handled")

    def ask(self, channel):
        reply = self.request(ask=channel)
        assert reply.ok, reply.error
        return reply.channel

    # --- ingest and publications ---------------------------------------------------------------
    def pusher(self):
        s = self.ctx.socket(zmq.PUSH)
        s.setsockopt(zmq.LINGER, 2000)
        s.connect(self.pull)
        return s

    def subscriber(self, prefix=b""):
        s = self.ctx.socket(zmq.SUB)
        s.setsockopt(zmq.LINGER, 0)
        s.setsockopt(zmq.RCVHWM, 0)
        s.setsockopt(zmq.SUBSCRIBE, prefix)
        s.connect(self.publish)
        return s

    def sync_subscriber(self, sub, push):
        """Makes sure `sub` receives: sends undecodable frames until one's input_error arrives
        (each changes nothing but the malformed_frame counter). Returns how many were sent."""
        sent = 0
        deadline = time.monotonic() + TIMEOUT_S
        sub.setsockopt(zmq.SUBSCRIBE, b"input_error/")
        while time.monotonic() < deadline:
            push.send(b"\xff\xff\xff")
            sent += 1
            if sub.poll(100):
                while sub.poll(100):
                    topic, _ = sub.recv_multipart()
                    if topic == b"input_error/":
                        return sent
        raise AssertionError("subscriber never received a publication")

    def stop(self, sig=signal.SIGTERM):
        if self.proc is None:
            return None
        if self.proc.poll() is None:
            self.proc.send_signal(sig)
        code = self.proc.wait(timeout=TIMEOUT_S)
        self.proc = None
        return code


def receive_until(sub, done, timeout=TIMEOUT_S):
    """Receives publications until done(topic, Publication) is true; returns all received."""
    got = []
    deadline = time.monotonic() + timeout
    while True:
        remaining = deadline - time.monotonic()
        if remaining <= 0 or not sub.poll(int(remaining * 1000)):
            raise AssertionError(f"condition not met after {len(got)} publications")
        topic, data = sub.recv_multipart()
        p = publication_pb2.Publication()
        p.ParseFromString(data)
        got.append((topic.decode(), p))
        if done(topic.decode(), p):
            return got


def receive(sub, count, kinds=None, timeout=TIMEOUT_S):
    """Receives publications until `count` of the given kinds arrived; returns (topic, Publication)."""
    got = []
    deadline = time.monotonic() + timeout
    while len(got) < count:
        remaining = deadline - time.monotonic()
        if remaining <= 0 or not sub.poll(int(remaining * 1000)):
            raise AssertionError(f"received {len(got)} of {count} publications")
        topic, data = sub.recv_multipart()
        p = publication_pb2.Publication()
        p.ParseFromString(data)
        if kinds is None or p.WhichOneof("kind") in kinds:
            got.append((topic.decode(), p))
    return got


@pytest.fixture
def daemons(tmp_path):
    started = []

    def make(**kwargs):
        d = Daemon(tmp_path, **kwargs)
        started.append(d)
        return d

    yield make
    for d in started:
        if d.proc is not None and d.proc.poll() is None:
            d.proc.kill()
            d.proc.wait()
