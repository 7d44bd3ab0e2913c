"""Many reference simulations at once, with the discretisation of the scalar solver.

:func:`simulate_many` runs a batch of cooks of one food (one property table and one lethality
model) through exactly the discretisation of :func:`obvert.thermal.reference.simulate`: for
each case, a uniform mesh of ``settings.n_cells`` cells on its own thickness; every phase cut
into ``step_count(duration, dt_max)`` equal TR-BDF2 steps with the same stages; flips mirrored
at phase starts; surfaces re-solved and the rate re-evaluated at every phase start; drooping
surroundings evaluated at each stage time; the log reduction integrated by the trapezoid rule
on the step ends. Results agree with the scalar solver to within its Newton tolerance.

The cases march in lockstep on a global step counter: step ``k`` of case ``b`` uses that case's
own step, faces and cook time, and a case that has finished leaves the batch (the arrays
shrink). The Newton systems of all cases are solved together (:mod:`obvert.thermal._fv_batch`).
A case whose Newton iterations fail to converge leaves the batch and is run again by the scalar
solver, which halves its steps where needed: no unconverged result is ever returned.

Only the summary a certification needs is kept per case, not the time history.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.thermal import _fv
from obvert.thermal._fv_batch import BatchProps, FaceArrays, rate, trbdf2_step
from obvert.thermal.boundary import STEFAN_BOLTZMANN, FaceBC, Phase
from obvert.thermal.reference import ReferenceResult, ReferenceSettings, _check_inputs, simulate

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


@dataclass(frozen=True)
class _Block:
    """A phase that has steps, with the flips of the step-less phases before it."""

    first_step: int
    steps: int
    dt_s: float
    t_start_s: float
    flip: bool
    face0: FaceBC
    face1: FaceBC


@dataclass(frozen=True, eq=False)
class _Plan:
    """Steps of one case: blocks, total steps, steps up to removal, start unknowns, dx."""

    blocks: tuple[_Block, ...]
    n_steps: int
    removal_step: int
    y0: Array
    dx_m: float


def _check_case(table: PropertyTable, case: CookCase, n: int, i: int) -> None:
    """Raise ``ValueError`` (``TypeError`` for a non-case) naming ``cases[i]`` and the field."""
    if not isinstance(case, CookCase):
        raise TypeError(f"cases[{i}] = {case!r} is invalid: must be a CookCase")
    try:
        start = np.asarray(case.start_temp_c, dtype=float)
        _check_inputs(table, float(case.thickness_m), start, list(case.phases), n)
    except ValueError as err:
        raise ValueError(f"cases[{i}].{err}") from None
    r, last = case.removal_phase, len(case.phases) - 1
    ok = r is None or (
        isinstance(r, int | np.integer) and not isinstance(r, bool) and 0 <= r <= last
    )
    if not ok:
        raise ValueError(
            f"cases[{i}].removal_phase = {r!r} is invalid: "
            f"must be None or an integer in [0, {last}]"
        )


def _plan(case: CookCase, props: _fv.Props, settings: ReferenceSettings) -> _Plan:
    """Cut ``case`` into the steps of the scalar solver."""
    n = settings.n_cells
    start = np.broadcast_to(np.asarray(case.start_temp_c, dtype=float), (n,)).astype(float)
    y0 = np.concatenate([start[:1], props.enthalpy(start), start[-1:]])
    phases = list(case.phases)
    removal = len(phases) - 1 if case.removal_phase is None else int(case.removal_phase)
    blocks: list[_Block] = []
    step, t_start, flip, removal_step = 0, 0.0, False, 0
    for i, ph in enumerate(phases):
        flip ^= ph.flip_before
        m = _fv.step_count(ph.duration_s, settings.dt_max_s)
        if m:
            blocks.append(_Block(step, m, ph.duration_s / m, t_start, flip, ph.face0, ph.face1))
            step, flip = step + m, False
        if i == removal:
            removal_step = step
        t_start += ph.duration_s
    return _Plan(tuple(blocks), step, removal_step, y0, float(case.thickness_m) / n)


def _summary(result: ReferenceResult, removal_phase: int) -> ReferenceSummary:
    """Summary of a scalar run (removal row: the last row of a phase <= ``removal_phase``)."""
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
        If the scalar solver, used for a case whose batched Newton iterations failed, also
        fails (as :func:`obvert.thermal.reference.simulate`).
    """
    cases = list(cases)
    for i, case in enumerate(cases):
        _check_case(table, case, settings.n_cells, i)
    props = _fv.Props(table)
    plans = [_plan(c, props, settings) for c in cases]
    bp = BatchProps(props)
    stepped = sorted(
        (i for i, p in enumerate(plans) if p.n_steps > 0), key=lambda i: -plans[i].n_steps
    )
    done: dict[int, ReferenceSummary] = {}
    failed: set[int] = set()
    for lo in range(0, len(stepped), MAX_ROWS):
        part, bad = _Lockstep(bp, settings, lethality, plans, stepped[lo : lo + MAX_ROWS]).run()
        done.update(part)
        failed |= bad
    out: list[ReferenceSummary] = []
    for i, case in enumerate(cases):
        if i in done and i not in failed:
            out.append(done[i])
            continue
        res = simulate(table, case.thickness_m, case.start_temp_c, case.phases, lethality, settings)
        last = len(case.phases) - 1
        out.append(_summary(res, last if case.removal_phase is None else int(case.removal_phase)))
    return out


#: Most cases marched in one lockstep batch (bounds the memory, about 20 arrays of
#: MAX_ROWS x (n_cells + 2)); longer lists run as several batches of cases of similar length.
#: Results do not depend on it.
MAX_ROWS = 512

#: Per-row state arrays of :class:`_Lockstep`, compacted together when rows leave.
_ROW_ARRAYS = (
    "case", "y", "fn", "dy", "lr", "r_old", "temp", "inv", "dt", "t_start", "first",
    "h", "t_inf_c", "droop_k", "droop_tau", "eps_sigma", "mirrored", "n_steps", "bad",
)  # fmt: skip


class _Lockstep:
    """The batched cases marched together, step ``k`` of every case at once."""

    def __init__(
        self,
        bp: BatchProps,
        settings: ReferenceSettings,
        lethality: LethalityModel | None,
        plans: list[_Plan],
        cases: list[int],
    ) -> None:
        self.bp, self.plans, self.kill = bp, plans, lethality.rate if lethality else None
        self.tol, self.max_iter = settings.newton_tol_k, settings.max_newton
        order = sorted(cases, key=lambda c: -plans[c].n_steps)  # longest first (stable)
        m, n = len(order), settings.n_cells
        self.case = np.array(order, dtype=np.intp)
        self.y = np.array([plans[c].y0 for c in order]).reshape(m, n + 2)
        self.inv = np.array([[1.0 / plans[c].dx_m] for c in order]).reshape(m, 1)
        self.fn, self.lr, self.r_old, self.temp = (np.zeros((m, n)) for _ in range(4))
        self.dy, self.dt = np.zeros((m, n + 2)), np.zeros((m, 1))
        self.t_start, self.first = np.zeros(m), np.zeros(m, dtype=np.intp)
        self.h, self.t_inf_c, self.droop_k, self.eps_sigma = (np.zeros((m, 2)) for _ in range(4))
        self.droop_tau, self.mirrored = np.ones((m, 2)), np.zeros(m, dtype=bool)
        self.n_steps = np.array([plans[c].n_steps for c in order], dtype=np.intp)
        self.bad = np.zeros(m, dtype=bool)  # Newton failed: leaves for the scalar solver
        self.row_of = np.full(len(plans), -1, dtype=np.intp)
        self.row_of[self.case] = np.arange(m)
        self.starts: dict[int, list[tuple[int, int]]] = defaultdict(list)
        self.removals: dict[int, list[int]] = defaultdict(list)
        for c in order:
            for b, block in enumerate(plans[c].blocks):
                self.starts[block.first_step].append((c, b))
            self.removals[plans[c].removal_step].append(c)
        self.any_droop = any(
            bl.face0.droop_k > 0.0 or bl.face1.droop_k > 0.0
            for c in order
            for bl in plans[c].blocks
        )
        self.removal_c: dict[int, float] = {}
        self.done: dict[int, ReferenceSummary] = {}
        self.failed: set[int] = set()
        for c in self.removals.pop(0, []):
            self.removal_c[c] = float(np.min(bp.temperature(plans[c].y0[1:-1])))

    def run(self) -> tuple[dict[int, ReferenceSummary], set[int]]:
        """March to the end; return the summaries and the cases that failed to converge."""
        k = 0
        while self.case.size:
            if k in self.starts:
                self._start(self.starts[k])
            self._step(k)
            k += 1
            self._record(k)
        return self.done, self.failed

    def _faces(self, rows: slice | NDArray[np.intp], t_s: Array) -> FaceArrays:
        """Surroundings of ``rows`` at cook times ``t_s`` (s from loading)."""
        t_inf = self.t_inf_c[rows]
        if self.any_droop:  # rows without droop get t_inf_c exactly (0 * exp(..) = 0)
            t_inf = t_inf - self.droop_k[rows] * np.exp(-t_s[:, None] / self.droop_tau[rows])
        return FaceArrays(self.h[rows], t_inf, self.eps_sigma[rows])

    def _start(self, items: list[tuple[int, int]]) -> None:
        """Start a block (a phase with steps) in the rows of ``items`` (case, block index)."""
        rows = self.row_of[[c for c, _ in items]]
        keep = rows >= 0  # cases that already failed have left
        rows = rows[keep]
        blocks = [self.plans[c].blocks[b] for (c, b), ok in zip(items, keep, strict=True) if ok]
        if not blocks:
            return
        fr = rows[np.array([bl.flip for bl in blocks])]
        self.y[fr], self.lr[fr] = self.y[fr][:, ::-1], self.lr[fr][:, ::-1]
        self.mirrored[fr] = ~self.mirrored[fr]
        self.dt[rows, 0] = [bl.dt_s for bl in blocks]
        self.t_start[rows] = [bl.t_start_s for bl in blocks]
        self.first[rows] = [bl.first_step for bl in blocks]
        pairs = [(bl.face0, bl.face1) for bl in blocks]
        self.h[rows] = [[f.h for f in p] for p in pairs]
        self.t_inf_c[rows] = [[f.t_inf_c for f in p] for p in pairs]
        self.droop_k[rows] = [[f.droop_k for f in p] for p in pairs]
        self.droop_tau[rows] = [[f.droop_tau_s for f in p] for p in pairs]
        self.eps_sigma[rows] = [[STEFAN_BOLTZMANN * f.emissivity for f in p] for p in pairs]
        faces = self._faces(rows, self.t_start[rows])
        fn, y, temp, failed = rate(
            self.bp, self.inv[rows], faces, self.y[rows], self.tol, self.max_iter
        )
        self.fn[rows], self.y[rows], self.dy[rows] = fn, y, 0.0
        if self.kill is not None:
            self.r_old[rows] = self.kill(temp)
        self.bad[rows[failed]] = True

    def _step(self, k: int) -> None:
        """Take step ``k`` of every row."""
        dt = self.dt[:, 0]
        t0 = self.t_start + (k - self.first) * dt
        every = slice(None)
        faces_st, faces_new = self._faces(every, t0 + _fv.GAMMA * dt), self._faces(every, t0 + dt)
        y, self.fn, self.temp, failed = trbdf2_step(
            self.bp, self.inv, self.dt, faces_st, faces_new, self.y, self.fn, self.dy,
            self.tol, self.max_iter,
        )  # fmt: skip
        self.dy, self.y = y - self.y, y
        if self.kill is not None:
            r_new = self.kill(self.temp)
            self.lr = self.lr + 0.5 * self.dt * (self.r_old + r_new)
            self.r_old = r_new
        self.bad |= failed

    def _record(self, n_done: int) -> None:
        """Record removals and finished cases after ``n_done`` steps; drop rows that left."""
        for c in self.removals.get(n_done, []):
            r = self.row_of[c]
            if r >= 0:
                self.removal_c[c] = float(np.min(self.temp[r]))
        leaving = (self.n_steps == n_done) | self.bad
        for r in np.flatnonzero(leaving):
            c = int(self.case[r])
            if self.bad[r]:
                self.failed.add(c)
            else:
                self.done[c] = ReferenceSummary(
                    float(np.min(self.lr[r])),
                    self.removal_c[c],
                    self.temp[r].copy(),
                    self.lr[r].copy(),
                    bool(self.mirrored[r]),
                )
        if leaving.any():
            keep = ~leaving
            for name in _ROW_ARRAYS:
                setattr(self, name, getattr(self, name)[keep])
            self.row_of[:] = -1
            self.row_of[self.case] = np.arange(self.case.size)
