"""The channel limit, sequence numbers, reload and the state directory when the input, the files or
the disk work against the daemon: the limit holds for the whole daemon and state restores whatever
the worker count; one observation cannot jam a channel; an empty, cut-short or unreadable config is
refused; damaged snapshots are kept aside and reported; a failed final snapshot is an exit code;
planted links and file names cannot make the daemon write outside its directory or roll back."""
import glob
import os
import shutil
import signal
import subprocess

import pytest

from conftest import BAYLINED, TIMEOUT_S, frame, obs, receive_until

RULES = 'rules { name: "all" match: "**" spec { model: "gaussian" } }\n'


def write_config(tmp_path, text, name="site.conf"):
    path = tmp_path / name
    path.write_text(text)
    return str(path)


def snapshots(d):
    return sorted(glob.glob(os.path.join(d.state_dir, "snapshot-*.bls")))


def feed(d, channel, seqs, y=1.0):
    push = d.pusher()
    push.send(frame(batch=[obs(channel, y=y + 0.01 * (i % 7), seq=s) for i, s in enumerate(seqs)]))
    push.close()


# --- limits.max_channels and the worker count --------------------------------------------------

def test_channel_limit_holds_for_the_daemon_and_state_restores_with_any_worker_count(daemons,
                                                                                   tmp_path):
    conf = write_config(tmp_path, RULES + "limits { max_channels: 12 }\n")
    d = daemons(extra_args=["--config", conf], workers=4).start()
    names = [f"plant/line{i}/meter" for i in range(48)]
    push = d.pusher()
    push.send(frame(batch=[obs(n, y=1.0, seq=1) for n in names]))
    st = d.wait_handled(48)
    assert st.channels == 12, st
    assert st.rejected_by_reason["channel_limit"] == 36, st
    held = sorted(c.name for c in d.request(list="").channels.channels)
    assert len(held) == 12
    assert d.stop() == 0

    # Fewer, then more workers than wrote the snapshot: every channel comes back and is served by
    # the worker that owns it now (its count continues).
    for round_, workers in enumerate((1, 3)):
        d.workers = workers
        d.start()
        d.wait_log(r"restored 12 channels from ")
        push = d.pusher()
        push.send(frame(batch=[obs(n, y=2.0, seq=2 + round_) for n in held]))
        push.send(frame(observation=obs("plant/new/meter", y=1.0, seq=1)))
        st = d.wait_handled(13)
        assert st.observations_accepted == 12 and st.channels == 12, st
        assert st.rejected_by_reason["channel_limit"] == 1, st
        for n in held:
            assert d.ask(n).info.accepted == 2 + round_, n
        assert d.stop() == 0


def test_reset_gives_the_channel_back_to_the_daemon_wide_limit(daemons, tmp_path):
    conf = write_config(tmp_path, RULES + "limits { max_channels: 3 }\n")
    d = daemons(extra_args=["--config", conf], workers=3).start()
    push = d.pusher()
    push.send(frame(batch=[obs(f"site/m{i}", y=1.0, seq=1) for i in range(6)]))
    st = d.wait_handled(6)
    assert st.channels == 3 and st.rejected_by_reason["channel_limit"] == 3, st
    held = [c.name for c in d.request(list="").channels.channels]
    assert d.request(reset=held[0]).ok
    refused = next(f"site/m{i}" for i in range(6) if f"site/m{i}" not in held)
    push.send(frame(observation=obs(refused, y=1.0, seq=1)))
    st = d.wait_handled(7)
    assert st.channels == 3 and st.observations_accepted == 4, st


# --- sequence numbers --------------------------------------------------------------------------

def collect_errors(sub, count):
    errors = []

    def done(topic, p):
        if p.HasField("input_error") and p.input_error.channel:
            errors.append(p.input_error)
        return len(errors) >= count

    receive_until(sub, done)
    return errors


def test_one_observation_cannot_jam_a_channel_even_across_a_restart(daemons):
    d = daemons().start()
    sub = d.subscriber(b"input_error/")
    push = d.pusher()
    d.sync_subscriber(sub, push)
    feed(d, "plant/a", [1, 2])
    d.wait_stats(lambda st: st.observations_accepted == 2, "2 accepted")
    feed(d, "plant/a", [2**64 - 1])  # implausible: refused, changes nothing
    feed(d, "plant/a", [3, 4])
    d.wait_stats(lambda st: st.observations_accepted == 4, "4 accepted")
    (error,) = collect_errors(sub, 1)
    assert error.reason == "implausible_seq" and error.seq == 2**64 - 1, error
    assert d.ask("plant/a").info.last_seq == 4

    # A plausible jump moves the window; the producer's own numbers, now too old, are reported
    # (not dropped silently) and after a short run of consecutive ones the channel follows them.
    feed(d, "plant/a", [1004])
    d.wait_stats(lambda st: st.observations_accepted == 5, "jump accepted")
    feed(d, "plant/a", [5, 6, 7, 8, 9])
    d.wait_stats(lambda st: st.observations_accepted == 7, "resynchronised")
    errors = collect_errors(sub, 3)
    assert [e.reason for e in errors] == ["seq_too_old"] * 3, errors
    assert [e.seq for e in errors] == [5, 6, 7]
    info = d.ask("plant/a").info
    assert info.last_seq == 9 and info.accepted == 7, info
    assert d.stop() == 0

    d.start()
    d.wait_log(r"restored 1 channels from ")
    feed(d, "plant/a", [10])
    d.wait_stats(lambda st: st.observations_accepted == 1, "continues after the restart")
    assert d.ask("plant/a").info.last_seq == 10
    st = d.stats()
    assert st.seq_duplicates == 0, st


# --- configuration files -----------------------------------------------------------------------

@pytest.mark.parametrize("damage", ["empty", "comments only", "directory", "cut before the rules"])
def test_reload_refuses_an_empty_unreadable_or_cut_short_file(daemons, tmp_path, damage):
    path = tmp_path / "site.conf"
    path.write_text("snapshot_every_s: 30\n" + RULES.replace('"gaussian"', '"gaussian" level: 0.9'))
    d = daemons(extra_args=["--config", str(path)]).start()
    feed(d, "plant/a", range(1, 11))
    d.wait_stats(lambda st: st.observations_accepted == 10, "10 accepted")
    before = d.ask("plant/a")

    if damage == "empty":
        path.write_text("")
    elif damage == "comments only":
        path.write_text("# rules follow\n\n")
    elif damage == "directory":
        path.unlink()
        path.mkdir()
    else:
        path.write_text("snapshot_every_s: 30\n")
    reply = d.request(reload=True)
    assert not reply.ok and "site.conf" in reply.error, reply.error
    assert "configuration unchanged" in reply.error, reply.error
    assert d.ask("plant/a") == before
    mark = d.log_size()
    d.proc.send_signal(signal.SIGHUP)
    d.wait_log(r"error reload rejected, configuration unchanged: .*site.conf", start=mark)
    feed(d, "plant/a", [11])
    d.wait_stats(lambda st: st.observations_accepted == 11, "still on the old rules")
    assert d.ask("plant/a").info.accepted == 11


def run_check(tmp_path, text):
    path = write_config(tmp_path, text, "check.conf")
    return subprocess.run([BAYLINED, "--check-config", path], capture_output=True, text=True,
                          timeout=TIMEOUT_S)


def test_a_file_without_rules_must_say_it_wants_the_default_rule(daemons, tmp_path):
    r = run_check(tmp_path, "")
    assert r.returncode == 1 and "check.conf" in r.stderr and "empty" in r.stderr, r.stderr
    r = run_check(tmp_path, "snapshot_every_s: 5\n")
    assert r.returncode == 1 and "use_default_rules" in r.stderr, r.stderr
    r = run_check(tmp_path, "snapshot_every_s: 5\nuse_default_rules: true\n")
    assert r.returncode == 0, r.stderr
    r = run_check(tmp_path, RULES + "use_default_rules: true\n")
    assert r.returncode == 1 and "use_default_rules" in r.stderr, r.stderr

    empty = write_config(tmp_path, "", "empty.conf")
    d = daemons(extra_args=["--config", empty])
    d.start(expect_ready=False)
    assert d.proc.wait(timeout=TIMEOUT_S) == 1
    d.wait_log(r"empty.conf.*empty")


# --- damaged state and failed snapshots --------------------------------------------------------

def damage_all(d):
    files = snapshots(d)
    assert len(files) == 2
    for f in files:
        content = bytearray(open(f, "rb").read())
        content[len(content) // 2] ^= 0x10
        open(f, "wb").write(bytes(content))
    return [os.path.basename(f) for f in files]


def make_two_snapshots(d):
    feed(d, "plant/a", range(1, 6))
    d.wait_stats(lambda st: st.observations_accepted == 5, "5 accepted")
    assert d.request(snapshot=True).ok
    assert d.stop() == 0


def test_damaged_state_is_refused_with_strict_state_and_kept_aside_otherwise(daemons):
    d = daemons(extra_args=["--strict-state"]).start()
    make_two_snapshots(d)
    names = damage_all(d)
    damaged_bytes = {n: open(os.path.join(d.state_dir, n), "rb").read() for n in names}

    d.start(expect_ready=False)
    assert d.proc.wait(timeout=TIMEOUT_S) == 1
    d.wait_log(r"error .*--strict-state")
    d.proc = None
    assert [os.path.basename(f) for f in snapshots(d)] == names  # untouched

    d.extra_args = []
    d.start()
    line = d.wait_log(r"error .*no snapshot could be restored.*starting empty")
    assert "damaged" in line, line
    assert d.stats().channels == 0
    aside = sorted(glob.glob(os.path.join(d.state_dir, "damaged", "snapshot-*")))
    assert [os.path.basename(f).split(".bls")[0] + ".bls" for f in aside] == names, aside
    for f in aside:
        assert open(f, "rb").read() == damaged_bytes[os.path.basename(f).split(".bls")[0] + ".bls"]
    # New snapshots prune only their own kind: the kept files stay.
    for _ in range(3):
        assert d.request(snapshot=True).ok
    assert d.stop() == 0
    assert len(glob.glob(os.path.join(d.state_dir, "damaged", "snapshot-*"))) == 2


def test_a_failed_final_snapshot_is_a_non_zero_exit_naming_what_was_lost(daemons, tmp_path):
    d = daemons().start()
    feed(d, "plant/a", range(1, 6))
    d.wait_stats(lambda st: st.observations_accepted == 5, "5 accepted")
    # The state directory disappears and a plain file takes its name (this holds even for root,
    # unlike a read-only directory).
    shutil.move(d.state_dir, str(tmp_path / "moved-away"))
    open(d.state_dir, "w").write("not a directory\n")
    assert d.stop() != 0
    d.wait_log(r"error .*final snapshot failed.*1 channels not saved")


# --- path safety -------------------------------------------------------------------------------

def test_a_planted_link_at_the_temporary_name_is_not_followed(daemons, tmp_path):
    d = daemons().start()
    feed(d, "plant/a", range(1, 6))
    d.wait_stats(lambda st: st.observations_accepted == 5, "5 accepted")
    reply = d.request(snapshot=True)
    assert reply.ok
    generation = int(os.path.basename(reply.snapshot.path)[len("snapshot-"):-len(".bls")])
    victim = tmp_path / "victim.txt"
    victim.write_text("precious\n")
    planted = os.path.join(d.state_dir, "snapshot-%020d.bls.tmp" % (generation + 1))
    os.symlink(str(victim), planted)

    reply = d.request(snapshot=True)
    assert reply.ok, reply.error
    assert victim.read_text() == "precious\n"
    assert reply.snapshot.path.endswith("snapshot-%020d.bls" % (generation + 1))
    assert not os.path.islink(reply.snapshot.path)
    assert not os.path.lexists(planted)
    assert d.stop() == 0


def test_a_file_named_with_an_absurd_generation_cannot_roll_state_back(daemons):
    d = daemons().start()
    feed(d, "plant/a", range(1, 11))
    d.wait_stats(lambda st: st.observations_accepted == 10, "10 accepted")
    old = d.request(snapshot=True).snapshot.path
    planted = os.path.join(d.state_dir, "snapshot-%020d.bls" % (2**64 - 1))
    shutil.copy(old, planted)
    feed(d, "plant/a", range(11, 21))
    d.wait_stats(lambda st: st.observations_accepted == 20, "20 accepted")
    assert d.stop() == 0

    for accepted in (20, 30):
        d.start()
        d.wait_log(r"restored 1 channels from ")
        assert d.ask("plant/a").info.accepted == accepted
        feed(d, "plant/a", range(accepted + 1, accepted + 11))
        d.wait_stats(lambda st: st.observations_accepted == 10, "10 more")
        assert d.stop() == 0
    assert os.path.exists(planted)  # not ours to delete
