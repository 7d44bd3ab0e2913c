"""Many reference simulations of one food, with the kernel of the scalar solver.

:func:`simulate_many` runs a list of cooks of one food (one property table and one lethality
model) through the same compiled kernel as :func:`obvert.thermal.reference.simulate`
(:func:`obvert.thermal.kernel.run_case`): for each case, a uniform mesh of
``settings.n_cells`` cells on its own thickness; every phase cut into
``step_count(duration, dt_max)`` equal TR-BDF2 steps; flips mirrored at phase starts; surfaces
re-solved and the rate re-evaluated at every phase start; drooping plates evaluated at each
stage time; the log reduction integrated by the trapezoid rule on the step ends; a step whose
Newton iterations fail halved as in the scalar solver. Each case's summary is therefore
identical, to the last bit, to the one taken from a scalar run of that case, and does not
depend on the other cases in the list.

Only the summary a certification needs is kept per case, not the time history.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.thermal import kernel
from obvert.thermal.boundary import Phase
from obvert.thermal.reference import ReferenceResult, ReferenceSettings, check_inputs

Array = NDArray[np.float64]


@dataclass(frozen=True, eq=False)
class CookCase:
    """One slab and its cook, for :func:`simulate_many`.

    Attributes
    ----------
    thickness_m : float
        Slab thickness, m (> 0).
    start_temp_c : float or array_like of shape (n_cells,)
        Initial temperature, degC: uniform, or per cell in the initial orientation.
    phases : sequence of Phase
        The cook, as for :func:`obvert.thermal.reference.simulate`.
    removal_phase : int or None
        Index of the phase at whose end the food leaves the appliance (None: the last).
    """

    thickness_m: float
    start_temp_c: float | ArrayLike
    phases: Sequence[Phase]
    removal_phase: int | None = None


@dataclass(frozen=True, eq=False)
class ReferenceSummary:
    """Outcome of one simulated cook.

    Attributes
    ----------
    min_log_reduction : float
        Smallest log reduction over the cells at the end of the last phase, log10.
    min_temp_at_removal_c : float
        Coldest cell temperature at the end of the removal phase, degC.
    final_temp_c : ndarray, shape (n_cells,)
        Cell temperatures at the end of the last step, degC, in its lab frame.
    final_log_reduction : ndarray, shape (n_cells,)
        Log reduction per cell at the end of the last step, same frame.
    mirrored : bool
        The final frame is mirrored with respect to the initial orientation.
    """

    min_log_reduction: float
    min_temp_at_removal_c: float
    final_temp_c: Array
    final_log_reduction: Array
    mirrored: bool


def _check_case(table: PropertyTable, case: CookCase, n: int, i: int) -> None:
    """Raise ``ValueError`` (``TypeError`` for a non-case) naming ``cases[i]`` and the field."""
    if not isinstance(case, CookCase):
        raise TypeError(f"cases[{i}] = {case!r} is invalid: must be a CookCase")
    try:
        _check(table, case, n)
    except ValueError as err:
        raise ValueError(f"cases[{i}].{err}") from None


def _check(table: PropertyTable, case: CookCase, n: int) -> None:
    """Raise ``ValueError`` naming the field of ``case`` that is not allowed."""
    start = np.asarray(case.start_temp_c, dtype=float)
    check_inputs(table, float(case.thickness_m), start, list(case.phases), n)
    r, last = case.removal_phase, len(case.phases) - 1
    ok = r is None or (
        isinstance(r, int | np.integer) and not isinstance(r, bool) and 0 <= r <= last
    )
    if not ok:
        raise ValueError(
            f"removal_phase = {r!r} is invalid: must be None or an integer in [0, {last}]"
        )


def summarize(result: ReferenceResult, removal_phase: int) -> ReferenceSummary:
    """Summary of a scalar run (removal row: the last row of a phase <= ``removal_phase``).

    Parameters
    ----------
    result : ReferenceResult
        A run of :func:`obvert.thermal.reference.simulate`.
    removal_phase : int
        Index of the phase at whose end the food leaves the appliance.

    Returns
    -------
    ReferenceSummary
        The summary :func:`simulate_many` returns for the same cook.
    """
    row = int(np.searchsorted(result.phase_index, removal_phase, side="right")) - 1
    return ReferenceSummary(
        float(np.min(result.log_reduction[-1])),
        float(np.min(result.temp_c[row])),
        result.temp_c[-1].copy(),
        result.log_reduction[-1].copy(),
        bool(result.mirrored[-1]),
    )


def simulate_many(
    table: PropertyTable,
    cases: Sequence[CookCase],
    lethality: LethalityModel | None = None,
    settings: ReferenceSettings = ReferenceSettings(),  # noqa: B008 (frozen, immutable)
) -> list[ReferenceSummary]:
    """Simulate many cooks of one food with the discretisation of the reference solver.

    Parameters
    ----------
    table : PropertyTable
        Thermal properties of the food (shared by all cases).
    cases : sequence of CookCase
        Thickness (m), start temperature (degC), phases (s) and removal phase of each cook.
    lethality : LethalityModel, optional
        Kinetics whose log reduction is integrated in every cell (None: log reductions 0).
    settings : ReferenceSettings
        Mesh and time step, as for :func:`obvert.thermal.reference.simulate`.

    Returns
    -------
    list of ReferenceSummary
        One per case, in the order of ``cases``; independent of how the cases are batched.

    Raises
    ------
    ValueError
        On invalid input, naming ``cases[i]``, the field and its value.
    SolverDivergedError
        If Newton fails even after halving a step (as
        :func:`obvert.thermal.reference.simulate`).
    """
    cases = list(cases)
    for i, case in enumerate(cases):
        _check_case(table, case, settings.n_cells, i)
    return [_summary(table, case, lethality, settings) for case in cases]


def simulate_one(
    table: PropertyTable,
    case: CookCase,
    lethality: LethalityModel | None = None,
    settings: ReferenceSettings = ReferenceSettings(),  # noqa: B008 (frozen, immutable)
) -> ReferenceSummary:
    """The summary of one cook: :func:`simulate_many` of ``[case]``, errors naming the field.

    Parameters
    ----------
    table, lethality, settings
        As for :func:`simulate_many`.
    case : CookCase
        Thickness (m), start temperature (degC), phases (s) and removal phase of the cook.

    Returns
    -------
    ReferenceSummary
        The same numbers as the summary of a full :func:`obvert.thermal.reference.simulate`
        run (:func:`summarize`), with no time history kept.

    Raises
    ------
    ValueError
        On invalid input, naming the field and its value (as
        :func:`obvert.thermal.reference.simulate`).
    """
    _check(table, case, settings.n_cells)
    return _summary(table, case, lethality, settings)


def _summary(
    table: PropertyTable,
    case: CookCase,
    lethality: LethalityModel | None,
    settings: ReferenceSettings,
) -> ReferenceSummary:
    """Run one checked cook through the kernel, keeping its last and removal rows."""
    n = settings.n_cells
    start = np.asarray(case.start_temp_c, dtype=float)
    last = len(case.phases) - 1
    run = kernel.run_case(
        kernel.lookup_for(table),
        float(case.thickness_m),
        np.broadcast_to(start, (n,)).astype(float),
        list(case.phases),
        lethality,
        settings.dt_max_s,
        settings.newton_tol_k,
        settings.max_newton,
        record=False,
        removal_phase=last if case.removal_phase is None else int(case.removal_phase),
    )
    lr = run.final_acc[kernel.ACC_LOG_REDUCTION].copy()
    return ReferenceSummary(
        float(np.min(lr)),
        float(np.min(run.removal_temp_c)),
        run.final_temp_c,
        lr,
        run.final_mirrored,
    )
