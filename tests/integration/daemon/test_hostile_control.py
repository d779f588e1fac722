"""Hostile requests on the control socket: each gets an error reply (or, when valid, its answer), is
counted by reason in `stats`, and the daemon keeps serving."""
import pytest
import zmq

from bayline.v1 import control_pb2
from conftest import frame, obs


def exchange(d, parts):
    """Sends one request of the given message parts; returns the reply."""
    return d.request_raw(list(parts))


def stats_request():
    req = control_pb2.Request()
    req.stats.SetInParent()
    return req.SerializeToString()


def feed_one(d):
    push = d.pusher()
    push.send(frame(obs("coldstore/freezer1/probe1", y=1.5, seq=1)))
    d.wait_handled(1)
    return push


def test_two_part_request_gets_an_error_and_the_daemon_keeps_answering(daemons):
    d = daemons().start()
    feed_one(d)
    before = d.ask("coldstore/freezer1/probe1").SerializeToString()  # bytes: NaN fields compare
    for _ in range(3):  # the same hostile request again and again: each one answered
        reply = exchange(d, [stats_request(), stats_request()])
        assert not reply.ok
        assert "2 message parts" in reply.error
    reply = exchange(d, [b"", b"\x01", stats_request()])
    assert not reply.ok and "3 message parts" in reply.error
    st = d.stats()
    assert st.control_rejected_by_reason["multipart_request"] == 4
    assert st.observations_accepted == 1
    assert d.ask("coldstore/freezer1/probe1").SerializeToString() == before
    assert d.proc.poll() is None


def test_garbage_empty_and_huge_requests_are_answered(daemons):
    d = daemons().start()
    feed_one(d)
    garbage = [b"\xff\xff\xff", b"\x0a\xff\xff\xff\xff\xff\xff\xff\xff\xff\x01", b"\x00" * 7]
    for data in garbage:
        reply = d.request_raw(data)
        assert not reply.ok and "malformed request" in reply.error
    # An empty frame decodes as a Request with no operation set.
    reply = d.request_raw(b"")
    assert not reply.ok and "empty request" in reply.error
    # Over limits.max_control_message_bytes (default 1 MiB): ZeroMQ drops the message and the
    # connection, so no reply comes (a bounded wait for an absence), and the daemon serves on.
    s = d.ctx.socket(zmq.REQ)
    s.setsockopt(zmq.LINGER, 0)
    s.setsockopt(zmq.RCVTIMEO, 2000)
    s.connect(d.control)
    s.send(b"\xfe" * (16 << 20))
    with pytest.raises(zmq.Again):
        s.recv()
    s.close()
    # A valid request carrying a 100 KiB glob: answered with an error (globs over 4 KiB).
    req = control_pb2.Request()
    req.list.glob = "coldstore/" + "*" * (100 << 10)
    reply = d.request_raw(req.SerializeToString())
    assert not reply.ok and "exceeds the limit" in reply.error, reply.error
    st = d.stats()
    assert st.control_rejected_by_reason["malformed_request"] == len(garbage)
    assert "multipart_request" not in st.control_rejected_by_reason
    assert st.observations_accepted == 1
    assert d.proc.poll() is None
