"""Certification inside every cell of the table, for the lookup rule the firmware runs.

A cell is the rectangle between four neighbouring nodes. For each lookup rule:

* ``corner``: a query in the cell runs the node at its thickest, coldest corner. A thinner
  or warmer slab never cooks slower under the same schedule (comparison principle; checked
  on the reference model in tests/physics/test_monotonicity.py), so that node's own
  certificate, taken at the worst tolerance corner, covers the whole cell; the cell's
  smallest margin is the node's.
* ``bilinear``: a query runs the event times interpolated between the four corners (exact
  integer rule in :mod:`obvert.firmware.lookup`). There is no such order for an interpolated
  schedule, so the cell is sampled: edge midpoints, centre and seeded random points, each
  with the schedule the float *and* the fixed-point lookup return, each simulated on the
  reference model in every tolerance scenario (measured thickness plus the thickness error,
  measured start minus the temperature error, slow plate). A failure is repaired by a
  done-time pad for the cell (the smallest, in ticks, that makes every sample pass, then
  every sample is simulated again with it). When the pad would make interpolation no
  faster than the corner rule at the cell centre (the pad search stops there), or the
  corners run different event sequences, the cell falls back to the corner rule. Every
  sample must keep the margin the cell's corner nodes were certified with (their reference
  error plus the spec's minimum), and the cell's recorded margin is the smallest over the
  samples and the four corner nodes (which the rule returns at the corners).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from obvert.certify.batch import judge_many
from obvert.certify.node import Verdict, raised
from obvert.firmware.contract import EVENT_KINDS
from obvert.firmware.lookup import lookup_f32, lookup_fixed
from obvert.plan.schedule import Event, Schedule
from obvert.problem.model import Case

#: Random points per cell, on top of the four edge midpoints and the centre.
RANDOM_POINTS = 4

#: ``(measured thickness m, measured start degC) -> reference cases of every scenario``.
CasesAt = Callable[[float, float], Sequence[Case]]


class CellError(RuntimeError):
    """A cell could not be certified for its lookup rule."""


@dataclass(frozen=True)
class CellResult:
    """Certification outcome of one cell under one lookup rule.

    Attributes
    ----------
    ci, cj : int
        Cell indices (between thickness nodes ci, ci+1 and start nodes cj, cj+1).
    rule : str
        What the firmware does in the cell: ``bilinear`` or ``corner``.
    done_pad_ticks : int
        Ticks added to the done time the rule returns.
    min_margin_log : float
        Smallest reference log reduction minus the target over the samples, log10.
    at : tuple of float
        Measured (thickness m, start degC) where the smallest margin occurred.
    samples : int
        Reference simulations behind the verdict (0: covered by monotonicity).
    """

    ci: int
    cj: int
    rule: str
    done_pad_ticks: int
    min_margin_log: float
    at: tuple[float, float]
    samples: int


def schedule_of(events: Sequence[tuple[int, int]], tick_s: float) -> Schedule:
    """Schedule from lookup output ``(kind code, at_ticks)``."""
    return Schedule(tuple(Event(EVENT_KINDS[k], t * tick_s) for k, t in events))


def sample_points(
    x: tuple[float, float], t: tuple[float, float], seed: int
) -> list[tuple[float, float]]:
    """Edge midpoints, centre and seeded random points of the cell [x0, x1] x [t0, t1]."""
    xm, tm = 0.5 * (x[0] + x[1]), 0.5 * (t[0] + t[1])
    pts = [(xm, t[0]), (xm, t[1]), (x[0], tm), (x[1], tm), (xm, tm)]
    rng = np.random.default_rng(seed)
    for _ in range(RANDOM_POINTS):
        pts.append((float(rng.uniform(*x)), float(rng.uniform(*t))))
    return pts


def lookup_schedules(
    manifest: Mapping[str, Any], rule: str, x_m: float, t_c: float
) -> list[Schedule]:
    """Distinct schedules the float and the fixed-point firmware return at a point."""
    tick = float(manifest["tick_s"])
    outs = []
    f = lookup_f32(manifest, np.float32(x_m * 1000.0), np.float32(t_c), rule=rule)
    q = lookup_fixed(manifest, int(math.floor(x_m * 1e6)), int(math.ceil(t_c * 100.0)), rule=rule)
    for res in (f, q):
        if res.status != 0:
            raise CellError(f"lookup at ({x_m * 1e3:g} mm, {t_c:g} degC): status {res.status}")
        if res.events not in [o for o in outs]:
            outs.append(res.events)
    return [schedule_of(e, tick) for e in outs]


def corner_cells(manifest: Mapping[str, Any]) -> list[CellResult]:
    """Corner-rule cells: each covered by its thickest, coldest node (monotonicity)."""
    nodes = manifest["nodes"]
    n_t = len(manifest["axes"]["start_temp_c"])
    out = []
    for ci, cj in _cells(manifest):
        node = nodes[(ci + 1) * n_t + cj]
        at = (float(node["thickness_m"]), float(node["start_temp_c"]))
        out.append(CellResult(ci, cj, "corner", 0, float(node["margin_log"]), at, 0))
    return out


def _cells(manifest: Mapping[str, Any]) -> list[tuple[int, int]]:
    n_x = len(manifest["axes"]["thickness_m"])
    n_t = len(manifest["axes"]["start_temp_c"])
    return [(ci, cj) for ci in range(n_x - 1) for cj in range(n_t - 1)]


def _same_kinds(manifest: Mapping[str, Any], ci: int, cj: int) -> bool:
    n_t = len(manifest["axes"]["start_temp_c"])
    nodes = manifest["nodes"]
    seqs = {
        tuple(e["kind"] for e in nodes[(ci + a) * n_t + cj + b]["events"])
        for a in (0, 1)
        for b in (0, 1)
    }
    return len(seqs) == 1


def cell_dict(c: CellResult) -> dict[str, Any]:
    """JSON-safe form of a cell, as the manifest stores it (times and margins to 6 digits)."""
    return {
        "ci": c.ci,
        "cj": c.cj,
        "rule": c.rule,
        "done_pad_ticks": c.done_pad_ticks,
        "min_margin_log": round(float(c.min_margin_log), 6),
        "at": {"thickness_m": round(float(c.at[0]), 6), "start_temp_c": round(float(c.at[1]), 6)},
        "samples": c.samples,
    }


def with_cells(manifest: Mapping[str, Any], rule: str, cells: list[CellResult]) -> dict:
    """A copy of ``manifest`` whose ``cells[rule]`` lists ``cells``."""
    out = dict(manifest)
    all_cells = dict(out.get("cells", {}))
    all_cells[rule] = [cell_dict(c) for c in cells]
    out["cells"] = all_cells
    return out


def trial_cells(manifest: Mapping[str, Any]) -> list[CellResult]:
    """Cells before sampling: bilinear where the four corners share an event sequence."""
    return [
        replace(c, rule="bilinear" if _same_kinds(manifest, c.ci, c.cj) else "corner")
        for c in corner_cells(manifest)
    ]


def bilinear_cell(manifest: Mapping[str, Any], cell: CellResult, cases_at: CasesAt) -> CellResult:
    """Certify one cell for the bilinear rule (sampling, pad repair, corner fallback).

    ``cell`` comes from :func:`trial_cells`; a corner-rule trial is returned as it is.
    """
    if cell.rule == "corner":
        return cell
    base = with_cells(manifest, "bilinear", trial_cells(manifest))
    return _bilinear_cell(base, cell, cases_at, replace(cell, rule="corner"))


def _bilinear_cell(
    manifest: Mapping[str, Any], cell: CellResult, cases_at: CasesAt, fallback: CellResult
) -> CellResult:
    ax, at = manifest["axes"]["thickness_m"], manifest["axes"]["start_temp_c"]
    x = (float(ax[cell.ci]), float(ax[cell.ci + 1]))
    t = (float(at[cell.cj]), float(at[cell.cj + 1]))
    tick = float(manifest["tick_s"])
    corners = _corner_nodes(manifest, cell.ci, cell.cj)
    # every sample must keep the margin its corner nodes were certified with (the reference
    # error there plus the spec's minimum)
    need_log = max(float(n.get("required_margin_log") or 0.0) for n in corners)
    need_k = max(float(n.get("reference_error_k") or 0.0) for n in corners)
    work = [
        (p, s, raised(c, need_log, need_k))
        for p in sample_points(x, t, 7919 * cell.ci + cell.cj)
        for s in lookup_schedules(manifest, "bilinear", *p)
        for c in cases_at(*p)
    ]
    centre = (0.5 * (x[0] + x[1]), 0.5 * (t[0] + t[1]))
    # A pad as long as the corner rule's advantage at the centre makes interpolation
    # pointless: search no further, fall back.
    limit = _corner_advantage(manifest, centre)
    pad, verdicts, runs = _smallest_pad(work, tick, limit)
    fallback = replace(fallback, samples=runs)
    if pad is None:
        return fallback
    # the cell's margin covers everything the lookup can return in it: the samples, and
    # the corner nodes themselves (at a corner the rule returns that node, padded)
    target = float(manifest["safety"]["target_log_reduction"])
    margins = [v.min_log_reduction - target for v in verdicts]
    places = [p for p, _, _ in work]
    for n in corners:
        margins.append(float(n["margin_log"]))
        places.append((float(n["thickness_m"]), float(n["start_temp_c"])))
    k = int(np.argmin(margins))
    return CellResult(cell.ci, cell.cj, "bilinear", pad, margins[k], places[k], runs)


def _corner_nodes(manifest: Mapping[str, Any], ci: int, cj: int) -> list[Mapping[str, Any]]:
    n_t = len(manifest["axes"]["start_temp_c"])
    return [manifest["nodes"][(ci + a) * n_t + cj + b] for a in (0, 1) for b in (0, 1)]


def _smallest_pad(
    work: list[tuple[tuple[float, float], Schedule, Case]], tick: float, limit: int
) -> tuple[int | None, list[Verdict], int]:
    """Smallest done pad (ticks, up to ``limit``) with which every sample passes.

    Doubling from ``limit / 256`` then bisection down to ``limit / 1000`` (at least one
    tick; a coarser pad is only longer, never less safe); every trial simulates all
    samples at once. Returns the pad (None: none up to ``limit``), the verdicts of the
    exact padded schedules and the number of reference runs made.
    """
    runs = 0

    def run(pad: int) -> list[Verdict]:
        nonlocal runs
        runs += len(work)
        scheds = [s.with_done(s.done_s + pad * tick) for _, s, _ in work]
        return judge_many([c for _, _, c in work], scheds)

    best = run(0)
    if all(v.passed for v in best):
        return 0, best, runs
    if limit <= 0:
        return None, best, runs
    resolution = max(1, limit // 1000)
    lo, step, hi = 0, max(1, limit // 256), None
    while hi is None:
        trial = min(step, limit)
        vs = run(trial)
        if all(v.passed for v in vs):
            hi, best = trial, vs
        elif trial >= limit:
            return None, best, runs
        else:
            lo, step = trial, step * 2
    while hi - lo > resolution:
        mid = (lo + hi) // 2
        vs = run(mid)
        if all(v.passed for v in vs):
            hi, best = mid, vs
        else:
            lo = mid
    return hi, best, runs


def _corner_advantage(manifest: Mapping[str, Any], p: tuple[float, float]) -> int:
    """Ticks by which the corner rule's done exceeds the interpolated done at ``p`` (>= 0)."""
    tick = float(manifest["tick_s"])
    bil = max(s.done_s for s in lookup_schedules(manifest, "bilinear", *p))
    cor = min(s.done_s for s in lookup_schedules(manifest, "corner", *p))
    return max(0, round((cor - bil) / tick) - 1)
