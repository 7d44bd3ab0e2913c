"""The error raised for bad spec input, and how it shows a value the way it was typed."""

from __future__ import annotations

import datetime as _dt
import json
import math
import re


class _Missing:
    """Marker of a required field that the spec does not hold (singleton :data:`MISSING`)."""

    def __repr__(self) -> str:
        return "MISSING"


#: The ``value`` of a SpecError about a required field that is absent.
MISSING = _Missing()

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
_MAX_SHOWN = 120


def toml_text(value: object, depth: int = 0) -> str:
    """A TOML value written the way a user types it: ``"5 mm"``, ``true``, ``nan``, ``[1, 2]``.

    Parameters
    ----------
    value : object
        A value parsed from TOML (or a path, for file errors).
    depth : int
        Nesting depth reached so far (deep values are elided).

    Returns
    -------
    str
        The TOML text, at most about 120 characters (longer ones end in "...").
    """
    if depth > 4:
        return "..."
    if isinstance(value, bool):
        out = "true" if value else "false"
    elif isinstance(value, float):
        if math.isnan(value):
            out = "nan"
        elif math.isinf(value):
            out = "inf" if value > 0 else "-inf"
        else:
            out = repr(value)
    elif isinstance(value, int):
        out = (
            str(value) if abs(value) < 10**30 else f"{str(value)[:12]}...({len(str(value))} digits)"
        )
    elif isinstance(value, str):
        out = json.dumps(value, ensure_ascii=False)
    elif isinstance(value, list):
        out = "[" + ", ".join(toml_text(v, depth + 1) for v in value[:16])
        out += ", ...]" if len(value) > 16 else "]"
    elif isinstance(value, dict):
        items = list(value.items())[:16]
        body = ", ".join(
            f"{k if _BARE_KEY.match(str(k)) else json.dumps(str(k))} = {toml_text(v, depth + 1)}"
            for k, v in items
        )
        out = "{" + body + (", ...}" if len(value) > 16 else "}")
    elif isinstance(value, _dt.date | _dt.time):
        out = value.isoformat()
    else:
        out = repr(value)
    return out if len(out) <= _MAX_SHOWN else out[: _MAX_SHOWN - 3] + "..."


class SpecError(ValueError):
    """A spec field holds a value that is not allowed.

    The message reads ``<path> = <value as typed>: allowed <allowed>`` (or
    ``<path> is missing: allowed <allowed>`` for an absent required field).

    Parameters
    ----------
    path : str
        Dotted path of the field as in the file, e.g. ``appliance.plate_temperature``.
    value : object
        The offending value as given (:data:`MISSING` when absent).
    allowed : str
        What the field accepts (one statement; the message adds the word "allowed").
    """

    def __init__(self, path: str, value: object, allowed: str) -> None:
        self.path, self.value, self.allowed = path, value, allowed
        shown = " is missing" if value is MISSING else f" = {toml_text(value)}"
        super().__init__(f"{path}{shown}: allowed {allowed}")
