"""SUB-connect ingest from a producer's PUB socket, and two sharded daemons that split the
channels between them."""
import zmq

from conftest import fnv1a64, frame, obs, receive_until

CHANNELS = [f"coldstore/freezer{f}/probe{p}" for f in range(1, 5) for p in range(1, 6)]


def test_sub_connect_ingest_from_a_producer_pub_socket(daemons):
    ctx = zmq.Context.instance()
    producer = ctx.socket(zmq.PUB)
    producer.setsockopt(zmq.LINGER, 0)
    producer.bind("tcp://127.0.0.1:*")
    endpoint = producer.getsockopt(zmq.LAST_ENDPOINT).decode()
    d = daemons(extra_args=["--sub-connect", endpoint]).start()
    sub = d.subscriber(b"estimate/")
    d.sync_subscriber(sub, d.pusher())
    # Until the daemon's subscription reaches the producer, PUB drops: re-send seq 1 (a re-sent
    # duplicate is dropped by the daemon) until its estimate comes back.
    first = frame(obs(CHANNELS[0], y=1.0, seq=1))
    for _ in range(200):
        producer.send_multipart([b"site-a", first])  # a topic part, then the frame
        if sub.poll(100):
            break
    receive_until(sub, lambda t, p: p.estimate.channel == CHANNELS[0])
    for i in range(2, 51):
        producer.send(frame(obs(CHANNELS[0], y=1.0 + 0.01 * i, seq=i)))
    d.wait_stats(lambda st: st.observations_accepted == 50, "50 observations over SUB")
    assert d.ask(CHANNELS[0]).info.last_seq == 50
    producer.close()


def test_two_shards_keep_disjoint_channel_sets(daemons):
    shards = [daemons(name=f"s{i}", extra_args=["--shard", f"{i}/2"]).start() for i in range(2)]
    pushers = [d.pusher() for d in shards]
    for i in range(5):
        batch = [obs(c, y=float(i), seq=i + 1) for c in CHANNELS]
        for p in pushers:  # every daemon sees every observation
            p.send(frame(batch=batch))
    owned = []
    for index, d in enumerate(shards):
        expected = sorted(c for c in CHANNELS if fnv1a64(c) % 2 == index)
        d.wait_stats(lambda st: st.observations_accepted == 5 * len(expected), f"shard {index}")
        names = [c.name for c in d.request(list="").channels.channels]
        assert names == expected
        owned.append(set(names))
        st = d.stats()
        assert st.observations_received == 5 * len(expected)
        assert st.frames_received == 5
    assert not owned[0] & owned[1]
    assert owned[0] | owned[1] == set(CHANNELS)
    assert owned[0] and owned[1]
    assert not shards[0].request(ask=sorted(owned[1])[0]).ok
