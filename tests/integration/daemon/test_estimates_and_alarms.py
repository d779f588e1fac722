"""Observations in, estimates and alarms out: the real daemon over tcp loopback."""
import numpy as np
import zmq

from conftest import frame, obs, receive_until

T0 = 1_800_000_000_000_000_000  # observation times: 1 s apart from here


# In-control run length of the CUSUM set far beyond the test's 300 in-control observations, so a
# false alarm (which the default arl0 of 1000 allows) cannot mask the step.
STEADY_PROBES = """
rules { name: "probes" match: "coldstore/**"
        spec { model: "gaussian" detectors { kind: "cusum" arl0: 1000000 } } }
"""


def test_gaussian_estimates_match_the_sample_and_a_step_raises_an_alarm(daemons, tmp_path):
    config = tmp_path / "probes.conf"
    config.write_text(STEADY_PROBES)
    d = daemons(extra_args=["--config", str(config)]).start()
    push, sub = d.pusher(), d.subscriber(b"estimate/coldstore/")
    sub.setsockopt(zmq.SUBSCRIBE, b"alarm/")
    d.sync_subscriber(sub, push)

    rng = np.random.default_rng(7)
    channel = "coldstore/freezer1/probe3"
    before = rng.normal(-18.0, 0.5, 300)
    after = rng.normal(-15.0, 0.5, 60)  # a 6 sd step at observation 301
    ys = np.concatenate([before, after])
    for i, y in enumerate(ys):
        push.send(frame(obs(channel, y=float(y), seq=i + 1, time_ns=T0 + i * 10**9)))

    got = receive_until(
        sub, lambda t, p: p.HasField("estimate") and p.estimate.seq == len(ys)
        and p.estimate.estimator == "ml")
    alarms = [p.alarm for t, p in got if p.HasField("alarm")]
    raised = [a for a in alarms if a.state == "raised"]
    assert raised, "the 6 sd step raised no alarm"
    assert raised[0].channel == channel
    assert 300 < raised[0].seq <= len(ys), raised[0]
    assert all(a.seq > 300 for a in raised), "false alarm before the step"

    estimates = {}
    for topic, p in got:
        if p.HasField("estimate"):
            assert topic == "estimate/" + channel
            estimates[(p.estimate.estimator, p.estimate.seq)] = p.estimate
    # Every observation published one estimate per estimator (default policy: every_n = 1).
    for seq in (1, 150, 300, len(ys)):
        assert ("ml", seq) in estimates
    ml = estimates[("ml", 300)]
    assert list(ml.names) == ["mean", "variance"]
    assert ml.accepted == 300
    np.testing.assert_allclose(ml.value[0], before.mean(), rtol=1e-12)
    np.testing.assert_allclose(ml.value[1], before.var(), rtol=1e-9)  # MLE: divides by n
    assert ml.lower[0] < before.mean() < ml.upper[0]


def test_linear_channel_matches_ordinary_least_squares(daemons):
    d = daemons(transport="ipc").start()
    push, sub = d.pusher(), d.subscriber(b"estimate/packing/")
    d.sync_subscriber(sub, push)

    rng = np.random.default_rng(11)
    channel = "packing/line2/scale1"
    x = rng.uniform(0.0, 50.0, 200)  # reference weight, kg
    y = 0.3 + 1.02 * x + rng.normal(0.0, 0.05, x.size)
    batch = [obs(channel, y=float(yi), x=[float(xi)], seq=i + 1, time_ns=T0 + i * 10**9)
             for i, (xi, yi) in enumerate(zip(x, y))]
    for start in range(0, len(batch), 50):  # batch frames
        push.send(frame(batch=batch[start:start + 50]))

    got = receive_until(sub, lambda t, p: p.estimate.seq == len(x) and p.estimate.estimator == "ls")
    ls = got[-1][1].estimate
    assert ls.model == "linear"
    assert list(ls.names) == ["intercept", "x1"]
    design = np.column_stack([np.ones_like(x), x])
    expected, *_ = np.linalg.lstsq(design, y, rcond=None)
    np.testing.assert_allclose(ls.value, expected, rtol=1e-9)
    resid = y - design @ expected
    sigma2 = resid @ resid / (x.size - 2)
    se = np.sqrt(np.diag(sigma2 * np.linalg.inv(design.T @ design)))
    np.testing.assert_allclose(ls.std_error, se, rtol=1e-6)


def test_prediction_request_answers_and_changes_nothing(daemons):
    d = daemons().start()
    push, sub = d.pusher(), d.subscriber(b"prediction/")
    d.sync_subscriber(sub, push)
    channel = "packing/line1/checkweigher"
    for i in range(50):
        push.send(frame(obs(channel, y=2.0 + 0.5 * i + 0.01 * (i % 3), x=[float(i)], seq=i + 1)))
    d.wait_handled(50)
    before = d.ask(channel)
    push.send(frame(obs(channel, x=[100.0])))  # no y: a prediction request
    got = receive_until(sub, lambda t, p: p.HasField("prediction"))
    prediction = got[-1][1].prediction
    assert got[-1][0] == "prediction/" + channel
    assert abs(prediction.mean - 52.0) < 0.1
    assert prediction.lower < prediction.mean < prediction.upper
    assert d.ask(channel) == before
