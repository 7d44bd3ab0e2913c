"""Synthetic manifests with cells and tolerances (invented numbers, documented schema).

A plain module (not a conftest) so that tests/golden can load it with importlib as well.
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

_NAME = "obvert_tests_manifest_base"
if _NAME not in sys.modules:
    _SPEC = importlib.util.spec_from_file_location(
        _NAME, Path(__file__).resolve().parents[1] / "conftest_manifest.py"
    )
    _MOD = importlib.util.module_from_spec(_SPEC)
    sys.modules[_NAME] = _MOD
    _SPEC.loader.exec_module(_MOD)
manifest_module = sys.modules[_NAME]


# Bilinear test tables: one event pattern on every node but ODD_NODE, so cells touching it
# fall back to the corner rule; platen_open at the done tick on the nodes in OPEN_AT_DONE.
SHARED_PATTERN = ("platen_close", "flip", "platen_open", "done")
ODD_PATTERN = ("flip", "flip", "done")
ODD_NODE = 5
OPEN_AT_DONE = (0, 4, 7, 10)
TOLERANCES = {
    "contact_low_fraction": 0.15,
    "fat_fraction": [0.15, 0.25],
    "plate_droop_k": 12.0,
    "plate_offset_k": 5.0,
    "plate_recovery_s": 40.0,
    "start_temp_error_k": 1.0,
    "thickness_error_m": 0.0005,
}


def _cell_events(k: int, done: int, tick_s: float) -> list[dict]:
    """Events of node ``k`` with done at ``done`` ticks (invented, distinct gaps)."""
    if k == ODD_NODE:
        ticks = [done * 3 // 10, done * 6 // 10, done]
        kinds = ODD_PATTERN
    else:
        opened = done if k in OPEN_AT_DONE else done * (70 + k) // 100
        ticks = [done // (8 + k % 3), done * (40 + k) // 100, opened, done]
        kinds = SHARED_PATTERN
    return [
        {"kind": kind, "at_s": round(t * tick_s, 6), "at_ticks": t}
        for kind, t in zip(kinds, ticks, strict=True)
    ]


def _honest_margin(m: dict, ci: int, cj: int, corner: bool, k: int) -> float:
    """A cell margin no larger than what its lookup returns (the contract checks this)."""
    n_t = len(m["axes"]["start_temp_c"])
    nodes = m["nodes"]
    if corner:
        return float(nodes[(ci + 1) * n_t + cj]["margin_log"])
    low = min(float(nodes[(ci + a) * n_t + cj + b]["margin_log"]) for a in (0, 1) for b in (0, 1))
    return round(low - 0.0071 * (k % 5), 6)  # samples inside the cell: a little lower


def _cell_list(m: dict, rule: str, pads, corner_cells=()) -> list[dict]:
    ax, at = m["axes"]["thickness_m"], m["axes"]["start_temp_c"]
    cells = []
    for ci in range(len(ax) - 1):
        for cj in range(len(at) - 1):
            k = ci * (len(at) - 1) + cj
            as_corner = rule == "corner" or k in corner_cells
            cells.append({
                "ci": ci,
                "cj": cj,
                "rule": "corner" if as_corner else "bilinear",
                "done_pad_ticks": pads(k),
                "min_margin_log": _honest_margin(m, ci, cj, as_corner, k),
                "at": {"thickness_m": (ax[ci] + ax[ci + 1]) / 2,
                       "start_temp_c": (at[cj] + at[cj + 1]) / 2},
            })  # fmt: skip
    return cells


def cells_manifest(
    name: str = "synthetic_grill",
    thickness_m: tuple[float, ...] = (0.006, 0.009, 0.0125, 0.015),
    start_temp_c: tuple[float, ...] = (-18.0, 0.0, 4.0),
    max_ticks: int | None = None,
    tolerances: dict | None = TOLERANCES,
) -> dict:
    """Synthetic manifest with ``cells`` (both rules) and ``tolerances`` (invented numbers).

    Cell 4 of the bilinear list is marked "corner"; pads differ between the lists. With
    ``max_ticks`` the done times are scaled so that the longest is exactly ``max_ticks``.
    """
    m = manifest_module.synthetic_manifest(name, thickness_m, start_temp_c)
    tick_s = m["tick_s"]
    done = [n["events"][-1]["at_ticks"] for n in m["nodes"]]
    if max_ticks is not None:
        done = [d * max_ticks // max(done) for d in done]
        done[done.index(max(done))] = max_ticks
    for k, node in enumerate(m["nodes"]):
        node["events"] = _cell_events(k, done[k], tick_s)
        node["cook_time_s"] = node["events"][-1]["at_s"]
        node["flips"] = sum(e["kind"] == "flip" for e in node["events"])
    m["max_events"] = max(len(n["events"]) for n in m["nodes"])
    m["cells"] = {"corner": _cell_list(m, "corner", lambda k: k % 3)}
    if len(thickness_m) > 1 and len(start_temp_c) > 1:
        m["cells"]["bilinear"] = _cell_list(m, "bilinear", lambda k: (2 * k) % 5, (4,))
    else:
        m["cells"]["corner"] = []
    if tolerances is not None:
        m["tolerances"] = dict(tolerances)
    return m
