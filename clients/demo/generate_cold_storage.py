"""Simulated feed of the bayline demo's cold-storage site (invented scenario, no real data).

    generate_cold_storage.py --ingest ENDPOINT --steps N --interval S --drift-at K --out-csv FILE

Each step is one simulated minute: every probe reads its room's reference thermometer (probe3's
gain drifts from 1.00 to 1.08 from step K on: its readings run warm as the room gets colder), each
door reports its openings, the packing line reports rejects in a batch of 240 packs, and the
compressor reports a cycle time. Steps are sent `interval` seconds apart of wall time, with
simulated timestamps one minute apart. probe3's observations also go to --out-csv (columns
channel, seq, t, reference, y) so the run can be replayed and plotted afterwards.
"""
import argparse
import csv
import math
import random
import time

from bayline import Sender

START = 1768456800  # 2026-01-15T06:00:00Z, simulated clock
PROBES = {  # probe: (room set point in deg C, offset, gain)
    "probe1": (-18.0, 0.15, 1.00),
    "probe2": (-18.0, -0.10, 0.99),
    "probe3": (-22.0, 0.05, 1.00),
    "probe4": (2.0, 0.20, 1.01),
}
DRIFT_GAIN = 1.08


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--ingest", required=True)
    parser.add_argument("--steps", type=int, default=600)
    parser.add_argument("--interval", type=float, default=0.05)
    parser.add_argument("--drift-at", type=int, default=300)
    parser.add_argument("--out-csv", required=True)
    parser.add_argument("--seed", type=int, default=2026)
    args = parser.parse_args()

    rng = random.Random(args.seed)
    start = time.monotonic()
    with Sender(args.ingest) as sender, open(args.out_csv, "w", newline="") as out:
        writer = csv.writer(out)
        writer.writerow(["channel", "seq", "t", "reference", "y"])
        for step in range(1, args.steps + 1):
            t = START + 60 * step
            time_ns = t * 1_000_000_000
            batch = []
            for name, (set_point, offset, gain) in PROBES.items():
                # The room temperature cycles with the compressor and the doors.
                reference = set_point + 1.5 * math.sin(step / 9.0 + len(name)) + rng.gauss(0, 0.4)
                if name == "probe3" and step >= args.drift_at:
                    gain = DRIFT_GAIN
                reading = round(offset + gain * reference + rng.gauss(0, 0.05), 3)
                channel = f"coldsite/probes/{name}"
                batch.append(dict(channel=channel, seq=step, time_ns=time_ns, y=reading,
                                  x=[round(reference, 3)]))
                if name == "probe3":
                    writer.writerow([channel, step, t, round(reference, 3), reading])
            for door, rate in (("loading_bay", 3.0), ("staff", 1.2)):
                batch.append(dict(channel=f"coldsite/doors/{door}", seq=step, time_ns=time_ns,
                                  y=_poisson(rng, rate), exposure=1.0))
            rejects = sum(rng.random() < 0.015 for _ in range(240))
            batch.append(dict(channel="coldsite/packing/line1", seq=step, time_ns=time_ns,
                              y=rejects, trials=240))
            batch.append(dict(channel="coldsite/compressor/c1", seq=step, time_ns=time_ns,
                              y=round(rng.gammavariate(8.0, 50.0), 1)))
            sender.send_batch(batch)
            # Pace the steps on the wall clock so the live table has time to show them.
            delay = start + step * args.interval - time.monotonic()
            if delay > 0:
                time.sleep(delay)


def _poisson(rng, rate):
    # Knuth's method: fine for the small rates of door openings.
    limit, k, p = math.exp(-rate), 0, 1.0
    while True:
        p *= rng.random()
        if p <= limit:
            return k
        k += 1


if __name__ == "__main__":
    main()
