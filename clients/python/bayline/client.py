"""ZeroMQ clients of the daemon: Sender (ingest), Subscriber (publications), Control (requests).

Wire: ingest frames are serialized bayline.v1.IngestFrame messages; publications arrive as
two-frame messages [topic, Publication] with topic "<kind>/<channel>"; control is one Request and
one Reply on a REQ socket.
"""
import time

import zmq

from bayline.defaults import (
    DEFAULT_CONTROL_ENDPOINT,
    DEFAULT_INGEST_ENDPOINT,
    DEFAULT_PUBLISH_ENDPOINT,
)
from bayline.globs import glob_match, literal_prefix
from bayline.v1 import control_pb2, observation_pb2, publication_pb2

__all__ = [
    "Sender",
    "Subscriber",
    "Control",
    "ControlError",
    "DaemonTimeout",
    "observation",
    "KINDS",
]

KINDS = ("estimate", "alarm", "input_error", "prediction")


class ControlError(RuntimeError):
    """The daemon answered a control request with ok = false (the message is its error)."""


class DaemonTimeout(TimeoutError):
    """No reply (or no delivery) within the timeout: is baylined running at that endpoint?"""


def observation(channel, y=None, x=(), seq=0, time_ns=0, trials=None, exposure=None, weight=None):
    """Builds a bayline.v1.Observation. y=None with regressors is a prediction request; seq=0 lets
    the daemon number it; time_ns=0 lets it use the arrival time."""
    obs = observation_pb2.Observation(channel=channel, seq=seq, time_ns=time_ns)
    if y is not None:
        obs.y = float(y)
    obs.x.extend(float(v) for v in x)
    if trials is not None:
        obs.trials = float(trials)
    if exposure is not None:
        obs.exposure = float(exposure)
    if weight is not None:
        obs.weight = float(weight)
    return obs


class Sender:
    """Sends observations to a daemon.

    mode="push" (default) connects a PUSH socket to the daemon's PULL endpoint: lossless, and
    send() blocks (up to `timeout_s`, then DaemonTimeout) when the daemon does not keep up.
    mode="pub" binds a PUB socket at `endpoint` for daemons that sub_connect to it; use
    wait_for_subscriber() before sending, since PUB drops what nobody is subscribed to yet.
    """

    def __init__(self, endpoint=DEFAULT_INGEST_ENDPOINT, mode="push", timeout_s=10.0, context=None):
        if mode not in ("push", "pub"):
            raise ValueError("mode must be 'push' or 'pub'")
        self._context = context or zmq.Context.instance()
        kind = zmq.PUSH if mode == "push" else zmq.XPUB
        self._socket = self._context.socket(kind)
        self._socket.setsockopt(zmq.SNDTIMEO, int(timeout_s * 1000))
        self._socket.setsockopt(zmq.LINGER, int(timeout_s * 1000))
        self.mode = mode
        if mode == "push":
            self._socket.connect(endpoint)
            self.endpoint = endpoint
        else:
            self._socket.setsockopt(zmq.SNDHWM, 100000)
            self._socket.bind(endpoint)
            self.endpoint = self._socket.getsockopt_string(zmq.LAST_ENDPOINT)
        self._frame = observation_pb2.IngestFrame()

    def wait_for_subscriber(self, timeout_s=10.0):
        """pub mode: blocks until a subscriber has connected (its subscription arrived)."""
        if self.mode != "pub":
            return
        if not self._socket.poll(int(timeout_s * 1000), zmq.POLLIN):
            raise DaemonTimeout(f"no subscriber connected to {self.endpoint} within {timeout_s} s")
        self._socket.recv()

    def send(self, obs=None, **fields):
        """Sends one observation: an Observation message, or keyword fields for observation()."""
        if obs is None:
            obs = observation(**fields)
        self._frame.Clear()
        self._frame.observation.CopyFrom(obs)
        self._send_frame()

    def send_batch(self, observations):
        """Sends several observations in one ObservationBatch frame (how high rates are reached).
        Items are Observation messages or dicts of observation() fields."""
        self._frame.Clear()
        batch = self._frame.batch
        for item in observations:
            batch.observations.add().CopyFrom(item if not isinstance(item, dict) else observation(**item))
        self._send_frame()

    def _send_frame(self):
        try:
            self._socket.send(self._frame.SerializeToString())
        except zmq.Again:
            raise DaemonTimeout(f"the daemon at {self.endpoint} did not take the frame in time") from None

    def close(self):
        self._socket.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


def _channel_of(publication):
    kind = publication.WhichOneof("kind")
    return getattr(publication, kind).channel if kind else ""


class Subscriber:
    """Publications of one or more daemons, filtered by kind and channel glob.

    Kinds become ZeroMQ prefix subscriptions "<kind>/<literal prefix of the glob>"; the whole glob
    is then checked on each publication's channel. Iterating yields (kind, Publication) until
    `timeout_s` passes without a matching publication (None: forever).
    """

    def __init__(self, endpoints=DEFAULT_PUBLISH_ENDPOINT, kinds=KINDS, channel=None, context=None):
        if isinstance(endpoints, str):
            endpoints = [endpoints]
        if isinstance(kinds, str):
            kinds = [kinds]
        unknown = [k for k in kinds if k not in KINDS]
        if unknown:
            raise ValueError(f"unknown publication kinds {unknown}; expected some of {KINDS}")
        self._context = context or zmq.Context.instance()
        self._socket = self._context.socket(zmq.SUB)
        self._socket.setsockopt(zmq.LINGER, 0)
        self._socket.setsockopt(zmq.RCVHWM, 100000)
        self.channel = channel
        prefix = literal_prefix(channel)
        for kind in kinds:
            self._socket.setsockopt(zmq.SUBSCRIBE, f"{kind}/{prefix}".encode())
        for endpoint in endpoints:
            self._socket.connect(endpoint)

    def receive(self, timeout_s=None):
        """The next matching (kind, Publication), or None when `timeout_s` passes first."""
        deadline = None if timeout_s is None else time.monotonic() + timeout_s
        while True:
            wait_ms = None if deadline is None else max(0, int((deadline - time.monotonic()) * 1000))
            if not self._socket.poll(wait_ms, zmq.POLLIN):
                return None
            parts = self._socket.recv_multipart()
            if len(parts) != 2:
                continue
            publication = publication_pb2.Publication()
            publication.ParseFromString(parts[1])
            if glob_match(self.channel, _channel_of(publication)):
                return publication.WhichOneof("kind"), publication
            if deadline is not None and time.monotonic() >= deadline:
                return None

    def iterate(self, timeout_s=None):
        """Yields (kind, Publication) until `timeout_s` passes with nothing new."""
        while True:
            item = self.receive(timeout_s)
            if item is None:
                return
            yield item

    def __iter__(self):
        return self.iterate()

    def close(self):
        self._socket.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


class Control:
    """Control requests, one REQ socket per request (a REQ socket whose reply never came cannot be
    reused). Each method returns the reply's result message or raises ControlError (ok = false) or
    DaemonTimeout (no reply within `timeout_s`)."""

    def __init__(self, endpoint=DEFAULT_CONTROL_ENDPOINT, timeout_s=5.0, context=None):
        self.endpoint = endpoint
        self.timeout_s = timeout_s
        self._context = context or zmq.Context.instance()

    def call(self, request):
        """Sends a bayline.v1.Request and returns the bayline.v1.Reply (ok or not)."""
        socket = self._context.socket(zmq.REQ)
        socket.setsockopt(zmq.LINGER, 0)
        try:
            socket.connect(self.endpoint)
            socket.send(request.SerializeToString())
            if not socket.poll(int(self.timeout_s * 1000), zmq.POLLIN):
                raise DaemonTimeout(
                    f"no reply from the daemon at {self.endpoint} within {self.timeout_s} s")
            reply = control_pb2.Reply()
            reply.ParseFromString(socket.recv())
            return reply
        finally:
            socket.close()

    def _checked(self, request):
        reply = self.call(request)
        if not reply.ok:
            raise ControlError(reply.error)
        return reply

    def list(self, glob=""):
        """ChannelInfo messages of the channels matching `glob` ("" = all)."""
        return list(self._checked(control_pb2.Request(list=control_pb2.ListChannels(glob=glob))).channels.channels)

    def ask(self, channel):
        """The ChannelReport of `channel` (estimates and detector states)."""
        return self._checked(control_pb2.Request(ask=control_pb2.ChannelRef(channel=channel))).channel

    def reset(self, channel):
        """Forgets the channel's state; returns the daemon's message."""
        return self._checked(control_pb2.Request(reset=control_pb2.ChannelRef(channel=channel))).message

    def stats(self):
        return self._checked(control_pb2.Request(stats=control_pb2.Empty())).stats

    def snapshot(self):
        return self._checked(control_pb2.Request(snapshot=control_pb2.Empty())).snapshot

    def reload(self):
        return self._checked(control_pb2.Request(reload=control_pb2.Empty())).message
