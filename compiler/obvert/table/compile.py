"""The whole table compilation: plan and certify the nodes, then certify every cell.

``compile_table(spec, rules) -> CookTable`` is pure (no disk). The spec is turned into
physics once (:func:`obvert.problem.problem_of`); node planning and certification are in
:mod:`obvert.table.sweep`; the cells of each lookup rule the targets use are certified by
:mod:`obvert.certify.cells` against the firmware's own lookup (:mod:`obvert.firmware.lookup`)
on the node entries exactly as they will be emitted, so what is certified is what ships.
"""

from __future__ import annotations

from collections.abc import Sequence
from concurrent.futures import Executor
from typing import Any

from obvert.certify.cells import CellError, CellResult, bilinear_cell, corner_cells, trial_cells
from obvert.firmware.contract import RULES
from obvert.problem.model import Problem, problem_of
from obvert.spec.model import Spec
from obvert.table.manifest import node_entries
from obvert.table.model import CookTable
from obvert.table.sweep import Progress, ProgressEvent, build
from obvert.workers import run_tasks


class CellCertificationError(RuntimeError):
    """A cell failed certification for its lookup rule; nothing may be emitted."""


def compile_table(
    spec: Spec,
    rules: Sequence[str] = ("corner",),
    progress: Progress | None = None,
    jobs: int = 1,
    executor: Executor | None = None,
    isolate: bool = False,
) -> CookTable:
    """Plan and certify every node, then every cell for each lookup rule in ``rules``.

    Parameters
    ----------
    spec : Spec
        A checked spec.
    rules : sequence of str
        Lookup rules whose cells are certified (``corner`` always is).
    progress : callable, optional
        Called with a :class:`~obvert.table.sweep.ProgressEvent` as work proceeds.
    jobs : int
        Local worker processes (1: in this process).
    executor : concurrent.futures.Executor, optional
        Runs the work instead of local processes (e.g. a Dask client's executor). The
        result does not depend on ``jobs`` or ``executor``.
    isolate : bool
        Run even one job in a worker process (an interrupt then stops the work at once).

    Raises
    ------
    BuildError
        A node could not be planned or certified.
    CellCertificationError
        A cell could not be certified for a rule.
    ValueError
        An unknown rule.
    """
    for r in rules:
        if r not in RULES:
            raise ValueError(f"rules: {r!r} is not a lookup rule; allowed {list(RULES)}")
    problem = problem_of(spec)
    nodes = build(problem, progress, jobs=jobs, executor=executor, isolate=isolate)
    entries = node_entries(spec, nodes)
    cells: dict[str, tuple[CellResult, ...]] = {"corner": tuple(corner_cells(entries))}
    if "bilinear" in rules and cells["corner"]:
        cells["bilinear"] = _bilinear(problem, entries, progress, jobs, executor, isolate)
    return CookTable(spec, nodes, tuple(sorted(cells.items())))


def _bilinear(
    problem: Problem,
    entries: dict[str, Any],
    progress: Progress | None,
    jobs: int,
    executor: Executor | None,
    isolate: bool,
) -> tuple[CellResult, ...]:
    trial = trial_cells(entries)
    out: dict[int, CellResult] = {}
    tasks = [(problem, entries, c) for c in trial]
    for k, c in run_tasks(_cell_job, tasks, jobs, executor, isolate):
        out[k] = c
        if progress is not None:
            progress(
                ProgressEvent(
                    "cells",
                    len(out),
                    len(trial),
                    0,
                    f"cell ({c.ci}, {c.cj}) for the bilinear rule: {c.rule}, pad "
                    f"{c.done_pad_ticks} ticks, margin {c.min_margin_log:.3f} log over "
                    f"{c.samples} reference runs",
                )
            )
    return tuple(out[k] for k in range(len(trial)))


def _cell_job(problem: Problem, entries: dict[str, Any], cell: CellResult) -> CellResult:
    try:
        return bilinear_cell(entries, cell, problem.cases_at)
    except CellError as exc:
        raise CellCertificationError(str(exc)) from None
