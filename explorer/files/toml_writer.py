"""A small TOML writer for porefill's own files: tables, arrays of tables, and plain values.

Reading is the standard library's `tomllib`; writing is this file, because what porefill writes is small and
regular (numbers, text, booleans, flat arrays, nested tables) and every float must read back to the same
bits: floats are written with `repr` (the shortest text that reads back exactly), NaN and ±infinity as TOML's
``nan`` and ``inf``. Strings are basic strings with every control character escaped.
"""
from __future__ import annotations

import math
import re

__all__ = ["toml_value", "toml_key", "dump_table"]

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
_PER_LINE = 8
_ESCAPES = {"\\": "\\\\", '"': '\\"', "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def _string(text: str) -> str:
    out = []
    for ch in text:
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def toml_key(key: str) -> str:
    """A key as TOML writes it: bare when it can be, else quoted."""
    key = str(key)
    return key if _BARE_KEY.match(key) else _string(key)


def _float(value: float) -> str:
    if math.isnan(value):
        return "nan"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    text = repr(value)
    # TOML needs a digit after the point and refuses a bare exponent without one before it ("1e-05" is fine)
    return text if any(c in text for c in ".en") else text + ".0"


def toml_value(value) -> str:
    """One value as TOML text: bool, int, float, str, or a (nested) list or dict of them (inline)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return _float(value)
    if isinstance(value, str):
        return _string(value)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{toml_key(k)} = {toml_value(v)}" for k, v in value.items()) + "}"
    if hasattr(value, "item") and not hasattr(value, "__len__"):      # a numpy scalar
        return toml_value(value.item())
    raise TypeError(f"cannot write a {type(value).__name__} to TOML: {value!r}")


def dump_table(header: str, body: dict, *, array: bool = False, comment: str = "") -> list[str]:
    """Lines of one table (``[header]``, or ``[[header]]`` with ``array``): plain values first, then each
    value that is a dict as a sub-table ``[header.key]`` and each non-empty list of dicts as an array of
    tables ``[[header.key]]``. None values are left out (TOML has no null)."""
    lines = [f"# {line}" if line else "#" for line in comment.splitlines()]
    lines.append(f"[[{header}]]" if array else f"[{header}]")
    subtables = []
    for key, value in body.items():
        if value is None:
            continue
        if isinstance(value, dict) or (isinstance(value, list) and value and all(isinstance(v, dict) for v in value)):
            subtables.append((key, value))
            continue
        if isinstance(value, (list, tuple)) and len(value) > _PER_LINE:
            # long arrays (measured points) on several lines, _PER_LINE values each
            rows = [", ".join(toml_value(v) for v in value[i:i + _PER_LINE]) for i in range(0, len(value), _PER_LINE)]
            lines += [f"{toml_key(key)} = ["] + [f"    {row}," for row in rows] + ["]"]
            continue
        lines.append(f"{toml_key(key)} = {toml_value(value)}")
    for key, value in subtables:
        for item in (value if isinstance(value, list) else [value]):
            lines += dump_table(f"{header}.{toml_key(key)}", item, array=isinstance(value, list))
    return lines
