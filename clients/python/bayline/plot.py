"""Plot one channel's history from `bayline replay` / `bayline follow` JSON Lines.

    python3 -m bayline.plot --input FILE.jsonl --channel NAME --output FILE.svg|.png
        [--observations DATA.csv|.jsonl] [--y-label TEXT] [--x-label TEXT] [--units TEXT]
        [--title TEXT] [--x-axis seq|time]

One panel per parameter with each estimator's trajectory and its interval band; above them, when
--observations names the input data, a panel of the channel's observations. Alarms are drawn in
every panel: a red line where an alarm was raised, a dotted grey line where it cleared, and a
shaded span from the detector's estimated onset to the alarm. SVG text is kept as text (not
paths) and the artists carry ids (gid) such as "alarm-raised", so the output can be checked.
Exit status: 0 written, 1 bad input (message on stderr).
"""
import argparse
import csv
import math
import os
import sys

import matplotlib

matplotlib.use("Agg")
import matplotlib.dates as mdates  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402

from bayline.records import channel_history, load_jsonl  # noqa: E402

__all__ = ["plot_channel", "main"]

# Parameters measured in the observations' units (so --units applies to them).
_IN_Y_UNITS = {"intercept": 1, "mean": 1, "variance": 2}
_COLORS = {"ls": "#1f77b4", "ml": "#2ca02c", "map": "#9467bd"}


class PlotInputError(ValueError):
    """Bad input for a plot: the message says what and where."""


def _x_value(record, x_axis):
    if x_axis == "time":
        import datetime

        ns = record.get("time_ns", 0) or 0
        return datetime.datetime.fromtimestamp(ns / 1e9, tz=datetime.timezone.utc)
    return record.get("seq", 0)


def _label_with_units(name, units):
    power = _IN_Y_UNITS.get(name)
    if not units or power is None:
        return name
    return f"{name} ({units}{'²' if power == 2 else ''})"


def read_observations(path, channel):
    """(seq, y) pairs of `channel` from a CSV (header row) or JSON Lines input file. Columns:
    "channel" (absent: the whole file), "y", and "seq" (absent: row number within the channel)."""
    rows = []
    if path.endswith((".jsonl", ".ndjson", ".json")):
        import json

        with open(path, encoding="utf-8") as f:
            for line in f:
                if line.strip() and not line.lstrip().startswith("#"):
                    rows.append(json.loads(line))
    else:
        with open(path, newline="", encoding="utf-8") as f:
            rows = list(csv.DictReader(line for line in f if not line.lstrip().startswith("#")))
    points = []
    count = 0
    for row in rows:
        if "channel" in row and row["channel"] != channel:
            continue
        count += 1
        y = row.get("y")
        if y in (None, ""):
            continue
        seq = row.get("seq")
        points.append((int(float(seq)) if seq not in (None, "") else count, float(y)))
    return points


def plot_channel(records, channel, output, y_label=None, x_label=None, units=None, title=None,
                 x_axis="seq", observations=None):
    """Draws `channel` from publication dicts (load_jsonl) into `output` (.svg or .png).
    `observations`: optional list of (seq, y). Raises PlotInputError when there is nothing to plot."""
    if not output.endswith((".svg", ".png")):
        raise PlotInputError(f"{output}: the output must end in .svg or .png")
    history = channel_history(records, channel)
    estimates = history["estimates"]
    if not estimates:
        channels = sorted({r.get("channel", "") for r in records if r["kind"] == "estimate"})
        raise PlotInputError(f"no estimates of channel {channel!r} (channels with estimates: "
                             f"{', '.join(channels) or 'none'})")
    names = []
    for rs in estimates.values():
        for n in rs[-1].get("names", []):
            if n not in names:
                names.append(n)
    model = next(iter(estimates.values()))[-1].get("model", "")

    matplotlib.rcParams["svg.fonttype"] = "none"  # keep text as <text>, searchable
    panels = len(names) + (1 if observations else 0)
    fig, axes = plt.subplots(panels, 1, sharex=True, figsize=(10, 2.6 * panels + 1.2),
                             squeeze=False)
    axes = [a[0] for a in axes]
    panel_of = {}
    first = 0
    if observations:
        ax = axes[0]
        xs, ys = zip(*observations)
        ax.plot(xs, ys, ".", color="#555555", markersize=3, label="observations", gid="observations")
        ax.set_ylabel(_label_with_units(y_label or "observation", units) if not units else
                      f"{y_label or 'observation'} ({units})")
        first = 1
    for i, name in enumerate(names):
        panel_of[name] = axes[first + i]
        label = _label_with_units(name, units)
        if y_label and not observations:
            label = f"{y_label}: {label}"
        axes[first + i].set_ylabel(label)

    settled = {name: [] for name in panel_of}  # (lower, upper) after the start-up transient
    for estimator, rs in sorted(estimates.items()):
        color = _COLORS.get(estimator, None)
        for name, ax in panel_of.items():
            xs, value, lower, upper = [], [], [], []
            for r in rs:
                if name not in r.get("names", []):
                    continue
                k = r["names"].index(name)
                v = r["value"][k] if k < len(r.get("value", [])) else math.nan
                if not r.get("identifiable", True) or not math.isfinite(v):
                    continue  # nothing to draw before the data determine the parameter
                lo, hi = r.get("lower", []), r.get("upper", [])
                low = lo[k] if k < len(lo) and math.isfinite(lo[k]) else v
                high = hi[k] if k < len(hi) and math.isfinite(hi[k]) else v
                xs.append(_x_value(r, x_axis))
                value.append(v)
                lower.append(low)
                upper.append(high)
            if not xs:
                continue
            skip = len(xs) // 10
            settled[name] += list(zip(lower[skip:], upper[skip:]))
            level = rs[-1].get("level", 0.95)
            ax.plot(xs, value, color=color, linewidth=1.3, label=f"{estimator} estimate",
                    gid=f"estimate-{estimator}-{name}")
            ax.fill_between(xs, lower, upper, color=color, alpha=0.18, linewidth=0,
                            label=f"{estimator} {level:.0%} interval",
                            gid=f"interval-{estimator}-{name}")

    # The first few intervals are very wide; scale each panel to the settled part so the rest of
    # the trajectory stays readable (the early band is clipped, not hidden).
    for name, bounds in settled.items():
        if bounds:
            # 1st and 99th percentiles, so a brief excursion (e.g. right after an alarm, while the
            # estimator re-converges) does not flatten the rest.
            lows = sorted(b[0] for b in bounds)
            highs = sorted(b[1] for b in bounds)
            low = lows[len(lows) // 100]
            high = highs[-1 - len(highs) // 100]
            pad = 0.15 * (high - low) or 0.1 * max(abs(high), 1.0)
            panel_of[name].set_ylim(low - pad, high + pad)

    onset_labelled = raised_labelled = cleared_labelled = False
    for alarm in history["alarms"]:
        x = _x_value(alarm, x_axis)
        raised = alarm.get("state") == "raised"
        for ax in axes:
            if raised:
                ax.axvline(x, color="#d62728", linewidth=1.4,
                           label=None if raised_labelled else f"alarm raised ({alarm.get('detector', '')})",
                           gid="alarm-raised")
                onset = alarm.get("onset_seq", 0) if x_axis == "seq" else alarm.get("onset_time_ns", 0)
                if onset:
                    start = onset if x_axis == "seq" else _x_value({"time_ns": onset}, "time")
                    ax.axvspan(start, x, color="#d62728", alpha=0.10,
                               label=None if onset_labelled else "estimated onset to alarm",
                               gid="alarm-onset")
            else:
                ax.axvline(x, color="#7f7f7f", linestyle=":", linewidth=1.2,
                           label=None if cleared_labelled else "alarm cleared", gid="alarm-cleared")
        if raised:
            raised_labelled = True
            onset_labelled = onset_labelled or bool(alarm.get("onset_seq", 0))
        else:
            cleared_labelled = True

    for ax in axes:
        ax.grid(True, alpha=0.3)
    handles, labels = [], []
    for ax in axes:
        for h, l in zip(*ax.get_legend_handles_labels()):
            if l not in labels:
                handles.append(h)
                labels.append(l)
    fig.legend(handles, labels, loc="upper right", fontsize="small", framealpha=0.9)
    axes[-1].set_xlabel(x_label or ("time (UTC)" if x_axis == "time" else "observation (seq)"))
    if x_axis == "time":
        axes[-1].xaxis.set_major_formatter(mdates.DateFormatter("%H:%M:%S"))
    fig.suptitle(title or f"{channel} ({model})")
    fig.tight_layout(rect=(0, 0, 0.82, 1))
    fig.savefig(output)
    plt.close(fig)


def main(argv=None):
    parser = argparse.ArgumentParser(prog="bayline plot", description=__doc__.split("\n")[0])
    parser.add_argument("--input", required=True, help="JSON Lines from bayline replay / follow")
    parser.add_argument("--channel", required=True)
    parser.add_argument("--output", required=True, help=".svg or .png")
    parser.add_argument("--observations", help="the input data (CSV or JSON Lines) to show too")
    parser.add_argument("--y-label")
    parser.add_argument("--x-label")
    parser.add_argument("--units")
    parser.add_argument("--title")
    parser.add_argument("--x-axis", choices=("seq", "time"), default="seq")
    args = parser.parse_args(argv)
    try:
        records = load_jsonl(args.input)
        observations = read_observations(args.observations, args.channel) if args.observations else None
        if args.observations and not observations:
            print(f"bayline plot: warning: no observations of {args.channel} in "
                  f"{args.observations} (columns channel, y and seq expected)", file=sys.stderr)
        plot_channel(records, args.channel, args.output, args.y_label, args.x_label, args.units,
                     args.title, args.x_axis, observations)
    except (OSError, ValueError) as e:
        where = "" if isinstance(e, OSError) else f"{args.input}: "
        print(f"bayline plot: {where}{e}", file=sys.stderr)
        return 1
    print(f"wrote {os.path.abspath(args.output)}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
