"""Measures a snapshot of many channels on the real daemon: how long the `snapshot` request takes,
the longest `stats` round trip while it runs (a client asking every 50 ms), the peak resident
memory during it against the steady state, and the stop and restart times.

    PYTHONPATH=build/proto/python /usr/bin/python3 tests/bench/e2e/snapshot_responsiveness.py \\
        build 500000

Arguments: the build directory (holding daemon/server/baylined) and the number of channels (one
gaussian least-squares channel each, 2 workers)."""
import os
import pathlib
import sys
import tempfile
import threading
import time

import zmq

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[2] / "integration" / "daemon"))
import conftest  # noqa: E402  (the integration tests' daemon harness)
from bayline.v1 import control_pb2  # noqa: E402
from conftest import frame, obs  # noqa: E402


def resident_kib(pid):
    with open(f"/proc/{pid}/status") as status:
        return int(status.read().split("VmRSS:")[1].split()[0])


def main(build, channels):
    conftest.BAYLINED = os.path.join(build, "daemon", "server", "baylined")
    tmp = pathlib.Path(tempfile.mkdtemp())
    config = tmp / "many.conf"
    config.write_text(f'snapshot_every_s: 86400 limits {{ max_channels: {channels} }}\n'
                      'rules { name: "many" match: "**" spec { model: "gaussian" '
                      'estimators: ["ls"] publish { every_n: 1000000 } } }\n')
    d = conftest.Daemon(tmp, extra_args=["--config", str(config)]).start()
    push = d.pusher()
    for start in range(0, channels, 5000):
        push.send(frame(batch=[obs(f"hall{i % 97}/probe{i}", y=1.0, seq=1)
                               for i in range(start, min(channels, start + 5000))]))
    while d.stats().channels < channels:
        pass
    steady = resident_kib(d.proc.pid)

    latencies, peak = [], [steady]
    stop = threading.Event()

    def ask_stats():
        s = d.ctx.socket(zmq.REQ)
        s.connect(d.control)
        request = control_pb2.Request()
        request.stats.SetInParent()
        while not stop.wait(0.05):
            begin = time.monotonic()
            s.send(request.SerializeToString())
            s.recv()
            latencies.append(time.monotonic() - begin)
        s.close(linger=0)

    def watch_memory():
        while not stop.wait(0.01):
            peak[0] = max(peak[0], resident_kib(d.proc.pid))

    threads = [threading.Thread(target=ask_stats), threading.Thread(target=watch_memory)]
    for t in threads:
        t.start()
    begin = time.monotonic()
    reply = d.request(snapshot=True)
    took = time.monotonic() - begin
    stop.set()
    for t in threads:
        t.join()
    assert reply.ok, reply.error
    print(f"channels {channels}: snapshot {took:.2f} s, {reply.snapshot.bytes} bytes; "
          f"stats round trip max {max(latencies) * 1000:.0f} ms over {len(latencies)}; "
          f"resident {steady // 1024} MiB steady, {peak[0] // 1024} MiB peak")
    begin = time.monotonic()
    code = d.stop()
    stopped = time.monotonic() - begin
    begin = time.monotonic()
    d.start()
    print(f"stop {stopped:.1f} s (exit {code}), restart to ready {time.monotonic() - begin:.1f} s "
          f"({d.stats().channels} channels)")
    d.stop()


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]))
