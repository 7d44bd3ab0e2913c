"""Firmware lookup semantics, bit-exact with the generated C lookup.

The rule is *conservative corner*: a query (thickness, start temperature) inside the
table's axes is answered by the node at the thickest and coldest corner of its cell,

* ``i`` = smallest index with ``axis_thickness[i] >= thickness``,
* ``j`` = largest index with ``axis_start_temp[j] <= start_temp``,

so a query exactly on a node gets that node. A query outside ``[first, last]`` on either
axis is refused with a status code and no node.

The C lookup compares single-precision (IEEE-754 binary32) values. Float targets take the
thickness in millimetres as ``float``: the thickness axis in the header holds
``float32(thickness_m * 1000.0)`` (product in double, then one rounding to binary32) and the
temperature axis ``float32(start_temp_c)``. Fixed-point targets take ``int32`` thickness in
micrometres and start temperature in centi-degrees Celsius. The axis builders below are the
single source of those values: the emitter writes what they return.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from enum import IntEnum
from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "LookupResult",
    "LookupStatus",
    "lookup",
    "lookup_f32",
    "lookup_fixed",
    "node_events",
    "start_temp_axis_cc",
    "start_temp_axis_f32",
    "thickness_axis_mm_f32",
    "thickness_axis_um",
]

INT32_MIN = -(2**31)
INT32_MAX = 2**31 - 1
#: How far (in output units) a scaled axis value may sit from an integer and still be taken as
#: that integer by the fixed-point conversion (absorbs binary rounding of decimal inputs).
_LATTICE_TOL = 1e-6


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
        A :class:`LookupStatus` value; 0 when a node was found.
    node : int or None
        Node index ``i * n_start_temp + j``, or None when ``status`` is not 0.
    events : tuple of (int, int)
        ``(kind code, at_ticks)`` for each event of the node in table order, the last being
        ``done``; empty when ``status`` is not 0.
    """

    status: int
    node: int | None
    events: tuple[tuple[int, int], ...]


def _axis(manifest: Mapping[str, Any], key: str) -> list[float]:
    """Return axis ``key`` of the manifest as a list of finite floats."""
    try:
        values = manifest["axes"][key]
    except (KeyError, TypeError) as exc:
        raise ValueError(f"manifest field axes.{key} is missing") from exc
    if not isinstance(values, Sequence) or isinstance(values, str) or len(values) == 0:
        raise ValueError(f"axes.{key} = {values!r}: expected a non-empty list of numbers")
    out = []
    for n, v in enumerate(values):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise ValueError(f"axes.{key}[{n}] = {v!r}: expected a finite number")
        out.append(float(v))
    return out


def _strictly_ascending(values: NDArray[Any], field: str, what: str) -> NDArray[Any]:
    """Raise unless ``values`` is strictly ascending after conversion to ``what``."""
    bad = np.flatnonzero(~(values[1:] > values[:-1]))
    if bad.size:
        n = int(bad[0])
        raise ValueError(
            f"{field}[{n}] and [{n + 1}] are {values[n]!r} and {values[n + 1]!r} as {what}: "
            "the axis must be strictly ascending in the firmware's representation"
        )
    return values


def thickness_axis_mm_f32(manifest: Mapping[str, Any]) -> NDArray[np.float32]:
    """Thickness axis as the C float target stores it: ``float32(thickness_m * 1000)``, mm."""
    mm = np.array([v * 1000.0 for v in _axis(manifest, "thickness_m")], dtype=np.float64)
    with np.errstate(over="ignore"):
        f32 = mm.astype(np.float32)
    if not np.all(np.isfinite(f32)):
        raise ValueError(f"axes.thickness_m = {mm / 1000.0!r}: does not fit binary32 in mm")
    return _strictly_ascending(f32, "axes.thickness_m", "float32 mm")


def start_temp_axis_f32(manifest: Mapping[str, Any]) -> NDArray[np.float32]:
    """Start-temperature axis as the C float target stores it: ``float32(start_temp_c)``, degC."""
    c = np.array(_axis(manifest, "start_temp_c"), dtype=np.float64)
    with np.errstate(over="ignore"):
        f32 = c.astype(np.float32)
    if not np.all(np.isfinite(f32)):
        raise ValueError(f"axes.start_temp_c = {c!r}: does not fit binary32")
    return _strictly_ascending(f32, "axes.start_temp_c", "float32 degC")


def _to_lattice(values: list[float], scale: float, field: str, up: bool) -> NDArray[np.int64]:
    """Scale to integer units; off-lattice values round toward the conservative side."""
    out = []
    for n, v in enumerate(values):
        scaled = v * scale
        near = round(scaled)
        if abs(scaled - near) <= _LATTICE_TOL:
            q = near
        else:
            q = math.ceil(scaled) if up else math.floor(scaled)
        if not INT32_MIN <= q <= INT32_MAX:
            raise ValueError(f"{field}[{n}] = {v!r}: {q} does not fit int32")
        out.append(q)
    return _strictly_ascending(np.array(out, dtype=np.int64), field, "int32")


def thickness_axis_um(manifest: Mapping[str, Any]) -> NDArray[np.int64]:
    """Thickness axis of fixed-point targets, integer micrometres.

    A value that is not a whole number of micrometres rounds down: the node then covers
    only queries no thicker than its true thickness (conservative).
    """
    return _to_lattice(_axis(manifest, "thickness_m"), 1e6, "axes.thickness_m", up=False)


def start_temp_axis_cc(manifest: Mapping[str, Any]) -> NDArray[np.int64]:
    """Start-temperature axis of fixed-point targets, integer centi-degrees Celsius.

    A value that is not a whole number of centi-degrees rounds up: the node then covers only
    queries no colder than its true start temperature (conservative).
    """
    return _to_lattice(_axis(manifest, "start_temp_c"), 100.0, "axes.start_temp_c", up=True)


def node_events(manifest: Mapping[str, Any], node: int) -> tuple[tuple[int, int], ...]:
    """``(kind code, at_ticks)`` of each event of node ``node``, in table order."""
    kinds = manifest["event_kinds"]
    events = manifest["nodes"][node]["events"]
    return tuple((int(kinds[e["kind"]]), int(e["at_ticks"])) for e in events)


def _refused(status: LookupStatus) -> LookupResult:
    return LookupResult(status=int(status), node=None, events=())


def _found(manifest: Mapping[str, Any], i: int, j: int, n_temps: int) -> LookupResult:
    node = i * n_temps + j
    return LookupResult(status=0, node=node, events=node_events(manifest, node))


def _locate(
    manifest: Mapping[str, Any], x: Any, t: Any, axis_x: NDArray[Any], axis_t: NDArray[Any]
) -> LookupResult:
    """Range checks then the conservative-corner search, in the C order of checks."""
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
    return _found(manifest, i, j, axis_t.size)


def lookup_f32(
    manifest: Mapping[str, Any], thickness_mm: float, start_temp_c: float
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

    Returns
    -------
    LookupResult
        Identical to what ``<prefix>_lookup((float)thickness_mm, (float)start_temp_c, &out)``
        returns in the generated C.
    """
    with np.errstate(over="ignore"):
        x = np.float32(thickness_mm)
        t = np.float32(start_temp_c)
    if np.isnan(x) or np.isnan(t):
        return _refused(LookupStatus.NAN)
    axis_x = thickness_axis_mm_f32(manifest)
    axis_t = start_temp_axis_f32(manifest)
    return _locate(manifest, x, t, axis_x, axis_t)


def lookup(manifest: Mapping[str, Any], thickness_m: float, start_temp_c: float) -> LookupResult:
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

    Returns
    -------
    LookupResult
        The status, node and events the generated C float lookup returns for those inputs.
    """
    return lookup_f32(manifest, float(thickness_m) * 1000.0, float(start_temp_c))


def lookup_fixed(
    manifest: Mapping[str, Any], thickness_um: int, start_temp_cc: int
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

    Returns
    -------
    LookupResult
        Identical to the generated C ``<prefix>_lookup(thickness_um, start_temp_cc, &out)``.
    """
    for name, value in (("thickness_um", thickness_um), ("start_temp_cc", start_temp_cc)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
            raise TypeError(f"{name} = {value!r}: expected an int")
        if not INT32_MIN <= int(value) <= INT32_MAX:
            raise ValueError(f"{name} = {value!r}: outside int32 [{INT32_MIN}, {INT32_MAX}]")
    axis_x = thickness_axis_um(manifest)
    axis_t = start_temp_axis_cc(manifest)
    return _locate(manifest, int(thickness_um), int(start_temp_cc), axis_x, axis_t)
