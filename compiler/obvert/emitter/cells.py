"""Cell data of the C targets: corner-rule done pads, bilinear cell rows, banner lines.

The corner rule's answer is a function of the node (node ``(i, j)`` always lies in cell
``(max(i-1, 0), min(j, nT-2))``), so corner targets carry the cell pad inside the node rows
and keep their struct and lookup code. Bilinear targets carry the node rows unpadded plus one
row per cell (rule applied, pad, margin) and return the events by value.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Any

from obvert.emitter.errors import EmitError
from obvert.emitter.filters import INT32_MAX, INT32_MIN, num
from obvert.emitter.profile import TargetProfile
from obvert.firmware.lookup import WEIGHT_ONE, bilinear_applies, cells_for_rule

__all__ = [
    "BILINEAR_TICK_LIMIT",
    "bilinear_context",
    "cell_bytes",
    "corner_pads",
    "envelope_lines",
    "uses_cells",
]

#: Largest event time (ticks) a bilinear target accepts: 2**24 * W**2 = 2**56 keeps the
#: int64 weighted sums far from overflow.
BILINEAR_TICK_LIMIT = 2**24
_TIME_BYTES = {"uint16_t": 2, "uint32_t": 4}
_NODE_NONE = 2**16 - 1  # node, i and j of an interpolated answer; node indices stay below
_UNITS = (("_fraction", "(fraction)"), ("_k", "K"), ("_s", "s"), ("_m", "m"), ("_c", "degC"))


def _cells(manifest: dict[str, Any], rule: str) -> list[Any] | None:
    try:
        return cells_for_rule(manifest, rule)
    except ValueError as exc:
        text = str(exc)
        msg = text if text.startswith("manifest field") else f"manifest field {text}"
        raise EmitError(msg) from None


def uses_cells(manifest: dict[str, Any], target: TargetProfile) -> bool:
    """Whether the header speaks of cells, tolerances and the envelope (new manifests)."""
    return target.lookup == "bilinear" or "cells" in manifest or "tolerances" in manifest


def corner_pads(manifest: dict[str, Any]) -> list[int]:
    """Done pad of each node's cell under the corner rule, ticks (0 without cells)."""
    n_x = len(manifest["axes"]["thickness_m"])
    n_t = len(manifest["axes"]["start_temp_c"])
    cells = _cells(manifest, "corner")
    if cells is None:
        return [0] * (n_x * n_t)
    return [
        int(cells[max(i - 1, 0) * (n_t - 1) + min(j, n_t - 2)]["done_pad_ticks"])
        for i in range(n_x)
        for j in range(n_t)
    ]


def _margin_mlog(value: Any, field: str) -> int:
    """Margin in milli-log10 units, rounded down (never over-states the margin)."""
    mlog = math.floor(Fraction(value) * 1000)
    if not INT32_MIN <= mlog <= INT32_MAX:
        raise EmitError(f"manifest field {field} = {value!r}: too big for int32 milli-log10")
    return mlog


def _struct_reserved(width: int, time_type: str) -> tuple[int, int]:
    """Reserved bytes that make the schedule struct a multiple of 4 bytes, and its size."""
    size = 4 + 4 + width * _TIME_BYTES[time_type] + 5 * 2 + 1 + width
    reserved = (-size) % 4
    return reserved, size + reserved


def _check_ticks(manifest: dict[str, Any], target: TargetProfile, pad: int, t_max: int) -> int:
    """Largest node tick; refuse it above the int64 guard or, with ``pad``, the time type."""
    ticks = [int(e["at_ticks"]) for n in manifest["nodes"] for e in n["events"]]
    largest = max(ticks)
    if largest > BILINEAR_TICK_LIMIT:
        raise EmitError(
            f"manifest field nodes[..].events[..].at_ticks = {largest}: target "
            f"{target.name!r} (lookup 'bilinear') allows at most 2**24 = {BILINEAR_TICK_LIMIT} "
            "ticks (int64 overflow guard of the interpolation)"
        )
    if largest + pad > t_max:
        raise EmitError(
            f"manifest field nodes[..].events[..].at_ticks = {largest} plus the largest done "
            f"pad {pad}: exceeds {target.time_type} ({t_max}) of target {target.name!r}"
        )
    return largest


def bilinear_context(manifest: dict[str, Any], target: TargetProfile, t_max: int) -> dict:
    """Cell rows, struct layout and limits of a bilinear target.

    Parameters
    ----------
    manifest : dict
        A checked manifest.
    target : TargetProfile
        A target with ``lookup = "bilinear"``.
    t_max : int
        Largest value of the target's time type, ticks.

    Returns
    -------
    dict
        ``cells`` (rows: index, ci, cj, mode 1 bilinear / 0 corner, pad, margin_mlog,
        label), ``n_cells``, ``max_node_ticks``, ``struct_reserved``, ``struct_bytes``,
        ``weight_one`` and ``node_none``.

    Raises
    ------
    EmitError
        If an axis has one value, ``cells.bilinear`` is missing or malformed, a tick value
        exceeds 2**24 or the time type, or the table has more nodes than uint16 indices.
    """
    cells = _cells(manifest, "bilinear") or []
    n_nodes = len(manifest["nodes"])
    if n_nodes >= _NODE_NONE:
        raise EmitError(
            f"manifest field nodes has {n_nodes} nodes; target {target.name!r} allows at "
            f"most {_NODE_NONE - 1} (uint16 index, {_NODE_NONE} means none)"
        )
    rows = []
    for k, cell in enumerate(cells):
        field = f"cells.bilinear[{k}].min_margin_log"
        where = f"cell {k}: ci {cell['ci']}, cj {cell['cj']}"
        rows.append(
            {
                "index": k,
                "mode": 1 if bilinear_applies(manifest, cells, k) else 0,
                "pad": int(cell["done_pad_ticks"]),
                "margin_mlog": _margin_mlog(cell["min_margin_log"], field),
                "label": f"{where}: {_mode_text(cell, k, cells, manifest)}",
            }
        )
    largest = _check_ticks(manifest, target, max(r["pad"] for r in rows), t_max)
    reserved, size = _struct_reserved(int(manifest["max_events"]), target.time_type)
    return {
        "cells": rows,
        "n_cells": len(rows),
        "max_node_ticks": largest,
        "tick_limit": BILINEAR_TICK_LIMIT,
        "struct_reserved": reserved,
        "struct_bytes": size,
        "weight_one": WEIGHT_ONE,
        "node_none": _NODE_NONE,
    }


def _mode_text(cell: Any, k: int, cells: list[Any], manifest: dict[str, Any]) -> str:
    if bilinear_applies(manifest, cells, k):
        return "interpolated"
    if cell["rule"] == "corner":
        return "corner rule (certified so)"
    return "corner rule (the corners differ in event kinds)"


def cell_bytes(n_cells: int, time_type: str) -> int:
    """Bytes of the per-cell const arrays of a bilinear target (rule, pad, margin)."""
    return n_cells * (1 + _TIME_BYTES[time_type] + 4)


def _tolerance_text(name: str, value: Any) -> str:
    unit = next((u for suffix, u in _UNITS if name.endswith(suffix)), "(no unit)")
    if value is None:
        return f"{name}: not declared"
    if isinstance(value, list):
        return f"{name} = [{num(value[0])}, {num(value[1])}] {unit}"
    return f"{name} = {num(value)} {unit}"


def envelope_lines(manifest: dict[str, Any], target: TargetProfile, cells: list[Any]) -> list[str]:
    """Banner lines: certified envelope, the refusal outside it, tolerances, cell summary."""
    env = manifest["envelope"]
    lines = [
        f"Certified envelope: thickness {num(env['thickness_m'][0])} to "
        f"{num(env['thickness_m'][1])} m, start temperature {num(env['start_temp_c'][0])} to "
        f"{num(env['start_temp_c'][1])} degC.",
        "Inputs outside the envelope (or not a number) return a status code, never a schedule.",
    ]
    tolerances = manifest.get("tolerances")
    if not tolerances:
        lines.append("Tolerances: no tolerances declared.")
    else:
        lines.append("Declared tolerances the table is certified under:")
        lines += [f"  {_tolerance_text(k, tolerances[k])}" for k in sorted(tolerances)]
    if target.lookup == "bilinear":
        interp = sum(row["mode"] for row in cells)
        lines.append(
            f"Cells: {len(cells)}; interpolated in {interp}, corner rule in "
            f"{len(cells) - interp}; largest done pad {max(r['pad'] for r in cells)} ticks."
        )
    else:
        pads = corner_pads(manifest)
        lines.append(f"Corner rule; largest done pad {max(pads)} ticks (included in the rows).")
    return lines
