"""Table axes as the firmware stores them (binary32 mm and degC, or int32 um and 0.01 degC).

The axis builders are the single source of the values the emitter writes and the Python
lookup compares against (see :mod:`obvert.firmware.lookup`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

INT32_MIN = -(2**31)
INT32_MAX = 2**31 - 1
#: How far (in output units) a scaled axis value may sit from an integer and still be taken as
#: that integer by the fixed-point conversion (absorbs binary rounding of decimal inputs).
_LATTICE_TOL = 1e-6


def axis_values(manifest: Mapping[str, Any], key: str) -> list[float]:
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
    mm = np.array([v * 1000.0 for v in axis_values(manifest, "thickness_m")], dtype=np.float64)
    with np.errstate(over="ignore"):
        f32 = mm.astype(np.float32)
    if not np.all(np.isfinite(f32)):
        raise ValueError(f"axes.thickness_m = {mm / 1000.0!r}: does not fit binary32 in mm")
    return _strictly_ascending(f32, "axes.thickness_m", "float32 mm")


def start_temp_axis_f32(manifest: Mapping[str, Any]) -> NDArray[np.float32]:
    """Start-temperature axis as the C float target stores it: ``float32(start_temp_c)``, degC."""
    c = np.array(axis_values(manifest, "start_temp_c"), dtype=np.float64)
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
    return _to_lattice(axis_values(manifest, "thickness_m"), 1e6, "axes.thickness_m", up=False)


def start_temp_axis_cc(manifest: Mapping[str, Any]) -> NDArray[np.int64]:
    """Start-temperature axis of fixed-point targets, integer centi-degrees Celsius.

    A value that is not a whole number of centi-degrees rounds up: the node then covers only
    queries no colder than its true start temperature (conservative).
    """
    return _to_lattice(axis_values(manifest, "start_temp_c"), 100.0, "axes.start_temp_c", up=True)
