"""Jinja2 filters: every number and comment text of an output is formatted here.

Templates only lay out; a value reaches the output only through one of these filters (the
environment refuses anything that is not already a string, see :mod:`obvert.emitter.render`).
"""

from __future__ import annotations

import re
import unicodedata
from typing import Any

import numpy as np

__all__ = [
    "FILTERS",
    "c_axis",
    "c_comment",
    "c_comment_line",
    "c_float",
    "c_hex32",
    "c_int",
    "c_string",
    "c_uint",
    "num",
]

INT32_MIN = -(2**31)
INT32_MAX = 2**31 - 1
UINT32_MAX = 2**32 - 1


def _require_int(value: Any, lo: int, hi: int, what: str) -> int:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
        raise TypeError(f"{what} literal needs an integer, got {value!r}")
    value = int(value)
    if not lo <= value <= hi:
        raise ValueError(f"{value} does not fit {what} [{lo}, {hi}]")
    return value


def c_int(value: Any) -> str:
    """C literal of an int32 value (``INT32_MIN`` written as ``(-2147483647 - 1)``)."""
    value = _require_int(value, INT32_MIN, INT32_MAX, "int32")
    if value == INT32_MIN:
        return "(-2147483647 - 1)"
    return str(value)


def c_uint(value: Any, suffix: str = "u") -> str:
    """C literal of a uint32 value with an unsigned suffix (``412u``, ``100000UL``)."""
    if suffix not in ("u", "UL"):
        raise ValueError(f"suffix = {suffix!r}: allowed 'u', 'UL'")
    return f"{_require_int(value, 0, UINT32_MAX, 'uint32')}{suffix}"


def c_hex32(value: Any) -> str:
    """C literal of a uint32 value in hexadecimal, eight digits (``0x0123ABCDUL``)."""
    return f"0x{_require_int(value, 0, UINT32_MAX, 'uint32'):08X}UL"


def _float32_text(value: Any) -> str:
    """Shortest decimal text that reads back as exactly ``float32(value)``."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (float, np.floating)):
        raise TypeError(f"float literal needs a binary32 or float value, got {value!r}")
    f32 = np.float32(value)
    if not np.isfinite(f32):
        raise ValueError(f"{value!r} is not a finite binary32 value")
    text = np.format_float_positional(f32, unique=True, trim="0")
    if "e" not in text and len(text) > 16:
        text = np.format_float_scientific(f32, unique=True, trim="0")
    if np.float32(text).tobytes() != f32.tobytes():  # pragma: no cover - numpy guarantee
        raise ValueError(f"{text!r} does not read back as binary32 {f32!r}")
    return text


def c_float(value: Any) -> str:
    """C ``float`` literal that the compiler reads back as exactly ``float32(value)``."""
    return _float32_text(value) + "f"


def c_axis(value: Any) -> str:
    """Axis value literal: ``float`` for binary32 values, int32 for integer values."""
    if isinstance(value, np.floating):
        return c_float(value)
    return c_int(value)


def num(value: Any) -> str:
    """Plain text of a number for comments: shortest round-trip repr; ``none`` for None."""
    if value is None:
        return "none"
    if isinstance(value, np.float32):
        return _float32_text(value)
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, float, np.number)):
        raise TypeError(f"num needs a number, got {value!r}")
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    return repr(float(value))


_CONTROL = re.compile(r"[\x00-\x1f\x7f]+")


def c_comment(text: Any) -> str:
    """Text made safe inside a C block comment on one line.

    Control characters become spaces, ``*/`` and ``/*`` are broken up, trigraph starts
    ``??`` are broken up, and non-ASCII letters are reduced to ASCII where possible
    (others become ``?``), so the header is plain ASCII.
    """
    text = unicodedata.normalize("NFKD", str(text))
    text = "".join(ch for ch in text if not unicodedata.combining(ch))
    text = text.encode("ascii", "replace").decode("ascii")
    text = _CONTROL.sub(" ", text)
    while "*/" in text or "/*" in text or "??" in text:
        text = text.replace("*/", "* /").replace("/*", "/ *").replace("??", "? ?")
    return text.rstrip()


def c_comment_line(text: Any) -> str:
    """One line of a block comment: ``" * text"``, or ``" *"`` for an empty line."""
    return (" * " + c_comment(text)).rstrip()


def c_string(text: Any) -> str:
    """C string literal of ASCII text (quotes, backslashes and controls escaped)."""
    out = []
    for ch in str(text):
        code = ord(ch)
        if ch in '"\\':
            out.append("\\" + ch)
        elif 0x20 <= code < 0x7F and ch != "?":
            out.append(ch)
        elif code < 0x100:
            out.append(f"\\{code:03o}")
        else:
            raise ValueError(f"c_string: {ch!r} is not representable in a plain C string")
    return '"' + "".join(out) + '"'


FILTERS = {
    "c_axis": c_axis,
    "c_comment": c_comment,
    "c_comment_line": c_comment_line,
    "c_float": c_float,
    "c_hex32": c_hex32,
    "c_int": c_int,
    "c_string": c_string,
    "c_uint": c_uint,
    "num": num,
}
