"""A second SIGTERM / SIGINT during shutdown ends the daemon at once (exit 128 + signal number),
and the snapshots already on disk stay usable.

To hold the daemon inside its shutdown, the test queues a backlog of slow work (channels with
eight BOCPD detectors each, hundreds of thousands of observations): a clean stop drains it before
the final snapshot, which takes seconds, and the test checks that the daemon is still running,
after logging that it stops, when it sends the second signal."""
import os
import signal

import pytest

from conftest import TIMEOUT_S, frame, obs

SLOW_CONFIG = (
               'rules { name: "slow" match: "slow/**" spec { model: "gaussian" estimators: ["ls"] '
               'publish { every_n: 1000 } '
               + 'detectors { kind: "bocpd" hazard: 0.01 recent: 5 threshold: 0.9 } ' * 8 + '} }\n'
               'rules { name: "default" match: "**" spec { model: "auto" } }\n')


def generation_path(state_dir, generation):
    return os.path.join(state_dir, f"snapshot-{generation:020d}.bls")


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT], ids=["SIGTERM", "SIGINT"])
def test_second_signal_during_shutdown_forces_exit(daemons, tmp_path, sig):
    config = tmp_path / "slow.conf"
    config.write_text(SLOW_CONFIG)
    d = daemons(extra_args=["--config", str(config)]).start()
    push = d.pusher()
    for i in range(20):
        push.send(frame(obs("coldstore/freezer1/probe1", y=1.0 + 0.1 * (i % 3), seq=i + 1)))
    d.wait_handled(20)
    reply = d.request(snapshot=True)  # generation 1: what a restart must find
    assert reply.ok, reply.error
    assert reply.snapshot.path == generation_path(d.state_dir, 1)
    batch = frame(batch=[obs(f"slow/c{i % 4}", y=float(i % 5)) for i in range(512)])
    for _ in range(400):
        push.send(batch)
    d.wait_stats(lambda st: st.observations_received >= 64 * 512, "a backlog of slow work")

    start = d.log_size()
    d.proc.send_signal(sig)
    d.wait_log(r"signal SIG(TERM|INT): stopping", start)
    assert d.proc.poll() is None  # still draining the backlog
    d.proc.send_signal(sig)
    code = d.proc.wait(timeout=TIMEOUT_S)
    assert code == 128 + sig
    d.wait_log(r"during shutdown: exiting now with code %d" % (128 + sig), start)
    d.proc = None

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
