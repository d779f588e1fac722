"""baylined --check-config: exit 0 on a valid file; exit 1 naming file, line and field otherwise."""
import subprocess

from conftest import BAYLINED

GOOD = """
snapshot_every_s: 30
rules {
  name: "freezer probes"
  match: "coldstore/*/probe*"
  spec { model: "linear" regressors: "reference" detectors { kind: "cusum" arl0: 2000 } }
}
"""


def check(tmp_path, text):
    path = tmp_path / "site.conf"
    path.write_text(text)
    r = subprocess.run([BAYLINED, "--check-config", str(path)], capture_output=True, text=True,
                       timeout=30)
    return r, str(path)


def test_valid_file_exits_zero(tmp_path):
    r, path = check(tmp_path, GOOD)
    assert r.returncode == 0, r.stderr
    assert path in r.stdout and "ok" in r.stdout


def test_syntax_error_names_file_line_and_column(tmp_path):
    r, path = check(tmp_path, GOOD.replace('match: "coldstore/*/probe*"', "match coldstore"))
    assert r.returncode == 1
    assert f"{path}:5:" in r.stderr, r.stderr


def test_invalid_value_names_file_line_and_field_path(tmp_path):
    r, path = check(tmp_path, GOOD.replace("arl0: 2000", "arl0: 1"))
    assert r.returncode == 1
    assert f"{path}:6:" in r.stderr, r.stderr
    assert "rules[0].spec.detectors[0].arl0" in r.stderr, r.stderr


def test_invalid_shard_and_missing_file(tmp_path):
    r, path = check(tmp_path, GOOD + 'shard: "2/2"\n')
    assert r.returncode == 1 and f"{path}:" in r.stderr and "shard" in r.stderr, r.stderr
    r = subprocess.run([BAYLINED, "--check-config", str(tmp_path / "absent.conf")],
                       capture_output=True, text=True, timeout=30)
    assert r.returncode == 1 and "absent.conf" in r.stderr


def test_help_documents_flags_and_signals():
    r = subprocess.run([BAYLINED, "--help"], capture_output=True, text=True, timeout=30)
    assert r.returncode == 0
    for word in ("--config", "--check-config", "--state-dir", "--pull-bind", "--sub-connect",
                 "--publish-bind", "--control-bind", "--workers", "--shard", "--log-level",
                 "SIGTERM", "SIGHUP"):
        assert word in r.stdout, word
