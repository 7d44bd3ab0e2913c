"""The grid sweep: plan, quantise and certify every node of the table.

``build(problem) -> tuple of Node`` is pure: it reads nothing from disk and writes nothing.
"""

from __future__ import annotations

from collections.abc import Callable
from concurrent.futures import Executor
from dataclasses import dataclass, replace

import numpy as np

from obvert.certify.calibrate import Calibrated, calibrate
from obvert.plan.bounds import BoundPlanners
from obvert.plan.collocation import Grid
from obvert.plan.ocp import Member, PlanError, Planner, PlanResult, Solution
from obvert.plan.quantize import quantize
from obvert.problem.model import Case, Problem
from obvert.spec.model import Spec
from obvert.table.entry import BuildError, certified_node, node_name
from obvert.table.model import Candidate, Node
from obvert.table.searched import search_row
from obvert.workers import run_tasks


@dataclass(frozen=True)
class ProgressEvent:
    """How far a build has come.

    Attributes
    ----------
    stage : str
        ``nodes`` (planning and certifying nodes) or ``cells`` (certifying cells).
    done : int
        Units of the stage finished so far (nodes or cells).
    total : int
        Units of the stage in all.
    failures : int
        Candidate solves (flip counts) that failed so far; such a candidate is never used (a
        sequence left out on purpose, :attr:`Candidate.failed` false, is no failure).
    message : str
        One line on what just finished, units included.
    """

    stage: str
    done: int
    total: int
    failures: int
    message: str


Progress = Callable[[ProgressEvent], None]


def build(
    problem: Problem,
    progress: Progress | None = None,
    jobs: int = 1,
    executor: Executor | None = None,
    isolate: bool = False,
) -> tuple[Node, ...]:
    """Plan, quantise and certify every node of the problem's grid.

    Parameters
    ----------
    problem : Problem
        The spec turned into physics (:func:`obvert.problem.problem_of`).
    progress : callable, optional
        Called with a :class:`ProgressEvent` as each thickness row finishes.
    jobs : int
        Local worker processes (1: in this process); rows of equal thickness are
        independent tasks. The result does not depend on ``jobs`` or ``executor``.
    executor : concurrent.futures.Executor, optional
        Runs the rows instead of local processes (e.g. a Dask client's executor).
    isolate : bool
        Run even one job in a worker process (an interrupt then stops the work at once).

    Returns
    -------
    tuple of Node
        Certified nodes, i-major.

    Raises
    ------
    BuildError
        A node has no solvable flip count, or its schedule cannot be certified.
    """
    spec = problem.spec
    n_t, n_s = len(spec.grid.thickness_m), len(spec.grid.start_temp_c)
    rows: dict[int, list[Node]] = {}
    failures = 0
    # thickest rows first: they take longest, so the workers finish together
    order = sorted(range(n_t), key=lambda i: -spec.grid.thickness_m[i])
    tasks = [(problem, i) for i in order]
    for k, row in run_tasks(_row, tasks, jobs, executor, isolate):
        i = order[k]
        rows[i] = row
        failures += sum(c.failed for n in row for c in n.candidates)
        if progress is not None:
            longest = max(n.schedule.done_s for n in row)
            progress(
                ProgressEvent(
                    "nodes",
                    len(rows) * n_s,
                    n_t * n_s,
                    failures,
                    f"{spec.grid.thickness_m[i] * 1e3:g} mm row certified "
                    f"(longest cook {longest:.1f} s)",
                )
            )
    return tuple(node for i in range(n_t) for node in rows[i])


def _row(problem: Problem, i: int) -> list[Node]:
    """All nodes of thickness row ``i``, by the spec's planning method."""
    if problem.spec.planning.method == "search":
        return search_row(problem, i)
    return _collocation_row(problem, i)


def _collocation_row(problem: Problem, i: int) -> list[Node]:
    """All nodes of thickness row ``i`` (one planner, reused across start temperatures)."""
    spec = problem.spec
    thick = spec.grid.thickness_m[i]
    grid = Grid(spec.planning.elements_per_phase)
    req, gap = problem.requirement, spec.appliance.min_event_gap_s
    members = [Member(problem.reduced_model(s, thick), s.env) for s in problem.scenarios]
    planner = Planner(members[0].model, members[0].env, req, gap, grid, extra=tuple(members[1:]))
    nom = problem.nominal
    nominal_planner = None
    if nom is not None:
        nominal_planner = Planner(problem.reduced_model(nom, thick), nom.env, req, gap, grid)
    limits = BoundPlanners(members[0].model, members[0].env, req, grid)
    out = []
    # continuation along the row: each node starts from the solutions of the nodes before it
    # (same sequence), always in the same order, so the result does not depend on where the
    # row ran
    history: dict[tuple[str, ...], list[Solution]] = {}
    for j, t0 in enumerate(spec.grid.start_temp_c):
        cases = list(problem.cases_at(thick, t0))
        node = _node(problem, planner, cases, i, j, (thick, t0), history)
        t_worst = cases[0].start_temp_c
        node = replace(node, bounds_s=tuple(sorted(limits.solve(t_worst).items())))
        if nominal_planner is not None and nom is not None:
            nom_case = problem.case(nom, thick, t0)
            node = replace(
                node, nominal_planned_s=_nominal(problem, nominal_planner, node, t0, nom_case)
            )
        out.append(node)
    return out


def _nominal(problem: Problem, planner: Planner, node: Node, t0: float, case: Case) -> float | None:
    """Nominal-conditions optimum of the node's chosen event sequence, s (None: failed).

    Corrected against the reference like the robust plan, so that the price of robustness
    compares like with like.
    """
    kinds = tuple(e.kind for e in node.schedule.events[:-1] if e.kind != "platen_open")
    try:  # the robust plan also meets the nominal target: a start near the nominal optimum
        res = planner.solve(kinds, t0, (np.array(node.planned_dwell_s),), warm=True)
    except PlanError:
        return None
    rounds = problem.spec.planning.calibration_rounds
    return calibrate(planner, kinds, t0, [case], res, rounds).result.cook_time_s


def _solve(
    planner: Planner,
    seq: tuple[str, ...],
    t_plan: float,
    seeds: tuple[np.ndarray, ...],
    neighbours: list[Solution],
    fewer: PlanResult | None,
) -> PlanResult:
    """One sequence at one node: one start first, the others only when they may pay.

    The first start is the neighbours' solutions (continuation), or, at a row's first node,
    the optimum with one flip fewer with its last dwell split. The cold starts (equal dwells
    and that seed) run only when the first fails, or when its optimum is no faster than one
    flip fewer (a local optimum the other starts may leave).
    """
    # the planner falls back by itself: neighbours, then the seeds, then equal dwells
    res = planner.solve(seq, t_plan, seeds, warm=True, neighbours=neighbours[-2:])
    if fewer is not None and res.cook_time_s >= fewer.cook_time_s - 1e-6:
        try:
            other = planner.solve(seq, t_plan, seeds)
        except PlanError:
            return res
        return other if other.cook_time_s < res.cook_time_s - 1e-6 else res
    return res


def _node(
    problem: Problem,
    planner: Planner,
    cases: list[Case],
    i: int,
    j: int,
    at: tuple[float, float],
    history: dict[tuple[str, ...], list[Solution]],
) -> Node:
    cell = node_name(at)
    t_plan = cases[0].start_temp_c
    cands: list[Candidate] = []
    solved: dict[tuple[str, ...], PlanResult] = {}
    prev: PlanResult | None = None
    spec = problem.spec
    for seq in problem.sequences:
        flips = seq.count("flip")
        closing = "platen_close" in seq
        seeds = (
            ()
            if prev is None or closing
            else (_split_last(prev.dwell_s, spec.appliance.flip_air_s),)
        )
        try:
            res = _solve(
                planner, seq, t_plan, seeds, history.get(seq, []), None if closing else prev
            )
        except PlanError as exc:
            cands.append(Candidate(flips, None, str(exc), seq))
            prev = None if not closing else prev
            continue
        if not closing:
            prev = res
        if res.solution is not None:
            history.setdefault(seq, []).append(res.solution)
        solved[seq] = res
        cands.append(Candidate(flips, res.cook_time_s, res.solver_status, seq))
    if not solved:
        raise BuildError(
            f"{cell}: no flip count could be planned: " + "; ".join(c.note for c in cands)
        )
    choice, cands = _choose(problem.spec, planner, cases, solved, cands)
    plan = choice.result.schedule
    a = spec.appliance
    ticked = quantize(plan, a.tick_s, a.min_event_gap_s, a.flip_air_s)
    node, _ = certified_node(
        problem,
        cases,
        (i, j),
        at,
        ticked,
        plan.done_s,
        candidates=tuple(cands),
        model_planned_s=choice.model_cook_time_s if spec.planning.calibration_rounds else None,
        calibration_note=choice.note,
        planned_dwell_s=choice.result.dwell_s,
    )
    return node


#: Candidates whose uncorrected cost is within this fraction of the best are corrected too
#: (the correction moves a cook time by a few tenths of a per cent).
CALIBRATION_WINDOW = 0.01


def _choose(
    spec: Spec,
    planner: Planner,
    cases: list[Case],
    solved: dict[tuple[str, ...], PlanResult],
    cands: list[Candidate],
) -> tuple[Calibrated, list[Candidate]]:
    """The event sequence of least cost after the reference-calibrated correction.

    Cost is cook time plus ``flip_cost`` per flip. The best sequence on the reduced model
    and every other within :data:`CALIBRATION_WINDOW` of it are corrected, and the least
    corrected cost wins (ties: fewer events, then the order tried).
    """

    def cost(seq: tuple[str, ...], t: float) -> float:
        return t + seq.count("flip") * spec.planning.flip_cost_s

    low = min(cost(q, r.cook_time_s) for q, r in solved.items())
    rounds = spec.planning.calibration_rounds
    best: tuple[float, Calibrated] | None = None
    out = list(cands)
    t_plan = cases[0].start_temp_c
    for seq, res in solved.items():
        if cost(seq, res.cook_time_s) > low * (1.0 + CALIBRATION_WINDOW) + 1e-9:
            continue
        cal = calibrate(planner, seq, t_plan, cases, res, rounds)
        k = next(i for i, c in enumerate(out) if c.sequence == seq)
        if rounds:
            out[k] = replace(out[k], calibrated_cook_time_s=cal.result.cook_time_s)
        c = cost(seq, cal.result.cook_time_s)
        if best is None or c < best[0] - 1e-9:
            best = (c, cal)
    assert best is not None  # the uncorrected best is always within the window
    return best[1], out


def _split_last(dwell: tuple[float, ...], flip_air_s: float) -> tuple[float, ...]:
    """Seed for one more flip: the previous optimum with its last dwell cut in two, s."""
    last = dwell[-1]
    return (*dwell[:-1], 0.5 * last, max(0.5 * last - flip_air_s, 0.0))
