"""Fixtures shared by the client integration tests.

Every daemon runs as the real baylined process with ipc:// endpoints inside the test's temporary
directory (no ports to pick), and is stopped with SIGTERM, which must end it with status 0.
Readiness and progress are waited for on control replies and received publications, each with a
bounded timeout; nothing sleeps to synchronise.
"""
import os
import random
import signal
import subprocess
import time

import pytest

from bayline import Control, DaemonTimeout, Sender, Subscriber

BUILD = os.environ.get("BAYLINE_BINARY_DIR", "")
SOURCE = os.environ.get("BAYLINE_SOURCE_DIR", "")
BAYLINE = os.path.join(BUILD, "clients", "cli", "bayline")
BAYLINED = os.path.join(BUILD, "daemon", "server", "baylined")
# Slower builds (make check's Debug + sanitizers runs several times slower) stretch every bound.
TIME_SCALE = float(os.environ.get("BAYLINE_TEST_TIME_SCALE", "1"))


def run_cli(*args, stdin=None, timeout=60, check=False):
    """Runs `bayline args...`; returns the CompletedProcess (text mode)."""
    result = subprocess.run([BAYLINE, *map(str, args)], input=stdin, capture_output=True,
                            text=True, timeout=timeout * TIME_SCALE)
    if check and result.returncode != 0:
        raise AssertionError(f"bayline {' '.join(map(str, args))} failed ({result.returncode}):\n"
                             f"{result.stderr}")
    return result


def wait_until(predicate, timeout_s=30.0, what="condition"):
    """Polls `predicate` (each call itself blocks on a socket or a process) until it is truthy."""
    timeout_s *= TIME_SCALE
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        value = predicate()
        if value:
            return value
    raise AssertionError(f"timed out after {timeout_s} s waiting for {what}")


class Daemon:
    """A running baylined with ipc endpoints under `directory`."""

    def __init__(self, directory, config_text, extra_args=()):
        self.directory = directory
        self.ingest = f"ipc://{directory}/ingest"
        self.publish = f"ipc://{directory}/publish"
        self.control_endpoint = f"ipc://{directory}/control"
        self.state_dir = os.path.join(directory, "state")
        self.config_path = os.path.join(directory, "daemon.conf")
        with open(self.config_path, "w") as f:
            f.write(config_text)
        self.log = open(os.path.join(directory, "baylined.log"), "w")
        self.process = subprocess.Popen(
            [BAYLINED, "--config", self.config_path, "--state-dir", self.state_dir,
             "--pull-bind", self.ingest, "--publish-bind", self.publish,
             "--control-bind", self.control_endpoint, *extra_args],
            stdout=self.log, stderr=subprocess.STDOUT)
        self.control = Control(self.control_endpoint, timeout_s=0.5)
        wait_until(self._answers, 20, "baylined to answer control requests")
        self.control.timeout_s = 10.0 * TIME_SCALE

    def _answers(self):
        if self.process.poll() is not None:
            raise AssertionError(f"baylined exited with {self.process.returncode}: {self.read_log()}")
        try:
            self.control.stats()
            return True
        except DaemonTimeout:
            return False

    def read_log(self):
        self.log.flush()
        with open(self.log.name) as f:
            return f.read()

    def wait_accepted(self, count, timeout_s=30.0):
        """Waits until the daemon has accepted `count` observations in total."""
        return wait_until(lambda: self.control.stats().observations_accepted >= count, timeout_s,
                          f"{count} accepted observations")

    def stop(self):
        if self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)
            try:
                self.process.wait(timeout=30 * TIME_SCALE)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait()
                raise AssertionError("baylined did not stop within 30 s of SIGTERM")
        self.log.close()
        assert self.process.returncode == 0, self.read_log()


@pytest.fixture
def start_daemon(tmp_path):
    """start_daemon(config_text, extra_args=()) -> Daemon; stopped (and checked) at teardown."""
    started = []

    def start(config_text, extra_args=()):
        d = Daemon(str(tmp_path), config_text, extra_args)
        started.append(d)
        return d

    yield start
    for d in started:
        d.stop()


def synchronise(daemon, subscriber, channel, timeout_s=20.0):
    """Sends observations of `channel` until `subscriber` receives a publication of it, so the
    subscription is known to be in place (ZeroMQ drops what a PUB sends before it arrives)."""
    with Sender(daemon.ingest) as sender:
        deadline = time.monotonic() + timeout_s * TIME_SCALE
        while time.monotonic() < deadline:
            sender.send(channel=channel, y=1.0)
            item = subscriber.receive(timeout_s=0.2)
            while item is not None:
                if getattr(item[1], item[0]).channel == channel:
                    return
                item = subscriber.receive(timeout_s=0.05)
    raise AssertionError("the subscription never became active")


# ----------------------------------------------------------------------------- data

T0 = 1764000000  # 2025-11-24, seconds since the epoch: observation times in the test data


def write_probe_csv(path, channels=("cold/probe1", "cold/probe2"), rows=150, gain=1.02,
                    offset=0.3, drift_at=None, drift_gain=1.25, seed=7):
    """A cold-storage probe calibration file: reading = offset + gain * reference + noise, with
    columns probe, seq, t, reference, reading. From row `drift_at` on, the first channel's gain
    becomes `drift_gain`."""
    rng = random.Random(seed)
    lines = ["probe,seq,t,reference,reading"]
    for i in range(1, rows + 1):
        for c, name in enumerate(channels):
            reference = -20.0 + 6.0 * rng.random()
            g = drift_gain if (drift_at and c == 0 and i >= drift_at) else gain
            reading = offset + g * reference + rng.gauss(0, 0.05)
            lines.append(f"{name},{i},{T0 + i}.{c:03d},{reference:.4f},{reading:.4f}")
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")
    return path


def write_gaussian_csv(path, rows=400, shift_at=250, mean=5.0, shift=1.5, seed=11):
    """One latency-like series (columns seq, t, y) whose mean rises by `shift` sd at `shift_at`."""
    rng = random.Random(seed)
    lines = ["seq,t,y"]
    for i in range(1, rows + 1):
        m = mean + (shift if i >= shift_at else 0.0)
        lines.append(f"{i},{T0 + i},{rng.gauss(m, 1.0):.5f}")
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")
    return path


PROBE_CONFIG = """
rules {
  name: "probes"
  match: "cold/**"
  spec {
    model: "linear"
    regressors: "reference"
    estimators: "ls"
    estimators: "map"
    detectors { kind: "cusum" arl0: 500 shift: 1 }
  }
}
rules {
  name: "other"
  match: "**"
  spec { model: "gaussian" }
}
"""


class LineReader:
    """Lines of a child process's stdout with a timeout per line. Reads the raw file descriptor
    (a buffered reader would hide lines from select())."""

    def __init__(self, stream):
        self._fd = stream.fileno()
        self._buffer = b""

    def readline(self, timeout_s):
        """The next line without its newline, or None at the timeout or end of the stream."""
        import select

        deadline = time.monotonic() + timeout_s
        while b"\n" not in self._buffer:
            left = deadline - time.monotonic()
            if left <= 0:
                return None
            ready, _, _ = select.select([self._fd], [], [], left)
            if not ready:
                return None
            chunk = os.read(self._fd, 65536)
            if not chunk:
                return None
            self._buffer += chunk
        line, self._buffer = self._buffer.split(b"\n", 1)
        return line.decode()
