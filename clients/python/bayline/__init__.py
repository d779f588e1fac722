"""Python client of the bayline estimation daemon.

    from bayline import Sender, Subscriber, Control, load_jsonl

* Sender      sends observations (ZeroMQ PUSH to the daemon's PULL, or PUB for sub_connect)
* Subscriber  iterates over publications with kind / channel-glob filters (SUB)
* Control     control requests: list, ask, reset, stats, snapshot, reload (REQ with timeouts)
* load_jsonl  reads `bayline replay` / `bayline follow` JSON Lines into plain dicts;
  to_dataframe turns them into a pandas DataFrame when pandas is installed
* bayline.plot  renders a channel's history (matplotlib, Agg); also `python3 -m bayline.plot`

The generated protobuf modules live in the build tree (<build>/proto/python/bayline/v1); the
package path is extended so that they import as `bayline.v1` when that directory is on sys.path.
Names are imported lazily, so plotting works without the generated modules or pyzmq.
"""
from pkgutil import extend_path

__path__ = extend_path(__path__, __name__)

_EXPORTS = {
    "Sender": "client",
    "Subscriber": "client",
    "Control": "client",
    "ControlError": "client",
    "DaemonTimeout": "client",
    "observation": "client",
    "load_jsonl": "records",
    "to_dataframe": "records",
    "channel_history": "records",
    "glob_match": "globs",
    "DEFAULT_INGEST_ENDPOINT": "defaults",
    "DEFAULT_PUBLISH_ENDPOINT": "defaults",
    "DEFAULT_CONTROL_ENDPOINT": "defaults",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name):
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'bayline' has no attribute {name!r}")
    import importlib

    return getattr(importlib.import_module(f"{__name__}.{module}"), name)
