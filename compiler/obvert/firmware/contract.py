"""The firmware contract's constants: format version, event codes, lookup rules, ticks.

Everything here is part of the table format that emitted files and appliances rely on;
changing a value means a new :data:`FORMAT_VERSION` (see docs/table-format.md).
"""

from __future__ import annotations

#: Version of the canonical manifest. Bumped whenever a field is added, removed or changes
#: meaning. Version 2: cells per lookup rule, certificates per node (reference error budget,
#: extension), ``extension_s`` instead of ``correction_s``, ``z_k`` instead of ``z_k``.
FORMAT_VERSION = 2

#: Event kinds and their codes in emitted tables.
EVENT_CODES: dict[str, int] = {"done": 0, "flip": 1, "platen_close": 2, "platen_open": 3}

#: Event kind of each code.
EVENT_KINDS: dict[int, str] = {v: k for k, v in EVENT_CODES.items()}

#: Lookup rules a firmware target can run.
RULES: tuple[str, ...] = ("corner", "bilinear")

#: What each rule does, in words written into the manifest and the generated code.
RULE_TEXT: dict[str, str] = {
    "corner": (
        "For a measured thickness x and start temperature t inside the envelope, take "
        "i = the smallest index with thickness_m[i] >= x and j = the largest index with "
        "start_temp_c[j] <= t, and run node i * n_start_temp + j: the thickest and coldest "
        "corner of the cell that holds (x, t). A value on a node uses that node. Outside "
        "the envelope, or NaN, no schedule is returned."
    ),
    "bilinear": (
        "bilinear: the cell of the query (ci, cj) is located as for the conservative corner; "
        "each event time is interpolated between the cell's four corner nodes with integer "
        "weights in units of 65536 and rounded up to a whole tick; a cell certified for the "
        "corner rule only, or whose corners differ in their event kinds, uses the conservative "
        "corner (thickest, coldest corner node). The cell's certified done pad is added to done "
        "(and to a platen opening at the done tick)."
    ),
}

#: Manifest name of the corner rule (kept from format version 1).
CORNER_RULE_NAME = "conservative_corner"


def to_ticks(at_s: float, tick_s: float) -> int:
    """Whole ticks of a quantised time.

    Parameters
    ----------
    at_s : float
        A time that is a whole number of ticks up to rounding, s.
    tick_s : float
        Firmware tick, s.

    Returns
    -------
    int
        ``round(at_s / tick_s)``, ticks.
    """
    return round(at_s / tick_s)
