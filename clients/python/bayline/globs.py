"""Channel globs as in the daemon's rules: '*' within one '/'-separated segment, '**' across
segments, '?' one character other than '/'."""
import re
from functools import lru_cache

__all__ = ["glob_match", "literal_prefix"]


@lru_cache(maxsize=256)
def _compile(glob):
    out = []
    i = 0
    while i < len(glob):
        if glob.startswith("**", i):
            out.append(".*")
            i += 2
        elif glob[i] == "*":
            out.append("[^/]*")
            i += 1
        elif glob[i] == "?":
            out.append("[^/]")
            i += 1
        else:
            out.append(re.escape(glob[i]))
            i += 1
    return re.compile("".join(out), re.DOTALL)


def glob_match(glob, name):
    """True when `name` matches `glob` entirely; an empty or None glob matches everything."""
    if not glob:
        return True
    return _compile(glob).fullmatch(name) is not None


def literal_prefix(glob):
    """The text before the first wildcard: usable as a ZeroMQ prefix after '<kind>/'."""
    if not glob:
        return ""
    cut = [i for i in (glob.find("*"), glob.find("?")) if i >= 0]
    return glob[: min(cut)] if cut else glob
