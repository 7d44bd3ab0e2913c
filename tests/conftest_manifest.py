"""Synthetic manifests for emit-layer tests.

The numbers are invented (a rendering and lookup-semantics test, not a food-safety result):
they only need the shape of a real table. Loaded by tests/c/conftest.py and
tests/golden/conftest.py with importlib (tests/ is not a package).
"""

from __future__ import annotations

import hashlib
from typing import Any

EVENT_KINDS = {"done": 0, "flip": 1, "platen_close": 2, "platen_open": 3}
TICK_S = 0.1
# Fixed here (not the package's text) so the golden files change only with the emitter.
CAUTION = (
    "Synthetic table for tests only: not a cook program. A real table must be validated "
    "by temperature measurement on the real appliance with the real product, and defers "
    "to local food codes, the site's HACCP plan and licensed food-safety professionals."
)

# Event patterns, cycled over the nodes so that event counts vary from 1 to 4.
_PATTERNS = (
    ("flip", "flip", "done"),
    ("done",),
    ("platen_close", "flip", "platen_open", "done"),
    ("flip", "done"),
)


def _events(pattern: tuple[str, ...], cook_s: float) -> list[dict[str, Any]]:
    events = []
    n = len(pattern)
    for k, kind in enumerate(pattern):
        at_s = round(cook_s * (k + 1) / n, 3)
        events.append({"kind": kind, "at_s": at_s, "at_ticks": int(-(-at_s // TICK_S))})
    return events


def _node(i: int, j: int, thickness_m: float, temp_c: float, index: int) -> dict[str, Any]:
    pattern = _PATTERNS[index % len(_PATTERNS)]
    cook_s = round(60.0 + 9000.0 * thickness_m + 2.5 * (4.0 - temp_c) + 0.37 * index, 3)
    events = _events(pattern, cook_s)
    return {
        "i": i,
        "j": j,
        "thickness_m": thickness_m,
        "start_temp_c": temp_c,
        "flips": sum(e["kind"] == "flip" for e in events),
        "events": events,
        "cook_time_s": events[-1]["at_s"],
        "min_log_reduction": 7.0 + 0.125 * index,
        "margin_log": 0.125 * index + 0.0625,
        "extension_s": 0.5 * index,
        "reference_error_log": 0.01,
        "reference_error_k": 0.02,
        "required_margin_log": 0.06,
        "planned_cook_time_s": cook_s - 0.5,
        "peak_surface_c": 150.0 + index,
    }


def synthetic_manifest(
    name: str = "synthetic_grill",
    thickness_m: tuple[float, ...] = (0.006, 0.009, 0.0125, 0.015),
    start_temp_c: tuple[float, ...] = (-18.0, 0.0, 4.0),
) -> dict[str, Any]:
    """A manifest of the documented schema with invented numbers (i-major nodes)."""
    spec = {"food": {"kind": "patty", "fat_fraction": 0.2}, "grid": {"n": [3, 3]}}
    nodes = [
        _node(i, j, x, t, i * len(start_temp_c) + j)
        for i, x in enumerate(thickness_m)
        for j, t in enumerate(start_temp_c)
    ]
    return {
        "format_version": 2,
        "generator": {"name": "obvert", "version": "0.0.0+synthetic"},
        "caution": CAUTION,
        "table": {"name": name, "title": "Synthetic test table */ with ?? awkward text"},
        "spec": spec,
        "spec_hash": hashlib.sha256(repr(spec).encode()).hexdigest(),
        "tick_s": TICK_S,
        "axes": {"thickness_m": list(thickness_m), "start_temp_c": list(start_temp_c)},
        "lookup_rule": {
            "name": "conservative_corner",
            "description": "thickest and coldest corner of the cell; no extrapolation",
        },
        "event_kinds": dict(EVENT_KINDS),
        "max_events": max(len(n["events"]) for n in nodes),
        "envelope": {
            "thickness_m": [thickness_m[0], thickness_m[-1]],
            "start_temp_c": [start_temp_c[0], start_temp_c[-1]],
        },
        "safety": {
            "target_log_reduction": 7.0,
            "organism": "synthetic organism",
            "source": "invented for a rendering test",
            "d_ref_s": 100.0,
            "t_ref_c": 60.0,
            "z_k": 5.6,
            "min_temp_c": None,
        },
        "nodes": nodes,
        "summary": {"n_nodes": len(nodes), "note": "synthetic"},
    }
