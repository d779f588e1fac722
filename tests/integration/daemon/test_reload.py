"""SIGHUP and the reload request re-read the config file; an invalid file is refused and the old
configuration kept."""
import signal

from conftest import frame, obs, receive_until

V1 = """
rules { name: "probes" match: "coldstore/**" spec { model: "gaussian" level: 0.95 } }
rules { name: "line" match: "packing/**" spec { model: "gaussian" } }
"""
V2 = V1.replace("level: 0.95", "level: 0.9")
BAD = V1 + 'rules { name: "oops" match: "x/**" spec { model: "gaussian" detectors { kind: "cusum" arl0: 1 } } }\n'


def test_sighup_applies_new_rules_and_resets_changed_channels(daemons, tmp_path):
    config = tmp_path / "site.conf"
    config.write_text(V1)
    d = daemons(extra_args=["--config", str(config)]).start()
    push = d.pusher()
    for i in range(20):
        push.send(frame(obs("coldstore/f1/probe1", y=-18.0 + 0.1 * (i % 3), seq=i + 1)))
        push.send(frame(obs("packing/line1/weigher", y=500.0 + (i % 4), seq=i + 1)))
    d.wait_stats(lambda st: st.observations_accepted == 40, "40 accepted")
    line_before = d.ask("packing/line1/weigher")

    config.write_text(V2)
    mark = d.log_size()
    d.proc.send_signal(signal.SIGHUP)
    d.wait_log(r"reloaded .*site.conf: 1 channels reset", start=mark)
    d.wait_log(r'channel "coldstore/f1/probe1" reset', start=mark)
    assert d.ask("packing/line1/weigher") == line_before  # its spec did not change

    sub = d.subscriber(b"estimate/coldstore/")
    d.sync_subscriber(sub, push)
    push.send(frame(obs("coldstore/f1/probe1", y=-18.0, seq=21)))
    got = receive_until(sub, lambda t, p: p.HasField("estimate"))
    assert abs(got[-1][1].estimate.level - 0.9) < 1e-12
    assert got[-1][1].estimate.accepted == 1  # the channel restarted from its new rule


def test_invalid_config_on_reload_is_refused_and_the_old_one_kept(daemons, tmp_path):
    config = tmp_path / "site.conf"
    config.write_text(V1)
    d = daemons(extra_args=["--config", str(config)]).start()
    push = d.pusher()
    for i in range(10):
        push.send(frame(obs("coldstore/f1/probe1", y=-18.0 + 0.1 * (i % 3), seq=i + 1)))
    d.wait_stats(lambda st: st.observations_accepted == 10, "10 accepted")
    before = d.ask("coldstore/f1/probe1")

    config.write_text(BAD)
    mark = d.log_size()
    d.proc.send_signal(signal.SIGHUP)
    line = d.wait_log(r"reload rejected", start=mark)
    assert "site.conf:4" in line and "arl0" in line, line

    config.write_text("rules { match: \n")  # a syntax error, through the control request
    reply = d.request(reload=True)
    assert not reply.ok and "site.conf:2" in reply.error, reply.error
    assert d.ask("coldstore/f1/probe1") == before
    push.send(frame(obs("coldstore/f1/probe1", y=-18.0, seq=11)))
    d.wait_stats(lambda st: st.observations_accepted == 11, "still running on the old config")
