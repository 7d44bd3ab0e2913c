"""High-fidelity reference solver of transient heat conduction in a food slab.

This is the ground truth of Obvert: every faster model and every compiled cook program is
checked against it. The slab of thickness L lies on x in [0, L] with face 0 (x = 0) on the
plate. Properties come from a :class:`~obvert.food.table.PropertyTable` (k(T) and volumetric
enthalpy E(T) including latent heat), so thawing is handled by the enthalpy formulation.

Method (details in :mod:`obvert.thermal.kernel`): cell-centred finite volumes on a uniform mesh
with the enthalpy of each cell as state, Kirchhoff-mean face conductivities, surface
temperatures solved from the flux balance of each face, TR-BDF2 time stepping (second order,
L-stable) with Newton iterations on a tridiagonal system, and equal steps within each phase so
that flips and phase changes fall exactly on step boundaries. A plate that droops after
loading (:attr:`FaceBC.droop_k`, time from loading, not from the phase start) is evaluated at
the time of each implicit stage. The log reduction of a
:class:`~obvert.food.lethality.LethalityModel` is integrated in every cell by the trapezoid
rule on the step ends. Second order in space and time (verified in ``tests/physics``).

The same compiled kernel (:func:`obvert.thermal.kernel.run_case`) runs the summaries of
:func:`obvert.thermal.batch.simulate_many`. Run time: about 0.2 s for a 300 s cook at the
defaults (200 cells, 0.05 s), one core, once the kernel is loaded; the first call in a process
loads it from numba's cache (about 1 s) or, with an empty cache, compiles it (under a minute).
Figures from ``tests/bench/batch_reference.py``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.thermal import kernel
from obvert.thermal.boundary import STEFAN_BOLTZMANN, FaceBC, Phase

Array = NDArray[np.float64]

#: Raised when the Newton iterations cannot be made to converge (re-exported).
SolverDivergedError = kernel.SolverDivergedError


def _require(ok: bool, field: str, value: object, allowed: str) -> None:
    """Raise ``ValueError`` naming the field, its value and what is allowed."""
    if not ok:
        raise ValueError(f"{field} = {value!r} is invalid: must be {allowed}")


@dataclass(frozen=True)
class ReferenceSettings:
    """Discretisation of the reference solver.

    Attributes
    ----------
    n_cells : int
        Number of equal finite-volume cells across the slab (>= 2).
    dt_max_s : float
        Largest time step, s; each phase is cut into ``ceil(duration/dt_max_s)`` equal steps.
    newton_tol_k : float
        Newton stops when the largest temperature update is below this, K.
    max_newton : int
        Newton iterations allowed per stage before the solver gives up.
    """

    n_cells: int = 200
    dt_max_s: float = 0.05
    newton_tol_k: float = 1e-8
    max_newton: int = 40

    def __post_init__(self) -> None:
        n = self.n_cells
        _require(
            isinstance(n, int | np.integer) and not isinstance(n, bool) and n >= 2,
            "ReferenceSettings.n_cells",
            n,
            "an integer >= 2",
        )
        for name in ("dt_max_s", "newton_tol_k"):
            v = getattr(self, name)
            _require(math.isfinite(v) and v > 0.0, f"ReferenceSettings.{name}", v, "finite > 0")
        m = self.max_newton
        ok = isinstance(m, int) and not isinstance(m, bool) and m >= 1
        _require(ok, "ReferenceSettings.max_newton", m, "an integer >= 1")


@dataclass(frozen=True, eq=False)
class ReferenceResult:
    """Time history of a simulated cook.

    Attributes
    ----------
    t_s : ndarray, shape (n_steps + 1,)
        Time of each step end, s, starting at 0.
    temp_c : ndarray, shape (n_steps + 1, n_cells)
        Cell temperatures, degC, in the lab frame of the row's phase (index 0 on face 0,
        the face on the plate).
    log_reduction : ndarray, shape (n_steps + 1, n_cells)
        Accumulated log reduction per cell, same frame as ``temp_c``; zeros without a model.
    phase_index : ndarray of int, shape (n_steps + 1,)
        Phase each row belongs to (row 0 belongs to phase 0; the last row of a phase keeps
        that phase's orientation and boundary conditions).
    x_m : ndarray, shape (n_cells,)
        Cell centres, m.
    surface_c : ndarray, shape (n_steps + 1, 2)
        Surface temperatures of face 0 and face 1, degC, lab frame.
    mirrored : ndarray of bool, shape (n_steps + 1,)
        True where the row is mirrored with respect to the initial orientation.
    """

    t_s: Array
    temp_c: Array
    log_reduction: Array
    phase_index: NDArray[np.int64]
    x_m: Array
    surface_c: Array
    mirrored: NDArray[np.bool_]


@dataclass(frozen=True, eq=False)
class RowMinima:
    """Per time step of a simulated cook, the coldest and the least reduced point of the food.

    What a read-off of "would the cook pass if it ended here" needs when no
    time-at-temperature rule applies: the same numbers as the row minima of the full
    :class:`ReferenceResult`, bit for bit, for a fraction of its memory.

    Attributes
    ----------
    t_s : ndarray, shape (rows,)
        Time of each step end, s, starting at 0.
    min_temp_c : ndarray, shape (rows,)
        Coldest cell temperature of each row, degC.
    min_log_reduction : ndarray, shape (rows,)
        Smallest log reduction over the cells of each row, log10.
    """

    t_s: Array
    min_temp_c: Array
    min_log_reduction: Array


@dataclass(frozen=True)
class EarlyEnd:
    """End a simulated cook at the first step where the whole food is done.

    Attributes
    ----------
    after_s : float
        Steps ending before this time never end the cook, s.
    log_reduction : float
        Every cell has at least this log reduction, log10.
    temp_c : float
        Every cell is at least this warm, degC (``-inf``: no floor).
    """

    after_s: float
    log_reduction: float
    temp_c: float = -math.inf


def face_flux(bc: FaceBC, surface_c: ArrayLike) -> Array:
    """Heat flux into the food through a face at surface temperature ``surface_c``.

    Parameters
    ----------
    bc : FaceBC
        Boundary condition of the face.
    surface_c : array_like
        Surface temperature, degC.

    Returns
    -------
    ndarray
        ``h (t_inf - T_s) + eps sigma (T_inf^4 - T_s^4)``, W/m^2 (positive into the food).
    """
    ts = np.asarray(surface_c, dtype=float)
    rad = STEFAN_BOLTZMANN * ((bc.t_inf_c + 273.15) ** 4 - (ts + 273.15) ** 4)
    return bc.h * (bc.t_inf_c - ts) + bc.emissivity * rad


def food_frame(result: ReferenceResult) -> tuple[Array, Array]:
    """Temperature and log reduction with column i always the same piece of food.

    Mirrored rows are reversed back, so column 0 is the material that started on face 0.

    Returns
    -------
    temp_c, log_reduction : ndarray, shape (n_steps + 1, n_cells)
        degC and log reductions in the initial orientation.
    """
    temp = result.temp_c.copy()
    lr = result.log_reduction.copy()
    m = result.mirrored
    temp[m] = temp[m, ::-1]
    lr[m] = lr[m, ::-1]
    return temp, lr


def _check_face(face: FaceBC, field: str, lo: float, hi: float) -> None:
    _require(math.isfinite(face.h) and face.h >= 0.0, f"{field}.h", face.h, "finite >= 0 W/m^2/K")
    _require(
        lo <= face.t_inf_c <= hi,
        f"{field}.t_inf_c",
        face.t_inf_c,
        f"within the property table range [{lo}, {hi}] degC",
    )
    e = face.emissivity
    _require(0.0 <= e <= 1.0, f"{field}.emissivity", e, "in [0, 1]")
    _require(
        face.t_inf_c - face.droop_k >= lo,
        f"{field}.droop_k",
        face.droop_k,
        f"at most t_inf_c - {lo} = {face.t_inf_c - lo:g} K (the drooped surface must stay "
        "within the property table range)",
    )


def check_inputs(
    table: PropertyTable, thickness_m: float, start: Array, phases: Sequence[Phase], n: int
) -> None:
    """Raise ``ValueError`` naming the field and its value on invalid input of a cook.

    Parameters
    ----------
    table : PropertyTable
        Thermal properties of the food (its range bounds all temperatures).
    thickness_m : float
        Slab thickness, m (finite > 0).
    start : ndarray, shape () or (n,)
        Initial temperature, degC, within the table range.
    phases : sequence of Phase
        Non-empty; durations finite >= 0 s; faces with h >= 0, surroundings within the table
        range even when drooped, emissivity in [0, 1].
    n : int
        Number of cells.
    """
    lo, hi = float(table.temp_c[0]), float(table.temp_c[-1])
    _require(
        math.isfinite(thickness_m) and thickness_m > 0.0, "thickness_m", thickness_m, "finite > 0 m"
    )
    _require(start.shape in ((), (n,)), "start_temp_c.shape", start.shape, f"() or ({n},)")
    vals = np.atleast_1d(start)
    bad = np.flatnonzero(~((vals >= lo) & (vals <= hi)))
    _require(
        bad.size == 0,
        "start_temp_c" if start.ndim == 0 else f"start_temp_c[{bad[0] if bad.size else 0}]",
        float(vals[bad[0]]) if bad.size else None,
        f"within the property table range [{lo}, {hi}] degC",
    )
    _require(len(phases) > 0, "phases", list(phases), "a non-empty sequence of Phase")
    for i, p in enumerate(phases):
        d = p.duration_s
        _require(math.isfinite(d) and d >= 0.0, f"phases[{i}].duration_s", d, "finite >= 0 s")
        _check_face(p.face0, f"phases[{i}].face0", lo, hi)
        _check_face(p.face1, f"phases[{i}].face1", lo, hi)


def simulate(
    table: PropertyTable,
    thickness_m: float,
    start_temp_c: float | ArrayLike,
    phases: Sequence[Phase],
    lethality: LethalityModel | None = None,
    settings: ReferenceSettings = ReferenceSettings(),  # noqa: B008 (frozen, immutable)
    end_early: EarlyEnd | None = None,
) -> ReferenceResult:
    """Simulate a cook of a food slab with the reference solver.

    Parameters
    ----------
    table : PropertyTable
        Thermal properties of the food.
    thickness_m : float
        Slab thickness, m (> 0).
    start_temp_c : float or array_like of shape (n_cells,)
        Initial temperature, degC: uniform, or per cell in the initial orientation.
    phases : sequence of Phase
        The cook; durations >= 0 s. A zero-duration phase adds no rows but its flip is applied.
    lethality : LethalityModel, optional
        Kinetics whose log reduction is integrated in every cell.
    settings : ReferenceSettings
        Mesh and time step.
    end_early : EarlyEnd, optional
        End the cook after the first step that meets it (the rows are those of the full
        cook up to that step, bit for bit); None: run every phase.

    Returns
    -------
    ReferenceResult
        Rows at t = 0 and at every step end.

    Raises
    ------
    ValueError
        On invalid input, naming the field and its value.
    SolverDivergedError
        If Newton fails even after halving a step 12 times (not seen in practice; a step is
        halved at all only for steps far above the default on thin slabs).
    """
    return _run(table, thickness_m, start_temp_c, phases, lethality, settings, None, end_early)


def simulate_minima(
    table: PropertyTable,
    thickness_m: float,
    start_temp_c: float | ArrayLike,
    phases: Sequence[Phase],
    lethality: LethalityModel | None = None,
    settings: ReferenceSettings = ReferenceSettings(),  # noqa: B008 (frozen, immutable)
    end_early: EarlyEnd | None = None,
) -> RowMinima:
    """Run :func:`simulate` keeping, per row, only the coldest cell and the least log reduction.

    Parameters and errors are those of :func:`simulate`; the rows are the same (an early end
    included), and each value is the minimum over the cells of that row of :func:`simulate`'s
    result, bit for bit.

    Returns
    -------
    RowMinima
        Times (s), coldest temperatures (degC) and smallest log reductions (log10) per row.
    """
    out = _kernel_run(
        table, thickness_m, start_temp_c, phases, lethality, settings, None, end_early, minima=True
    )
    return RowMinima(out.t_s, out.temp_c[:, 0].copy(), out.log_reduction[:, 0].copy())


def simulate_forced(
    table: PropertyTable,
    thickness_m: float,
    start_temp_c: float | ArrayLike,
    phases: Sequence[Phase],
    lethality: LethalityModel | None,
    settings: ReferenceSettings,
    forcing: kernel.Forcing | None,
) -> ReferenceResult:
    """Run :func:`simulate` with a manufactured forcing added (verification only).

    Parameters
    ----------
    table, thickness_m, start_temp_c, phases, lethality, settings
        As for :func:`simulate`.
    forcing : callable or None
        ``(cell centres x_m, time s) -> (volumetric source per cell, W/m^3; extra heat flux
        into the food at faces 0 and 1, W/m^2)``, evaluated at every phase start and at both
        stage times of every step before the march (None: no forcing, as :func:`simulate`).

    Returns
    -------
    ReferenceResult
        As for :func:`simulate`.

    Raises
    ------
    ValueError
        On invalid input, naming the field and its value.
    SolverDivergedError
        If Newton fails (with a forcing a step cannot be halved: its stage times are fixed).
    """
    return _run(table, thickness_m, start_temp_c, phases, lethality, settings, forcing)


def _run(
    table: PropertyTable,
    thickness_m: float,
    start_temp_c: float | ArrayLike,
    phases: Sequence[Phase],
    lethality: LethalityModel | None,
    settings: ReferenceSettings,
    forcing: kernel.Forcing | None,
    end_early: EarlyEnd | None = None,
) -> ReferenceResult:
    """Check the inputs and march the cook, recording every step end."""
    out = _kernel_run(
        table, thickness_m, start_temp_c, phases, lethality, settings, forcing, end_early
    )
    n = settings.n_cells
    return ReferenceResult(
        t_s=out.t_s,
        temp_c=out.temp_c,
        log_reduction=out.log_reduction,
        phase_index=out.phase_index,
        x_m=(np.arange(n) + 0.5) * (float(thickness_m) / n),
        surface_c=out.surface_c,
        mirrored=out.mirrored,
    )


def _kernel_run(
    table: PropertyTable,
    thickness_m: float,
    start_temp_c: float | ArrayLike,
    phases: Sequence[Phase],
    lethality: LethalityModel | None,
    settings: ReferenceSettings,
    forcing: kernel.Forcing | None,
    end_early: EarlyEnd | None,
    minima: bool = False,
) -> kernel.CaseOutput:
    """Check the inputs and run the kernel, recording every step end (or its minima)."""
    n = settings.n_cells
    start = np.asarray(start_temp_c, dtype=float)
    check_inputs(table, float(thickness_m), start, phases, n)
    return kernel.run_case(
        kernel.lookup_for(table),
        float(thickness_m),
        np.broadcast_to(start, (n,)).astype(float),
        list(phases),
        lethality,
        settings.dt_max_s,
        settings.newton_tol_k,
        settings.max_newton,
        record=True,
        removal_phase=len(phases) - 1,
        forcing=forcing,
        stop=None
        if end_early is None
        else (end_early.after_s, end_early.log_reduction, end_early.temp_c),
        minima=minima,
    )
