#!/usr/bin/env bash
# bayline demo: a simulated cold-storage site feeding a real baylined.
#   clients/demo/run_demo.sh <build-dir>      (what `make demo` runs)
# 1. starts baylined with clients/demo/cold_storage.conf on free loopback ports, state in a
#    temporary directory;
# 2. feeds about 30 s of simulated data (generate_cold_storage.py, the Python client): four probes
#    calibrated against reference thermometers (probe3's gain drifts half-way), door openings,
#    packing-line rejects, compressor cycle times;
# 3. shows `bayline follow`'s live table meanwhile (on a terminal), then `bayline list` and
#    `bayline ask` for the drifting probe;
# 4. stops the daemon with SIGTERM and waits for it (it writes its final snapshot);
# 5. replays the drifting probe's data offline and plots it with its alarm:
#    demo-out/drifting_probe.svg (and .png) under the current directory, or $BAYLINE_DEMO_OUT.
set -euo pipefail

if [ $# -ne 1 ]; then
  echo "usage: $0 <build-dir>" >&2
  exit 2
fi
BUILD=$(cd "$1" && pwd)
HERE=$(cd "$(dirname "$0")" && pwd)
SOURCE=$(cd "$HERE/../.." && pwd)
BAYLINE="$BUILD/clients/cli/bayline"
BAYLINED="$BUILD/daemon/server/baylined"
PYTHON=/usr/bin/python3
for program in "$BAYLINE" "$BAYLINED"; do
  [ -x "$program" ] || { echo "demo: $program is not built (run make build)" >&2; exit 1; }
done
export PYTHONPATH="$SOURCE/clients/python:$BUILD/proto/python${PYTHONPATH:+:$PYTHONPATH}"

OUT=${BAYLINE_DEMO_OUT:-$PWD/demo-out}
mkdir -p "$OUT"
STATE=$(mktemp -d "${TMPDIR:-/tmp}/bayline-demo.XXXXXX")
DAEMON_PID=""
GENERATOR_PID=""
cleanup() {
  [ -n "$GENERATOR_PID" ] && kill "$GENERATOR_PID" 2>/dev/null || true
  if [ -n "$DAEMON_PID" ] && kill -0 "$DAEMON_PID" 2>/dev/null; then
    kill -TERM "$DAEMON_PID" 2>/dev/null || true
    wait "$DAEMON_PID" 2>/dev/null || true
  fi
  rm -rf "$STATE"
}
trap cleanup EXIT
trap 'exit 130' INT TERM

# Three free loopback ports, chosen by the kernel.
read -r PULL_PORT PUB_PORT CONTROL_PORT < <("$PYTHON" - <<'PY'
import socket
socks = [socket.socket() for _ in range(3)]
for s in socks:
    s.bind(("127.0.0.1", 0))
print(*(s.getsockname()[1] for s in socks))
PY
)
INGEST="tcp://127.0.0.1:$PULL_PORT"
PUBLISH="tcp://127.0.0.1:$PUB_PORT"
CONTROL="tcp://127.0.0.1:$CONTROL_PORT"

echo "== starting baylined (ingest $INGEST, publications $PUBLISH, control $CONTROL)"
"$BAYLINED" --config "$HERE/cold_storage.conf" --state-dir "$STATE" --pull-bind "$INGEST" \
  --publish-bind "$PUBLISH" --control-bind "$CONTROL" >"$OUT/baylined.log" 2>&1 &
DAEMON_PID=$!
for attempt in $(seq 1 40); do
  if "$BAYLINE" stats --control "$CONTROL" --timeout 0.5 >/dev/null 2>&1; then break; fi
  kill -0 "$DAEMON_PID" 2>/dev/null || { echo "demo: baylined exited:" >&2; cat "$OUT/baylined.log" >&2; exit 1; }
  [ "$attempt" = 40 ] && { echo "demo: baylined does not answer" >&2; exit 1; }
done

echo "== feeding the simulated cold-storage site for about 30 s"
"$PYTHON" "$HERE/generate_cold_storage.py" --ingest "$INGEST" --steps 600 --interval 0.05 \
  --drift-at 300 --out-csv "$OUT/drifting_probe.csv" &
GENERATOR_PID=$!

if [ -t 1 ]; then
  "$BAYLINE" follow --endpoint "$PUBLISH" --seconds 31
else
  echo "(stdout is not a terminal: publications go to $OUT/follow.jsonl instead of the live table)"
  "$BAYLINE" follow --endpoint "$PUBLISH" --seconds 31 >"$OUT/follow.jsonl"
fi
wait "$GENERATOR_PID"
GENERATOR_PID=""

echo
echo "== bayline list"
"$BAYLINE" list --control "$CONTROL"
echo
echo "== bayline ask coldsite/probes/probe3"
"$BAYLINE" ask coldsite/probes/probe3 --control "$CONTROL"

echo
echo "== stopping baylined (SIGTERM: drain, snapshot, exit)"
kill -TERM "$DAEMON_PID"
STATUS=0
wait "$DAEMON_PID" || STATUS=$?
DAEMON_PID=""
echo "baylined exited with status $STATUS"

echo
echo "== replaying the drifting probe offline and plotting it"
"$BAYLINE" replay --config "$HERE/cold_storage.conf" --input "$OUT/drifting_probe.csv" \
  --x reference --seq seq --time t --output "$OUT/drifting_probe.jsonl"
for format in svg png; do
  "$BAYLINE" plot --input "$OUT/drifting_probe.jsonl" --channel coldsite/probes/probe3 \
    --observations "$OUT/drifting_probe.csv" --units "°C" --y-label "probe reading" \
    --title "coldsite/probes/probe3: calibration against the reference thermometer" \
    --output "$OUT/drifting_probe.$format"
done
grep -h '"alarm"' "$OUT/drifting_probe.jsonl" | head -3 || true
echo "plot: $OUT/drifting_probe.svg"
exit "$STATUS"
