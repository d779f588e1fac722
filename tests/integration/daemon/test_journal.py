"""The write-ahead journal: kill -9 at random moments while ingesting loses nothing the daemon
accepted and applies nothing twice. After every restart, the channels equal those of a daemon that
was never interrupted and was given exactly the frames the journaled daemon had accepted."""
import random
import signal

from conftest import TIMEOUT_S, frame, obs

CHANNELS = [f"packing/line{i % 3}/scale{i}" for i in range(12)]


def make_frames(count, seed):
    """Deterministic frames: single observations and small batches, each observation numbered per
    channel and carrying its own time, so arrival times do not matter."""
    rng = random.Random(seed)
    next_seq = {c: 1 for c in CHANNELS}
    frames = []  # (bytes, observations in it)
    for i in range(count):
        size = 1 if rng.random() < 0.8 else rng.randint(2, 6)
        batch = []
        for _ in range(size):
            c = rng.choice(CHANNELS)
            level = 20.0 + CHANNELS.index(c)
            batch.append(obs(c, y=level + rng.gauss(0, 1), seq=next_seq[c],
                             time_ns=1_700_000_000_000_000_000 + i * 1_000_000))
            next_seq[c] += 1
        frames.append((frame(batch[0]) if size == 1 else frame(batch=batch), size))
    return frames


def channel_state(daemon):
    """Every channel's report (estimates, detectors, counts): what must match exactly."""
    listing = daemon.request(list="")
    assert listing.ok, listing.error
    return {info.name: daemon.ask(info.name).SerializeToString(deterministic=True)
            for info in listing.channels.channels}


def accepted(daemon):
    listing = daemon.request(list="")
    assert listing.ok, listing.error
    return sum(info.accepted for info in listing.channels.channels)


def wait_accepted(daemon, count):
    """Waits until the channels hold `count` observations in all (a bounded wait on the counts)."""
    daemon.wait_stats(lambda st: accepted(daemon) >= count, f"{count} observations in channels")


def test_kill_9_at_random_moments_loses_and_repeats_nothing(daemons, tmp_path):
    config = tmp_path / "journal.conf"
    # Frequent snapshots, so kills also land around snapshot cuts and journal rotations.
    config.write_text('use_default_rules: true\njournal { sync: "every_frame" }\nsnapshot_every_s: 0.05\n')
    frames = make_frames(4000, seed=11)
    starts = [0]  # observations before frame i
    for _, size in frames:
        starts.append(starts[-1] + size)

    reference = daemons(name="reference").start()
    ref_push = reference.pusher()
    ref_sent = 0  # frames given to the reference

    journaled = daemons(name="journaled", extra_args=["--config", str(config)])
    rng = random.Random(5)
    next_frame = 0
    kills = 0
    held_before_kill = 0
    while kills < 50 and next_frame < len(frames):
        journaled.start()
        m = accepted(journaled)
        assert m in starts, f"{m} accepted observations is not a whole number of frames"
        assert m >= held_before_kill, f"kill {kills} lost {held_before_kill - m} accepted observations"
        resumed_at = starts.index(m)
        assert resumed_at <= next_frame, "the daemon holds frames that were never sent"
        # The uninterrupted reference, given the same accepted frames.
        for data, _ in frames[ref_sent:resumed_at]:
            ref_push.send(data)
        ref_sent = max(ref_sent, resumed_at)
        reference.wait_handled(starts[ref_sent])
        assert channel_state(journaled) == channel_state(reference), f"after kill {kills}"

        # Resend from the first frame it did not accept, then kill -9 mid-stream.
        push = journaled.pusher()
        next_frame = resumed_at
        burst = rng.randint(1, 300)
        for data, _ in frames[next_frame:next_frame + burst]:
            push.send(data)
        next_frame = min(len(frames), next_frame + burst)
        if rng.random() < 0.5:  # sometimes let part of the burst be absorbed first
            journaled.wait_stats(lambda st: accepted(journaled) > m, "some absorbed")
        # What the channels hold now was journaled before it was applied: none of it may be lost.
        held_before_kill = accepted(journaled)
        push.close(linger=0)
        journaled.stop(signal.SIGKILL)
        kills += 1
    assert kills == 50

    # Finally, everything, and a clean stop and start: equal to the reference fed everything.
    journaled.start()
    push = journaled.pusher()
    m = accepted(journaled)
    for data, _ in frames[starts.index(m):]:
        push.send(data)
    wait_accepted(journaled, starts[-1])
    assert journaled.stop() == 0
    journaled.start()
    for data, _ in frames[ref_sent:]:
        ref_push.send(data)
    reference.wait_handled(starts[-1])
    assert accepted(journaled) == starts[-1]
    assert channel_state(journaled) == channel_state(reference)


def test_a_torn_last_record_is_skipped_and_reported(daemons, tmp_path):
    config = tmp_path / "journal.conf"
    config.write_text('use_default_rules: true\njournal { sync: "every_frame" }\nsnapshot_every_s: 3600\n')
    d = daemons(extra_args=["--config", str(config)]).start()
    push = d.pusher()
    for i in range(1, 11):
        push.send(frame(obs("cold/room1/probe", y=float(i), seq=i, time_ns=i * 10**9)))
    d.wait_handled(10)
    d.stop(signal.SIGKILL)
    segments = sorted((tmp_path / "state-d").glob("journal-*.blj"))
    assert segments, "no journal segment written"
    last = segments[-1]
    data = last.read_bytes()
    last.write_bytes(data[:-3])  # the last frame's record loses its end, as in a crash mid-write
    d.start()
    d.wait_log(r"journal .*incomplete record")
    assert accepted(d) == 9
    report = d.ask("cold/room1/probe")
    assert report.info.last_seq == 9


def test_bad_journal_setting_is_refused(daemons, tmp_path):
    config = tmp_path / "journal.conf"
    config.write_text('use_default_rules: true\njournal { sync: "sometimes" }\n')
    d = daemons(extra_args=["--config", str(config)]).start(expect_ready=False)
    assert d.proc.wait(timeout=TIMEOUT_S) != 0
    assert any("journal.sync" in line for line in d.lines)
