"""The whole table compilation: plan and certify the nodes, then certify every cell.

``compile_table(spec, rules) -> CookTable`` is pure (no disk). Node planning and
certification are in :mod:`obvert.table.build`; the cell-level certification for each
lookup rule the targets use is in :mod:`obvert.table.cells`.
"""

from __future__ import annotations

import multiprocessing
from collections.abc import Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import replace
from functools import lru_cache
from typing import Any

from obvert.spec.model import Spec
from obvert.table.build import (
    CookTable,
    Progress,
    build,
    lethality_of,
    requirement_of,
    surroundings,
)
from obvert.table.cells import CellError, CellResult, bilinear_cell, corner_cells, trial_cells
from obvert.table.certify import Case
from obvert.table.manifest import manifest
from obvert.table.scenarios import Scenario, scenarios
from obvert.thermal.reference import ReferenceSettings

RULES = ("corner", "bilinear")


class CellCertificationError(RuntimeError):
    """A cell failed certification for its lookup rule; nothing may be emitted."""


@lru_cache(maxsize=8)
def _scenario_setup(spec: Spec) -> tuple[tuple[Scenario, ...], Any, Any, ReferenceSettings]:
    """Scenarios (property tables built once, so batched runs share them) and settings."""
    env, leth, req = surroundings(spec), lethality_of(spec), requirement_of(spec)
    ref = ReferenceSettings(spec.planning.reference_cells, spec.planning.reference_dt_s)
    return scenarios(spec, env), leth, req, ref


def cases_at(spec: Spec, thickness_m: float, start_temp_c: float) -> list[Case]:
    """Reference cases of every tolerance scenario behind a *measured* point."""
    scens, leth, req, ref = _scenario_setup(spec)
    return [
        Case(
            s.table,
            thickness_m + s.thickness_offset_m,
            start_temp_c + s.start_offset_k,
            s.env,
            leth,
            req,
            ref,
        )
        for s in scens
    ]


def compile_table(
    spec: Spec,
    rules: Sequence[str] = ("corner",),
    progress: Progress | None = None,
    jobs: int = 1,
) -> CookTable:
    """Plan and certify every node, then every cell for each lookup rule in ``rules``.

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
    say = progress or (lambda _msg: None)
    table = build(spec, progress, jobs=jobs)
    base = manifest(table)
    cells: dict[str, tuple[CellResult, ...]] = {"corner": tuple(corner_cells(base))}
    if "bilinear" in rules and cells["corner"]:
        cells["bilinear"] = _bilinear(spec, base, say, jobs)
    return replace(table, cells=tuple(sorted(cells.items())))


def _bilinear(spec: Spec, base: dict[str, Any], say: Progress, jobs: int) -> tuple[CellResult, ...]:
    trial = trial_cells(base)
    say(f"certifying {len(trial)} cells for the bilinear rule")
    if jobs <= 1:
        out = [_cell_job(spec, base, c) for c in trial]
    else:
        ctx = multiprocessing.get_context("spawn")
        with ProcessPoolExecutor(max_workers=min(jobs, len(trial)), mp_context=ctx) as pool:
            out = list(pool.map(_cell_job, [spec] * len(trial), [base] * len(trial), trial))
    for c in out:
        say(
            f"cell ({c.ci}, {c.cj}): {c.rule}, pad {c.done_pad_ticks} ticks, "
            f"margin {c.min_margin_log:.3f} log over {c.samples} runs"
        )
    return tuple(out)


def _cell_job(spec: Spec, base: dict[str, Any], cell: CellResult) -> CellResult:
    try:
        return bilinear_cell(base, cell, lambda x, t: cases_at(spec, x, t))
    except CellError as exc:
        raise CellCertificationError(str(exc)) from None
