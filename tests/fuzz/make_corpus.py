#!/usr/bin/python3
"""Writes the seed corpus of every fuzz target under tests/fuzz/corpus/<target>/ (small inputs that
reach each decoder's main paths). Run from anywhere with the build tree that holds the generated
protobuf modules and baylined (the snapshot seeds are real snapshots of a daemon fed a few
observations per model):

    /usr/bin/python3 tests/fuzz/make_corpus.py build   (Debian's python3, with python3-zmq)
"""
import os
import re
import shutil
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
BUILD = os.path.abspath(sys.argv[1] if len(sys.argv) > 1 else "build")
sys.path.insert(0, os.path.join(BUILD, "proto", "python"))
import zmq  # noqa: E402
from bayline.v1 import control_pb2, observation_pb2  # noqa: E402

CORPUS = os.path.join(HERE, "corpus")
MODELS = ["linear", "gaussian", "lognormal", "poisson", "binomial", "exponential", "gamma",
          "logistic", "poisson_regression"]
WITH_X = {"linear", "logistic", "poisson_regression"}


def write(target, name, data):
    d = os.path.join(CORPUS, target)
    os.makedirs(d, exist_ok=True)
    with open(os.path.join(d, name), "wb") as f:
        f.write(data if isinstance(data, bytes) else data.encode())


def observation(model, i):
    o = observation_pb2.Observation(channel=f"m/{model}/c{i % 2}", seq=i + 1,
                                    time_ns=(i + 1) * 1_000_000_000)
    u = 0.1 * (i % 10)
    if model in ("poisson", "poisson_regression"):
        o.y = float(i % 4)
        o.exposure = 1.0
    elif model in ("binomial", "logistic"):
        o.y = float(i % 2)
        o.trials = 1.0
    elif model in ("lognormal", "exponential", "gamma"):
        o.y = 0.5 + 0.1 * (i % 7)
    else:
        o.y = 1.0 + 2.0 * u + 0.01 * (i % 3)
    if model in WITH_X:
        o.x.append(u)
    if i % 5 == 0:
        o.weight = 2.0
    return o


def ingest_frames():
    one = observation_pb2.IngestFrame(observation=observation("gaussian", 0))
    write("fuzz_ingest_frame", "single", one.SerializeToString())
    batch = observation_pb2.IngestFrame()
    batch.batch.observations.extend(observation(m, i) for i, m in enumerate(MODELS))
    write("fuzz_ingest_frame", "batch_all_models", batch.SerializeToString())
    bare = observation_pb2.IngestFrame(observation=observation_pb2.Observation(channel="a/b"))
    write("fuzz_ingest_frame", "channel_only", bare.SerializeToString())
    write("fuzz_ingest_frame", "unknown_field", one.SerializeToString() + b"\x48\x01")
    write("fuzz_ingest_frame", "non_ascii_channel", observation_pb2.IngestFrame(
        observation=observation_pb2.Observation(channel="k\u00fchl/1", y=1.0)).SerializeToString())


def control_requests():
    reqs = {
        "stats": control_pb2.Request(stats=control_pb2.Empty()),
        "list_all": control_pb2.Request(list=control_pb2.ListChannels(glob="")),
        "list_glob": control_pb2.Request(list=control_pb2.ListChannels(glob="m/*/c?")),
        "list_deep": control_pb2.Request(list=control_pb2.ListChannels(glob="m/**")),
        "ask": control_pb2.Request(ask=control_pb2.ChannelRef(channel="m/linear/c")),
        "ask_unknown": control_pb2.Request(ask=control_pb2.ChannelRef(channel="no/such")),
        "reset": control_pb2.Request(reset=control_pb2.ChannelRef(channel="m/poisson/b")),
        "snapshot": control_pb2.Request(snapshot=control_pb2.Empty()),
        "reload": control_pb2.Request(reload=control_pb2.Empty()),
    }
    for name, req in reqs.items():
        write("fuzz_control_request", name, req.SerializeToString())
    write("fuzz_control_request", "empty", b"")


def config_texts():
    shutil.copy(os.path.join(HERE, "all_models.conf"),
                os.path.join(CORPUS, "fuzz_config_text", "all_models.conf"))
    demo = os.path.join(HERE, "..", "..", "clients", "demo", "cold_storage.conf")
    shutil.copy(demo, os.path.join(CORPUS, "fuzz_config_text", "cold_storage.conf"))
    write("fuzz_config_text", "settings",
          'workers: 2\nshard: "1/3"\nlog_level: "debug"\nsnapshot_every_s: 5\n'
          'limits { max_channel_name_bytes: 64 max_frame_bytes: 4096 }\n'
          'endpoints { pull_bind: "tcp://127.0.0.1:*" control_bind: "ipc:///tmp/x" }\n')
    write("fuzz_config_text", "glr_page_hinkley",
          'rules { name: "r" match: "a/**" spec { model: "gaussian" estimators: "ml" '
          'detectors { kind: "glr" threshold: 8 window: 50 } '
          'detectors { kind: "page_hinkley" threshold: 20 shift: 1 } } }\n')


def snapshots():
    state = tempfile.mkdtemp(prefix="bayline-corpus-")
    args = [os.path.join(BUILD, "daemon", "server", "baylined"), "--config",
            os.path.join(HERE, "all_models.conf"), "--state-dir", state, "--workers", "1",
            "--pull-bind", "tcp://127.0.0.1:*", "--publish-bind", "tcp://127.0.0.1:*",
            "--control-bind", "tcp://127.0.0.1:*"]
    proc = subprocess.Popen(args, stderr=subprocess.PIPE, text=True)
    try:
        for line in proc.stderr:
            if "ready: " in line:
                fields = dict(kv.split("=", 1) for kv in line.split("ready: ", 1)[1].split())
                break
        ctx = zmq.Context.instance()
        push = ctx.socket(zmq.PUSH)
        push.connect(fields["pull"])
        count = 0
        for i in range(30):
            for m in MODELS:
                push.send(observation_pb2.IngestFrame(observation=observation(m, i))
                          .SerializeToString())
                count += 1
        req = ctx.socket(zmq.REQ)
        req.connect(fields["control"])
        while True:  # until every observation is handled
            req.send(control_pb2.Request(stats=control_pb2.Empty()).SerializeToString())
            st = control_pb2.Reply.FromString(req.recv()).stats
            if st.observations_accepted + sum(st.rejected_by_reason.values()) >= count:
                break
        req.send(control_pb2.Request(snapshot=control_pb2.Empty()).SerializeToString())
        info = control_pb2.Reply.FromString(req.recv()).snapshot
        data = open(info.path, "rb").read()
        push.close(linger=0)
        req.close(linger=0)
    finally:
        proc.terminate()
        proc.wait()
        shutil.rmtree(state)
    write("fuzz_snapshot_restore", "file_all_models", b"\x00" + data)
    write("fuzz_snapshot_restore", "payload_all_models", b"\x01" + data[40:])


def cli_records():
    write("fuzz_cli_csv", "basic", "channel,t,y,x,w\na/b,1.5,2.0,0.5,1\na/b,2.5,2.5,0.7,\n")
    write("fuzz_cli_csv", "quoted", '# comment\n"channel","y","x"\n"a, b",1e3,"-2"\r\n\n'
          'c/d,"1.0",3\n')
    write("fuzz_cli_csv", "default_channel", "y,x\n1,2\n3,4\n")
    write("fuzz_cli_jsonl", "basic",
          '{"channel": "a/b", "t": 1.5, "y": 2.0, "x": 0.5, "w": 1}\n'
          '{"channel": "a/b", "y": -1e-3, "x": [1, 2], "ok": true, "n": null}\n')
    write("fuzz_cli_jsonl", "escapes", '# c\n{"channel": "a\\u00e9\\n\\"q\\"", "y": "3", "x": 1}\n\n')


if __name__ == "__main__":
    for target in os.listdir(CORPUS) if os.path.isdir(CORPUS) else []:
        for name in os.listdir(os.path.join(CORPUS, target)):
            if not re.match(r"^(crash|timeout|slow|oom|leak)-", name):  # keep found reproducers
                os.remove(os.path.join(CORPUS, target, name))
    os.makedirs(os.path.join(CORPUS, "fuzz_config_text"), exist_ok=True)
    ingest_frames()
    control_requests()
    config_texts()
    snapshots()
    cli_records()
