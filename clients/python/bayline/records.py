"""Reading `bayline replay` / `bayline follow` JSON Lines.

Each line is one Publication in protobuf's JSON mapping with proto field names:
{"estimate": {...}}, {"alarm": {...}}, {"input_error": {...}} or {"prediction": {...}}.
load_jsonl() flattens each into a plain dict with a "kind" key and the message's fields, with the
64-bit integer fields (which the JSON mapping writes as strings) turned back into ints and
non-finite doubles ("NaN", "Infinity") into floats.
"""
import json

__all__ = ["load_jsonl", "to_dataframe", "channel_history"]

_INT_FIELDS = {"seq", "time_ns", "onset_seq", "onset_time_ns", "accepted"}
# Double fields: the JSON mapping writes non-finite values as the strings "NaN", "Infinity",
# "-Infinity"; they are turned back into floats.
_FLOAT_FIELDS = {"value", "std_error", "lower", "upper", "posterior_mean", "x", "level",
                 "effective_n", "log_likelihood", "statistic", "threshold", "shift", "trigger_y",
                 "mean", "sd"}


def _float(v):
    return float(v) if isinstance(v, str) else v
KINDS = ("estimate", "alarm", "input_error", "prediction")


def _flatten(obj, where):
    if not isinstance(obj, dict) or len(obj) != 1:
        raise ValueError(f"{where}: expected one object with a single key among {KINDS}")
    (kind, body), = obj.items()
    if kind not in KINDS or not isinstance(body, dict):
        raise ValueError(f"{where}: unknown publication kind {kind!r}")
    record = {"kind": kind}
    for key, value in body.items():
        if key in _INT_FIELDS and value is not None:
            value = int(value)
        elif key in _FLOAT_FIELDS:
            value = [_float(v) for v in value] if isinstance(value, list) else _float(value)
        record[key] = value
    return record


def load_jsonl(path_or_lines, kinds=None, channel=None):
    """Publications as dicts, in file order. `path_or_lines` is a path or an iterable of lines.
    `kinds` (iterable) and `channel` (exact name) filter. A malformed line raises ValueError
    naming its line number."""
    if isinstance(path_or_lines, (str, bytes)) or hasattr(path_or_lines, "__fspath__"):
        with open(path_or_lines, encoding="utf-8") as f:
            return load_jsonl(list(f), kinds, channel)
    kinds = set(kinds) if kinds else None
    out = []
    for number, line in enumerate(path_or_lines, start=1):
        line = line.strip()
        if not line:
            continue
        try:
            obj = json.loads(line)
        except json.JSONDecodeError as e:
            raise ValueError(f"line {number}: not JSON: {e.msg}") from None
        record = _flatten(obj, f"line {number}")
        if kinds and record["kind"] not in kinds:
            continue
        if channel is not None and record.get("channel") != channel:
            continue
        out.append(record)
    return out


def channel_history(records, channel):
    """One channel's history, split for plotting:
    {"estimates": {estimator: [records...]}, "alarms": [...], "input_errors": [...]}"""
    history = {"estimates": {}, "alarms": [], "input_errors": [], "predictions": []}
    for r in records:
        if r.get("channel") != channel:
            continue
        if r["kind"] == "estimate":
            history["estimates"].setdefault(r.get("estimator", "?"), []).append(r)
        else:
            history[r["kind"] + "s"].append(r)
    return history


def to_dataframe(records):
    """A pandas DataFrame with one row per publication and one column per field (lists stay in
    their cells). Estimates can be widened with df.explode(["names", "value", ...]). Raises
    ImportError when pandas is not installed."""
    import pandas as pd

    return pd.DataFrame.from_records(records)
