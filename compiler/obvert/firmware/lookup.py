"""Firmware lookup semantics, bit-exact with the generated C (full rule: docs/table-format.md).

Both rules run the range checks first (NaN, thickness below/above, start temperature
below/above: outside ``[first, last]`` of an axis a status, never a schedule), then take the
corner node ``i`` = smallest index with ``X[i] >= x``, ``j`` = largest with ``T[j] <= t``, and
the cell ``ci = max(i - 1, 0)``, ``cj = min(j, nT - 2)``, index ``ci * (nT - 1) + cj``.

* ``corner``: the events of node ``i * nT + j`` (thickest, coldest corner of the cell).
* ``bilinear``: every event time blended from the corners ``a00 = (ci, cj)``,
  ``a10 = (ci+1, cj)``, ``a01 = (ci, cj+1)``, ``a11 = (ci+1, cj+1)`` with weights in units of
  ``W = 65536``: binary32 ``wx = (int32)(((x - X[ci]) / (X[ci+1] - X[ci])) * 65536.0f)``
  (every operation rounded to binary32, truncation) on float targets,
  ``wx = (x - X[ci]) * 65536 // (X[ci+1] - X[ci])`` in integers on fixed targets, clamped to
  ``[0, W]``; ``wt`` likewise; tick ``= ceil(num / W**2)`` with ``num = a00 (W-wx)(W-wt) +
  a10 wx (W-wt) + a01 (W-wx) wt + a11 wx wt``. A cell marked ``"corner"``, or whose corners
  differ in event-kind sequence, answers by the corner rule.

Both add the cell's ``done_pad_ticks`` to ``done`` and to a ``platen_open`` at done's tick;
without cells (old manifests, or an axis of one value) the corner pad is 0 and the bilinear
rule is unavailable. Float targets take binary32 thickness in mm (axis
``float32(thickness_m * 1000.0)``, product in double) and degC (axis ``float32(start_temp_c)``);
fixed targets int32 micrometres and centi-degrees. The axis builders below are the single
source of those values: the emitter writes what they return.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from enum import IntEnum
from typing import Any

import numpy as np
from numpy.typing import NDArray

from obvert.firmware.axes import (
    INT32_MAX,
    INT32_MIN,
    axis_values,
    start_temp_axis_cc,
    start_temp_axis_f32,
    thickness_axis_mm_f32,
    thickness_axis_um,
)
from obvert.firmware.contract import RULES

__all__ = [
    "RULES",
    "WEIGHT_ONE",
    "LookupResult",
    "LookupStatus",
    "bilinear_applies",
    "cells_for_rule",
    "lookup",
    "lookup_f32",
    "lookup_fixed",
    "node_events",
    "start_temp_axis_cc",
    "start_temp_axis_f32",
    "thickness_axis_mm_f32",
    "thickness_axis_um",
]

#: Lookup rules a firmware target can run.
#: Unit weight of the bilinear rule (a weight of 1 is ``WEIGHT_ONE``).
WEIGHT_ONE = 65536
_CELL_RULES = {"corner": ("corner",), "bilinear": ("bilinear", "corner")}
_F32_ONE = np.float32(WEIGHT_ONE)


class LookupStatus(IntEnum):
    """Status codes of the lookup; the C header defines the same values as macros."""

    OK = 0
    NULL_OUT = -1
    NAN = -2
    THICKNESS_BELOW = -3
    THICKNESS_ABOVE = -4
    START_TEMP_BELOW = -5
    START_TEMP_ABOVE = -6


@dataclass(frozen=True)
class LookupResult:
    """Answer of one lookup.

    Attributes
    ----------
    status : int
        A :class:`LookupStatus` value; 0 when a schedule was found.
    node : int or None
        Node index ``i * n_start_temp + j`` whose events were returned (corner rule, and
        bilinear fallback); None when refused or when bilinear interpolation was applied.
    events : tuple of (int, int)
        ``(kind code, at_ticks)`` for each event in table order, the last being ``done``
        (cell pad included); empty when ``status`` is not 0.
    cell : int or None
        Cell index ``ci * (n_start_temp - 1) + cj``; None when refused or the manifest has
        no cells.
    rule_used : str or None
        ``"corner"`` or ``"bilinear"``: what answered; None when refused.
    """

    status: int
    node: int | None
    events: tuple[tuple[int, int], ...]
    cell: int | None = None
    rule_used: str | None = None


def node_events(manifest: Mapping[str, Any], node: int) -> tuple[tuple[int, int], ...]:
    """``(kind code, at_ticks)`` of each event of node ``node``, in table order."""
    kinds = manifest["event_kinds"]
    events = manifest["nodes"][node]["events"]
    return tuple((int(kinds[e["kind"]]), int(e["at_ticks"])) for e in events)


def _check_cell(cell: Any, field: str, ci: int, cj: int, rules: tuple[str, ...]) -> None:
    """Raise unless ``cell`` is a cell dict at ``(ci, cj)`` with a rule from ``rules``."""
    if not isinstance(cell, Mapping):
        raise ValueError(f"{field} = {cell!r}: expected an object")
    for key, want in (("ci", ci), ("cj", cj)):
        got = cell.get(key)
        if isinstance(got, bool) or got != want:
            raise ValueError(f"{field}.{key} = {got!r}: cells are ci-major, expected {want}")
    if cell.get("rule") not in rules:
        raise ValueError(f"{field}.rule = {cell.get('rule')!r}: allowed {list(rules)}")
    pad = cell.get("done_pad_ticks")
    if isinstance(pad, bool) or not isinstance(pad, int) or pad < 0:
        raise ValueError(f"{field}.done_pad_ticks = {pad!r}: expected an integer >= 0")


def cells_for_rule(manifest: Mapping[str, Any], rule: str) -> list[Mapping[str, Any]] | None:
    """Validated ``manifest["cells"][rule]`` (ci-major), or None: corner rule without cells.

    The corner rule has no cells (pad 0) when the manifest has none or an axis has one
    value. Raises ValueError naming the field for an unknown rule, a bilinear rule on a
    single-value axis or without ``cells.bilinear``, or a malformed cell.
    """
    if rule not in RULES:
        raise ValueError(f"rule = {rule!r}: allowed {list(RULES)}")
    n_x = len(axis_values(manifest, "thickness_m"))
    n_t = len(axis_values(manifest, "start_temp_c"))
    for key, n in (("thickness_m", n_x), ("start_temp_c", n_t)):
        if n < 2 and rule == "bilinear":
            raise ValueError(
                f"rule 'bilinear' needs at least 2 values on axes.{key}; the table has {n} "
                "(use the corner rule)"
            )
    cells = manifest.get("cells")
    if cells is not None and not isinstance(cells, Mapping):
        raise ValueError(f"cells = {cells!r}: expected an object keyed by rule name")
    if rule == "corner" and (n_x < 2 or n_t < 2 or cells is None or "corner" not in cells):
        return None
    if cells is None or rule not in cells:
        raise ValueError(f"manifest field cells.{rule} is missing: rule {rule!r} needs it")
    values, want = cells[rule], (n_x - 1) * (n_t - 1)
    if not isinstance(values, list) or len(values) != want:
        count = len(values) if isinstance(values, list) else values
        raise ValueError(f"cells.{rule} = {count!r}: expected a list of {want} cells")
    for k, cell in enumerate(values):
        _check_cell(cell, f"cells.{rule}[{k}]", k // (n_t - 1), k % (n_t - 1), _CELL_RULES[rule])
    return values


def _corners(ci: int, cj: int, n_t: int) -> tuple[int, int, int, int]:
    """Node indices of corners ``(ci, cj), (ci+1, cj), (ci, cj+1), (ci+1, cj+1)``."""
    n00 = ci * n_t + cj
    return n00, n00 + n_t, n00 + 1, n00 + n_t + 1


def bilinear_applies(manifest: Mapping[str, Any], cells: Sequence[Any], k: int) -> bool:
    """True if cell ``k`` interpolates: rule "bilinear" and four equal event-kind sequences."""
    cell, nodes = cells[k], manifest["nodes"]
    corners = _corners(cell["ci"], cell["cj"], len(manifest["axes"]["start_temp_c"]))
    kinds = {tuple(e["kind"] for e in nodes[n]["events"]) for n in corners}
    return cell["rule"] == "bilinear" and len(kinds) == 1


def _refused(status: LookupStatus) -> LookupResult:
    return LookupResult(status=int(status), node=None, events=())


Events = tuple[tuple[int, int], ...]


def _padded(manifest: Mapping[str, Any], events: Events, pad: int) -> Events:
    """Add ``pad`` to ``done`` and to a ``platen_open`` at the same tick as ``done``."""
    kinds = manifest["event_kinds"]
    done, opened = int(kinds["done"]), kinds.get("platen_open")
    done_at = events[-1][1]
    return tuple(
        (k, at + pad) if k == done or (k == opened and at == done_at) else (k, at)
        for k, at in events
    )


def _interpolated(
    manifest: Mapping[str, Any], corners: tuple[int, ...], wx: int, wt: int
) -> Events:
    """Event times of the four corners blended with weights ``wx``, ``wt`` (units W)."""
    one = WEIGHT_ONE
    weights = ((one - wx) * (one - wt), wx * (one - wt), (one - wx) * wt, wx * wt)
    rows = [node_events(manifest, n) for n in corners]
    out = []
    for k, (kind, _) in enumerate(rows[0]):
        num = sum(w * row[k][1] for w, row in zip(weights, rows, strict=True))
        out.append((kind, (num + one * one - 1) // (one * one)))
    return tuple(out)


Weight = Callable[[Any, Any, Any], int]


def _locate(
    manifest: Mapping[str, Any],
    x: Any,
    t: Any,
    axes: tuple[NDArray[Any], NDArray[Any]],
    cells: list[Mapping[str, Any]] | None,
    weight: Weight | None,
) -> LookupResult:
    """Range checks, the corner search, then the rule (C order); ``weight`` None: corner."""
    axis_x, axis_t = axes
    if x < axis_x[0]:
        return _refused(LookupStatus.THICKNESS_BELOW)
    if x > axis_x[-1]:
        return _refused(LookupStatus.THICKNESS_ABOVE)
    if t < axis_t[0]:
        return _refused(LookupStatus.START_TEMP_BELOW)
    if t > axis_t[-1]:
        return _refused(LookupStatus.START_TEMP_ABOVE)
    i = int(np.searchsorted(axis_x, x, side="left"))
    j = int(np.searchsorted(axis_t, t, side="right")) - 1
    n_t = axis_t.size
    node = i * n_t + j
    if cells is None:
        return LookupResult(0, node, node_events(manifest, node), None, "corner")
    ci, cj = max(i - 1, 0), min(j, n_t - 2)
    cell = ci * (n_t - 1) + cj
    pad = int(cells[cell]["done_pad_ticks"])
    if weight is not None and bilinear_applies(manifest, cells, cell):
        wx = weight(x, axis_x[ci], axis_x[ci + 1])
        wt = weight(t, axis_t[cj], axis_t[cj + 1])
        events = _interpolated(manifest, _corners(ci, cj, n_t), wx, wt)
        return LookupResult(0, None, _padded(manifest, events, pad), cell, "bilinear")
    return LookupResult(
        0, node, _padded(manifest, node_events(manifest, node), pad), cell, "corner"
    )


def _weight_f32(v: np.float32, lo: np.float32, hi: np.float32) -> int:
    """``(int32)(((v - lo) / (hi - lo)) * 65536.0f)`` in binary32, clamped to [0, W]."""
    d = np.float32(v - lo)
    w = np.float32(hi - lo)
    return min(max(int(np.float32(np.float32(d / w) * _F32_ONE)), 0), WEIGHT_ONE)


def _weight_int(v: int, lo: int, hi: int) -> int:
    """``(v - lo) * 65536 // (hi - lo)`` in integers, clamped to [0, W]."""
    return min(max(((int(v) - int(lo)) * WEIGHT_ONE) // (int(hi) - int(lo)), 0), WEIGHT_ONE)


def lookup_f32(
    manifest: Mapping[str, Any],
    thickness_mm: float,
    start_temp_c: float,
    *,
    rule: str = "corner",
) -> LookupResult:
    """Look up as the C float target does, on binary32 inputs.

    Parameters
    ----------
    manifest : dict
        Canonical manifest of the table.
    thickness_mm : float
        Thickness, mm; converted to ``numpy.float32`` first (exact if it already is one).
    start_temp_c : float
        Start (core) temperature, degC; converted to ``numpy.float32`` first.
    rule : str
        ``"corner"`` (targets ``c99``) or ``"bilinear"`` (targets ``c99_bilinear``).

    Returns
    -------
    LookupResult
        Identical to what ``<prefix>_lookup((float)thickness_mm, (float)start_temp_c, &out)``
        returns in the generated C of a target with that rule.

    Raises
    ------
    ValueError
        For an unknown ``rule``, or cells the rule needs missing or malformed.
    """
    cells = cells_for_rule(manifest, rule)
    with np.errstate(over="ignore"):
        x = np.float32(thickness_mm)
        t = np.float32(start_temp_c)
    if np.isnan(x) or np.isnan(t):
        return _refused(LookupStatus.NAN)
    axes = (thickness_axis_mm_f32(manifest), start_temp_axis_f32(manifest))
    return _locate(manifest, x, t, axes, cells, _weight_f32 if rule == "bilinear" else None)


def lookup(
    manifest: Mapping[str, Any], thickness_m: float, start_temp_c: float, *, rule: str = "corner"
) -> LookupResult:
    """Look up a cook program by thickness (m) and start temperature (degC).

    Parameters
    ----------
    manifest : dict
        Canonical manifest of the table.
    thickness_m : float
        Thickness, m. It is converted as ``float32(thickness_m * 1000.0)`` (product in
        double precision), i.e. what a C caller passes as ``(float)(thickness_m * 1000.0)``.
    start_temp_c : float
        Start temperature, degC, converted to ``float32``.
    rule : str
        ``"corner"`` or ``"bilinear"``, see :func:`lookup_f32`.

    Returns
    -------
    LookupResult
        The answer of the generated C float lookup for those inputs.
    """
    return lookup_f32(manifest, float(thickness_m) * 1000.0, float(start_temp_c), rule=rule)


def lookup_fixed(
    manifest: Mapping[str, Any],
    thickness_um: int,
    start_temp_cc: int,
    *,
    rule: str = "corner",
) -> LookupResult:
    """Look up as the C fixed-point target does, on int32 inputs.

    Parameters
    ----------
    manifest : dict
        Canonical manifest of the table.
    thickness_um : int
        Thickness, micrometres, within int32.
    start_temp_cc : int
        Start temperature, centi-degrees Celsius (0.01 degC), within int32.
    rule : str
        ``"corner"`` (target ``c99_fixed``) or ``"bilinear"`` (``c99_fixed_bilinear``).

    Returns
    -------
    LookupResult
        Identical to the generated C ``<prefix>_lookup(thickness_um, start_temp_cc, &out)``.

    Raises
    ------
    TypeError, ValueError
        For inputs that are not int32, an unknown ``rule``, or missing or malformed cells.
    """
    for name, value in (("thickness_um", thickness_um), ("start_temp_cc", start_temp_cc)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
            raise TypeError(f"{name} = {value!r}: expected an int")
        if not INT32_MIN <= int(value) <= INT32_MAX:
            raise ValueError(f"{name} = {value!r}: outside int32 [{INT32_MIN}, {INT32_MAX}]")
    cells = cells_for_rule(manifest, rule)
    axes = (thickness_axis_um(manifest), start_temp_axis_cc(manifest))
    x, t = int(thickness_um), int(start_temp_cc)
    return _locate(manifest, x, t, axes, cells, _weight_int if rule == "bilinear" else None)
