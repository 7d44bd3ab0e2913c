"""The canonical manifest of a cook table: the one dict every output format is a view of."""

from __future__ import annotations

from typing import Any

from obvert.about import CAUTION, __version__
from obvert.certify.cells import cell_dict
from obvert.firmware.canonical import canonical_sha256
from obvert.firmware.contract import (
    CORNER_RULE_NAME,
    EVENT_CODES,
    FORMAT_VERSION,
    RULE_TEXT,
    to_ticks,
)
from obvert.spec.model import Spec, ToleranceSpec
from obvert.table.model import CookTable, Node

#: Digits kept for times (s) and log reductions; fixed so builds are byte-identical.
_DIGITS = 6


def _r(x: float) -> float:
    return round(float(x), _DIGITS)


def _r_opt(x: float | None) -> float | None:
    return None if x is None else _r(x)


def _node_dict(node: Node, tick_s: float) -> dict[str, Any]:
    events = [
        {"kind": e.kind, "at_s": _r(e.at_s), "at_ticks": to_ticks(e.at_s, tick_s)}
        for e in node.schedule.events
    ]
    return {
        "i": node.i,
        "j": node.j,
        "thickness_m": _r(node.thickness_m),
        "start_temp_c": _r(node.start_temp_c),
        "flips": node.schedule.flips,
        "events": events,
        "cook_time_s": _r(node.schedule.done_s),
        "cook_ticks": to_ticks(node.schedule.done_s, tick_s),
        "planned_cook_time_s": _r(node.planned_cook_time_s),
        "model_planned_s": _r_opt(node.model_planned_s),
        "calibration_note": node.calibration_note,
        "extension_s": _r(node.extension_s),
        "reference_error_log": _r(node.reference_error_log),
        "reference_error_k": _r(node.reference_error_k),
        "required_margin_log": _r(node.required_margin_log),
        "min_log_reduction": _r(node.min_log_reduction),
        "margin_log": _r(node.margin_log),
        "min_temp_at_removal_c": _r(node.min_temp_at_removal_c),
        "hold_margin_s": _r_opt(node.hold_margin_s),
        "bounds_s": {k: _r_opt(v) for k, v in node.bounds_s},
        "nominal_planned_s": _r_opt(node.nominal_planned_s),
        "price_of_robustness_s": None
        if node.nominal_planned_s is None
        else _r(node.planned_cook_time_s - node.nominal_planned_s),
        "candidates": [
            {
                "flips": c.flips,
                "planned_cook_time_s": _r_opt(c.planned_cook_time_s),
                "calibrated_cook_time_s": _r_opt(c.calibrated_cook_time_s),
                "note": c.note,
                "sequence": list(c.sequence),
            }
            for c in node.candidates
        ],
    }


def _tolerances(tol: ToleranceSpec) -> dict[str, Any]:
    return {
        "plate_offset_k": tol.plate_offset_k,
        "plate_droop_k": tol.plate_droop_k,
        "plate_recovery_s": tol.plate_recovery_s,
        "contact_low_fraction": tol.contact_low_fraction,
        "thickness_error_m": tol.thickness_error_m,
        "start_temp_error_k": tol.start_temp_error_k,
        "fat_fraction": None if tol.fat_fraction is None else list(tol.fat_fraction),
    }


def _price(nodes: list[dict[str, Any]]) -> dict[str, Any] | None:
    rows = [n for n in nodes if n["price_of_robustness_s"] is not None]
    if not rows:
        return None
    worst = max(rows, key=lambda n: n["price_of_robustness_s"] / n["nominal_planned_s"])
    return {
        "max_s": max(n["price_of_robustness_s"] for n in rows),
        "max_fraction": _r(worst["price_of_robustness_s"] / worst["nominal_planned_s"]),
        "mean_fraction": _r(
            sum(n["price_of_robustness_s"] / n["nominal_planned_s"] for n in rows) / len(rows)
        ),
    }


def _model_gap(nodes: list[dict[str, Any]]) -> dict[str, Any] | None:
    """How far the reduced model alone planned from the corrected plan, over all nodes."""
    rows = [n for n in nodes if n["model_planned_s"] is not None]
    if not rows:
        return None
    gaps = [n["model_planned_s"] / n["planned_cook_time_s"] - 1.0 for n in rows]
    return {"largest_fraction": _r(max(gaps, key=abs)), "mean_fraction": _r(sum(gaps) / len(gaps))}


def manifest(table: CookTable) -> dict[str, Any]:
    """Canonical, JSON-safe description of ``table`` (schema in docs/table-format.md).

    Parameters
    ----------
    table : CookTable
        A compiled table.

    Returns
    -------
    dict
        The manifest every output format is a view of.
    """
    out = node_entries(table.spec, table.nodes)
    if table.cells:
        out["cells"] = {rule: [cell_dict(c) for c in cells] for rule, cells in table.cells}
    return out


def node_entries(spec: Spec, nodes: tuple[Node, ...]) -> dict[str, Any]:
    """The manifest of certified nodes before their cells are certified.

    The cell certification runs the firmware lookup on exactly this, so that what is
    certified is what is emitted.
    """
    spec_dict = spec.to_dict()
    tick = spec.appliance.tick_s
    rows = [_node_dict(n, tick) for n in nodes]
    margins = [n["margin_log"] for n in rows]
    s = spec.safety
    out: dict[str, Any] = {
        "format_version": FORMAT_VERSION,
        "generator": {"name": "obvert", "version": __version__},
        "caution": CAUTION,
        "table": {"name": spec.name, "title": spec.title},
        "spec": spec_dict,
        "spec_hash": canonical_sha256(spec_dict),
        "tick_s": tick,
        "axes": {
            "thickness_m": [_r(v) for v in spec.grid.thickness_m],
            "start_temp_c": [_r(v) for v in spec.grid.start_temp_c],
        },
        "envelope": {
            "thickness_m": [_r(spec.grid.thickness_m[0]), _r(spec.grid.thickness_m[-1])],
            "start_temp_c": [_r(spec.grid.start_temp_c[0]), _r(spec.grid.start_temp_c[-1])],
        },
        "lookup_rule": {"name": CORNER_RULE_NAME, "description": RULE_TEXT["corner"]},
        "event_kinds": dict(EVENT_CODES),
        "max_events": max(len(n["events"]) for n in rows),
        "safety": {
            "target_log_reduction": s.log_reduction,
            "organism": s.organism,
            "source": s.source,
            "d_ref_s": s.d_ref_s,
            "t_ref_c": s.t_ref_c,
            "z_k": s.z_k,
            "min_temp_c": s.min_temp_c,
            "carry_over_s": s.carry_over_s,
            "lethality_cap_c": s.lethality_cap_c,
            "time_at_temperature": [{"temp_c": t, "hold_s": h} for t, h in s.time_at_temperature],
        },
        "nodes": rows,
        "summary": {
            "smallest_margin_log": min(margins),
            "nodes_extended": sum(1 for n in rows if n["extension_s"] > 0.0),
            "longest_cook_time_s": max(n["cook_time_s"] for n in rows),
            "price_of_robustness": _price(rows),
            "reduced_model_gap": _model_gap(rows),
        },
        "tolerances": _tolerances(spec.tolerances),
    }
    return out
