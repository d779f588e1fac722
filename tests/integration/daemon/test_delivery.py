"""Delivery guarantees of the daemon's thread hand-offs and publishing path, under load: every
observation is taken in (PULL stays lossless when the workers fall behind), every publication of a
channel leaves in the channel's order, non-ASCII channel names take the full decoder and still
arrive, and SIGTERM publishes everything already received before the process exits."""
import signal

from conftest import frame, obs, receive_until

CHANNELS = [f"plant{p}/line{l}/sensor{s}" for p in range(3) for l in range(4) for s in range(5)]


def batches(per_channel, first_seq=1, size=50):
    """Frames of `size` observations cycling over CHANNELS, numbered per channel."""
    stream = [obs(c, y=float((i * 7 + k) % 11), seq=first_seq + i)
              for i in range(per_channel) for k, c in enumerate(CHANNELS)]
    return [frame(batch=stream[i:i + size]) for i in range(0, len(stream), size)]


def collect_estimates(sub, expected):
    """Receives until `expected` estimates arrived; returns {channel: [(seq, estimator), ...]}."""
    by_channel = {}
    count = 0

    def done(topic, p):
        nonlocal count
        if p.HasField("estimate"):
            assert topic == "estimate/" + p.estimate.channel
            by_channel.setdefault(p.estimate.channel, []).append(
                (p.estimate.seq, p.estimate.estimator))
            count += 1
        return count >= expected

    receive_until(sub, done)
    return by_channel


def test_a_burst_is_taken_in_whole_and_published_in_channel_order(daemons):
    d = daemons().start()
    push, sub = d.pusher(), d.subscriber(b"estimate/")
    d.sync_subscriber(sub, push)
    per_channel = 200
    for f in batches(per_channel):  # far faster than the workers estimate: queues fill up
        push.send(f)
    got = collect_estimates(sub, 3 * per_channel * len(CHANNELS))
    assert sorted(got) == sorted(CHANNELS)
    for channel, seen in got.items():
        seqs = [seq for seq, _ in seen]
        assert seqs == sorted(seqs), f"{channel}: publications out of order"
        assert [seq for seq, _ in seen[::3]] == list(range(1, per_channel + 1)), channel
    st = d.stats()
    assert st.observations_received == per_channel * len(CHANNELS)
    assert st.observations_accepted == per_channel * len(CHANNELS)


def test_single_observation_frames_from_many_producers_lose_nothing(daemons):
    d = daemons().start()
    pushers = [d.pusher() for _ in range(4)]
    per_channel = 100
    for i in range(per_channel):
        for k, c in enumerate(CHANNELS):  # each channel always from the same producer
            pushers[k % 4].send(frame(obs(c, y=float(i % 5), seq=i + 1)))
    d.wait_stats(lambda st: st.observations_accepted == per_channel * len(CHANNELS), "all taken")
    st = d.stats()
    assert st.frames_received == per_channel * len(CHANNELS)
    assert st.seq_gaps == 0 and st.seq_reordered == 0 and st.seq_duplicates == 0
    assert all(d.ask(c).info.last_seq == per_channel for c in CHANNELS)


def test_frames_the_scanner_leaves_to_protobuf_are_still_routed(daemons):
    d = daemons().start()
    push, sub = d.pusher(), d.subscriber(b"estimate/")
    d.sync_subscriber(sub, push)
    names = ["kühlhaus/fühler1", "冷库/探头2", "plain/ascii"]
    for i in range(10):
        push.send(frame(batch=[obs(n, y=float(i % 3), seq=i + 1) for n in names]))
    got = collect_estimates(sub, 3 * 10 * len(names))
    assert sorted(got) == sorted(names)
    for n in names:
        assert [seq for seq, _ in got[n][::3]] == list(range(1, 11))
        assert d.ask(n).info.accepted == 10


def test_sigterm_publishes_everything_it_absorbed_before_exit(daemons):
    d = daemons().start()
    push, sub = d.pusher(), d.subscriber(b"estimate/")
    d.sync_subscriber(sub, push)
    per_channel = 300
    for f in batches(per_channel):
        push.send(f)
    # Stop while the workers are still busy: what ingest took in is estimated, published and
    # saved before the process exits; frames still on the wire may be left unread.
    d.wait_stats(lambda st: st.observations_received > 0, "the first observations")
    assert d.stop(signal.SIGTERM) == 0
    d.wait_log(r"snapshot .*: \d+ channels")
    d.start()
    absorbed = sum(c.accepted for c in d.request(list="").channels.channels)
    assert absorbed > 0
    got = collect_estimates(sub, 3 * absorbed)
    assert sum(len(v) for v in got.values()) == 3 * absorbed
    for channel, seen in got.items():
        seqs = [seq for seq, _ in seen[::3]]
        assert seqs == list(range(1, len(seqs) + 1)), channel
