"""A second SIGTERM / SIGINT during shutdown ends the daemon at once (exit 128 + signal number),
and the snapshots already on disk stay usable.

To hold the daemon inside its shutdown deterministically, the test puts a FIFO where the shutdown
snapshot's temporary file will be created (snapshot_file.h: `<snapshot>.tmp` beside the
generation it writes): opening a FIFO for writing blocks until a reader opens it, and the test
opens none, so the daemon stays in its final snapshot until the second signal."""
import os
import signal

import pytest

from conftest import TIMEOUT_S, frame, obs


def generation_path(state_dir, generation):
    return os.path.join(state_dir, f"snapshot-{generation:020d}.bls")


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT], ids=["SIGTERM", "SIGINT"])
def test_second_signal_during_shutdown_forces_exit(daemons, sig):
    d = daemons().start()
    push = d.pusher()
    for i in range(20):
        push.send(frame(obs("coldstore/freezer1/probe1", y=1.0 + 0.1 * (i % 3), seq=i + 1)))
    d.wait_handled(20)
    reply = d.request(snapshot=True)  # generation 1: what a restart must find
    assert reply.ok, reply.error
    assert reply.snapshot.path == generation_path(d.state_dir, 1)
    os.mkfifo(generation_path(d.state_dir, 2) + ".tmp")

    start = d.log_size()
    d.proc.send_signal(sig)
    d.wait_log(r"signal SIG(TERM|INT): stopping", start)
    assert d.proc.poll() is None  # held at the FIFO: without a second signal it would not end
    d.proc.send_signal(sig)
    code = d.proc.wait(timeout=TIMEOUT_S)
    assert code == 128 + sig
    d.wait_log(r"during shutdown: exiting now with code %d" % (128 + sig), start)
    d.proc = None
    os.remove(generation_path(d.state_dir, 2) + ".tmp")

    # The snapshot written before the forced exit is restored.
    d.start()
    assert d.ask("coldstore/freezer1/probe1").info.accepted == 20
    assert d.stop() == 0


def test_one_signal_still_stops_cleanly(daemons):
    d = daemons().start()
    start = d.log_size()
    assert d.stop() == 0
    d.wait_log(r"\bstopped\b", start)
    assert os.path.exists(generation_path(d.state_dir, 1))
