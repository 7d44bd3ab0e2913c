"""The grid sweep: plan, quantise and certify every node of the table.

``build(spec) -> CookTable`` is pure: it reads nothing from disk and writes nothing.
"""

from __future__ import annotations

import multiprocessing
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, replace

import numpy as np

from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.plan.bounds import BoundPlanners
from obvert.plan.collocation import Grid
from obvert.plan.ocp import Member, PlanError, Planner, PlanResult, Requirement
from obvert.plan.quantize import quantize, to_ticks
from obvert.plan.schedule import Schedule, Surroundings
from obvert.spec.model import Spec
from obvert.table.calibrate import Calibrated, calibrate
from obvert.table.cells import CellResult
from obvert.table.certify import Case, CertificationError, certify
from obvert.table.scenarios import nominal, scenarios
from obvert.thermal.boundary import FaceBC
from obvert.thermal.reference import ReferenceSettings
from obvert.thermal.spectral import SpectralModel, SpectralSettings

Progress = Callable[[str], None]


class BuildError(RuntimeError):
    """A grid node could not be planned or certified; nothing may be emitted."""


@dataclass(frozen=True)
class Candidate:
    """One flip count tried at a node.

    Attributes
    ----------
    flips : int
        Number of flips.
    planned_cook_time_s : float | None
        Minimum cook time on the reduced model, s (None: the solve failed).
    note : str
        Solver status, or why it failed.
    sequence : tuple of str
        The events before done that were planned.
    corrected_cook_time_s : float | None
        Cook time after the reference-calibrated correction, s (None: not corrected, as
        for candidates far from the best).
    """

    flips: int
    planned_cook_time_s: float | None
    note: str
    sequence: tuple[str, ...] = ()
    corrected_cook_time_s: float | None = None


@dataclass(frozen=True)
class Node:
    """A certified table entry.

    Attributes
    ----------
    i, j : int
        Indices on the thickness and start-temperature axes.
    thickness_m : float
        Node thickness, m.
    start_temp_c : float
        Node start temperature, degC.
    schedule : Schedule
        Certified schedule, event times in whole ticks, s.
    planned_cook_time_s : float
        Cook time of the chosen plan before quantisation, s.
    correction_s : float
        Extension of the done time that certification needed, s.
    min_log_reduction : float
        Smallest reference-model log reduction over the slab, log10.
    margin_log : float
        ``min_log_reduction`` minus the target, log10 (>= 0).
    min_temp_at_removal_c : float
        Coldest point at removal on the reference model, degC.
    candidates : tuple of Candidate
        Every flip count tried.
    bounds_s : tuple of (str, float or None)
        Physical limits of the cook time on the reduced model (see obvert.plan.bounds), s.
    nominal_planned_s : float or None
        Cook time the same event sequence would need at nominal conditions (no
        tolerances), s; None when no tolerances are declared (the plan is nominal).
    model_planned_s : float or None
        Cook time of the chosen sequence on the reduced model before the
        reference-calibrated correction, s (None: no correction asked).
    calibration_note : str
        How the correction ended (rounds, the model-reference gap).
    planned_dwell_s : tuple of float
        Time on the plate before each event of the chosen plan, before ticks, s.
    """

    i: int
    j: int
    thickness_m: float
    start_temp_c: float
    schedule: Schedule
    planned_cook_time_s: float
    correction_s: float
    min_log_reduction: float
    margin_log: float
    min_temp_at_removal_c: float
    candidates: tuple[Candidate, ...]
    bounds_s: tuple[tuple[str, float | None], ...] = ()
    nominal_planned_s: float | None = None
    model_planned_s: float | None = None
    calibration_note: str = ""
    planned_dwell_s: tuple[float, ...] = ()


@dataclass(frozen=True)
class CookTable:
    """A certified cook table: the spec and one node per grid point (i-major).

    Attributes
    ----------
    spec : Spec
        The spec it was built from.
    nodes : tuple of Node
        Entries, index ``i * n_temps + j``.
    cells : tuple of (str, tuple of CellResult)
        Per lookup rule, the certified cells (empty until :mod:`obvert.table.compile`
        has certified them).
    """

    spec: Spec
    nodes: tuple[Node, ...]
    cells: tuple[tuple[str, tuple[CellResult, ...]], ...] = ()


def surroundings(spec: Spec) -> Surroundings:
    """Plate, air and flip conditions of the spec's appliance."""
    a = spec.appliance
    return Surroundings(
        plate=FaceBC(a.contact_coefficient, a.plate_temp_c),
        air=FaceBC(a.air_coefficient, a.air_temp_c, a.emissivity),
        platen=None
        if a.platen_temp_c is None or a.platen_coefficient is None
        else FaceBC(a.platen_coefficient, a.platen_temp_c),
        flip_air_s=a.flip_air_s,
    )


def sequences(spec: Spec) -> list[tuple[str, ...]]:
    """Event sequences (before done) the planner tries for the spec's appliance."""
    a = spec.appliance
    flips = [("flip",) * n for n in range(a.max_flips + 1)]
    if a.kind == "flipping_griddle":
        return flips
    closes = [(*f, "platen_close") for f in flips]
    return closes if a.kind == "clamshell" else flips + closes


def lethality_of(spec: Spec) -> LethalityModel:
    """Kinetics of the spec's safety target."""
    s = spec.safety
    return LethalityModel(s.d_ref_s, s.t_ref_c, s.z_c, cap_c=s.lethality_cap_c)


def requirement_of(spec: Spec) -> Requirement:
    """Safety requirement at removal."""
    s = spec.safety
    return Requirement(s.log_reduction, s.min_temp_c, s.carry_over_s)


def build(spec: Spec, progress: Progress | None = None, jobs: int = 1) -> CookTable:
    """Plan, quantise and certify every node of the spec's grid.

    Parameters
    ----------
    spec : Spec
        The checked spec.
    progress : callable, optional
        Called with a one-line message as work proceeds.
    jobs : int
        Worker processes; rows of equal thickness are independent and are built in
        parallel when ``jobs > 1``. The result does not depend on ``jobs``.

    Raises
    ------
    BuildError
        A node has no solvable flip count, or its schedule cannot be certified.
    """
    say = progress or (lambda _msg: None)
    n_t = len(spec.grid.thickness_m)
    workers = max(1, min(int(jobs), n_t))
    rows: dict[int, list[Node]] = {}
    if workers == 1:
        for i in range(n_t):
            rows[i] = _row(spec, i, say)
    else:
        ctx = multiprocessing.get_context("spawn")
        with ProcessPoolExecutor(max_workers=workers, mp_context=ctx) as pool:
            futures = {pool.submit(_row, spec, i, None): i for i in range(n_t)}
            say(f"building {n_t} thickness rows in {workers} processes")
            for fut in as_completed(futures):
                i = futures[fut]
                rows[i] = fut.result()
                say(f"row {i + 1}/{n_t} done: {spec.grid.thickness_m[i] * 1e3:g} mm")
    return CookTable(spec, tuple(node for i in range(n_t) for node in rows[i]))


def _row(spec: Spec, i: int, say: Progress | None) -> list[Node]:
    """All nodes of thickness row ``i`` (one planner, reused across start temperatures)."""
    env, leth, req = surroundings(spec), lethality_of(spec), requirement_of(spec)
    ref = ReferenceSettings(spec.planning.reference_cells, spec.planning.reference_dt_s)
    thick = spec.grid.thickness_m[i]
    n_s = len(spec.grid.start_temp_c)
    grid = Grid(spec.planning.elements_per_phase)
    scens = scenarios(spec, env)
    members = [Member(_model(spec, s.table, thick + s.thickness_offset_m), s.env) for s in scens]
    planner = Planner(
        members[0].model,
        members[0].env,
        req,
        spec.appliance.min_event_gap_s,
        grid,
        extra=tuple(members[1:]),
    )
    nominal_planner = None
    if spec.tolerances.any:
        nom = nominal(spec, env)
        nominal_planner = Planner(
            _model(spec, nom.table, thick), env, req, spec.appliance.min_event_gap_s, grid
        )
    limits = BoundPlanners(members[0].model, members[0].env, req, grid)
    out = []
    for j, t0 in enumerate(spec.grid.start_temp_c):
        if say is not None:
            n_all = len(spec.grid.thickness_m) * n_s
            say(f"node {i * n_s + j + 1}/{n_all}: {thick * 1e3:g} mm, {t0:g} degC")
        cases = [
            Case(
                s.table,
                thick + s.thickness_offset_m,
                t0 + s.start_offset_k,
                s.env,
                leth,
                req,
                ref,
            )
            for s in scens
        ]
        node = _node(spec, planner, cases, i, j, (thick, t0))
        t_worst = t0 + scens[0].start_offset_k
        node = replace(node, bounds_s=tuple(sorted(limits.solve(t_worst).items())))
        if nominal_planner is not None:
            nom_case = Case(nom.table, thick, t0, nom.env, leth, req, ref)
            node = replace(
                node, nominal_planned_s=_nominal(spec, nominal_planner, node, t0, nom_case)
            )
        out.append(node)
    return out


def _model(spec: Spec, table: PropertyTable, thickness_m: float) -> SpectralModel:
    settings = SpectralSettings(
        spec.planning.spectral_nodes, lethality_points=spec.planning.lethality_points
    )
    return SpectralModel(table, thickness_m, lethality_of(spec), settings)


def _nominal(spec: Spec, planner: Planner, node: Node, t0: float, case: Case) -> float | None:
    """Nominal-conditions optimum of the node's chosen event sequence, s (None: failed).

    Corrected against the reference like the robust plan, so that the price of robustness
    compares like with like.
    """
    kinds = tuple(e.kind for e in node.schedule.events[:-1] if e.kind != "platen_open")
    try:  # the robust plan also meets the nominal target: a start near the nominal optimum
        res = planner.solve(kinds, t0, (np.array(node.planned_dwell_s),))
    except PlanError:
        return None
    rounds = spec.planning.correction_rounds
    return calibrate(planner, kinds, t0, [case], res, rounds).result.cook_time_s


def _node(
    spec: Spec,
    planner: Planner,
    cases: list[Case],
    i: int,
    j: int,
    at: tuple[float, float],
) -> Node:
    cell = f"node (thickness {at[0] * 1e3:g} mm, start {at[1]:g} degC)"
    t_plan = cases[0].start_temp_c
    cands: list[Candidate] = []
    solved: dict[tuple[str, ...], PlanResult] = {}
    prev: tuple[float, ...] | None = None
    for seq in sequences(spec):
        flips = seq.count("flip")
        closing = "platen_close" in seq
        seeds = () if prev is None or closing else (_split_last(prev, spec.appliance.flip_air_s),)
        try:
            res = planner.solve(seq, t_plan, seeds)
        except PlanError as exc:
            cands.append(Candidate(flips, None, str(exc), seq))
            prev = None if not closing else prev
            continue
        if not closing:
            prev = res.dwell_s
        solved[seq] = res
        cands.append(Candidate(flips, res.cook_time_s, res.solver_status, seq))
    if not solved:
        raise BuildError(
            f"{cell}: no flip count could be planned: " + "; ".join(c.note for c in cands)
        )
    choice, cands = _choose(spec, planner, cases, solved, cands)
    plan = choice.result.schedule
    a = spec.appliance
    ticked = quantize(plan, a.tick_s, a.min_event_gap_s, a.flip_air_s)
    try:
        cert = certify(cases, ticked, a.tick_s)
    except CertificationError as exc:
        raise BuildError(f"{cell}: {exc}") from None
    for ev in cert.schedule.events:  # every emitted time is a whole tick
        if abs(to_ticks(ev.at_s, a.tick_s) * a.tick_s - ev.at_s) > 1e-9:
            raise BuildError(f"{cell}: event {ev.kind} at {ev.at_s} s is not a whole tick")
    return Node(
        i=i,
        j=j,
        thickness_m=at[0],
        start_temp_c=at[1],
        schedule=cert.schedule,
        planned_cook_time_s=plan.done_s,
        correction_s=cert.correction_s,
        min_log_reduction=cert.verdict.min_log_reduction,
        margin_log=cert.margin_log,
        min_temp_at_removal_c=cert.verdict.min_temp_at_removal_c,
        candidates=tuple(cands),
        model_planned_s=choice.model_cook_time_s if spec.planning.correction_rounds else None,
        calibration_note=choice.note,
        planned_dwell_s=choice.result.dwell_s,
    )


#: Candidates whose uncorrected cost is within this fraction of the best are corrected too
#: (the correction moves a cook time by a few tenths of a per cent).
CORRECTION_WINDOW = 0.01


def _choose(
    spec: Spec,
    planner: Planner,
    cases: list[Case],
    solved: dict[tuple[str, ...], PlanResult],
    cands: list[Candidate],
) -> tuple[Calibrated, list[Candidate]]:
    """The event sequence of least cost after the reference-calibrated correction.

    Cost is cook time plus ``flip_cost`` per flip. The best sequence on the reduced model
    and every other within :data:`CORRECTION_WINDOW` of it are corrected, and the least
    corrected cost wins (ties: fewer events, then the order tried).
    """

    def cost(seq: tuple[str, ...], t: float) -> float:
        return t + seq.count("flip") * spec.planning.flip_cost_s

    low = min(cost(q, r.cook_time_s) for q, r in solved.items())
    rounds = spec.planning.correction_rounds
    best: tuple[float, Calibrated] | None = None
    out = list(cands)
    t_plan = cases[0].start_temp_c
    for seq, res in solved.items():
        if cost(seq, res.cook_time_s) > low * (1.0 + CORRECTION_WINDOW) + 1e-9:
            continue
        cal = calibrate(planner, seq, t_plan, cases, res, rounds)
        k = next(i for i, c in enumerate(out) if c.sequence == seq)
        if rounds:
            out[k] = replace(out[k], corrected_cook_time_s=cal.result.cook_time_s)
        c = cost(seq, cal.result.cook_time_s)
        if best is None or c < best[0] - 1e-9:
            best = (c, cal)
    assert best is not None  # the uncorrected best is always within the window
    return best[1], out


def _split_last(dwell: tuple[float, ...], flip_air_s: float) -> tuple[float, ...]:
    """Seed for one more flip: the previous optimum with its last dwell cut in two, s."""
    last = dwell[-1]
    return (*dwell[:-1], 0.5 * last, max(0.5 * last - flip_air_s, 0.0))
