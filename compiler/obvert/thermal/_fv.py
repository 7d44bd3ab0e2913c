"""Finite-volume discretisation of the reference slab solver (internal).

See :mod:`obvert.thermal.reference` for the public interface.

Space
-----
Uniform cell-centred mesh on [0, L]; the state of a cell is its volumetric enthalpy E and
``T = table.temperature(E)``. The conductive flux through the face between cells at ``T_a``
and ``T_b`` is ``(u(T_a) - u(T_b)) / dx`` with the Kirchhoff potential ``u(T) = int k dT``:
the face conductivity is the mean of k(T) over [T_b, T_a]. Its trapezoid approximation is the
arithmetic mean of the two cell conductivities, so both are second order for smooth k(T); the
Kirchhoff mean is chosen because it is exact for steady conduction with k(T), and the flux is
strictly increasing in each cell temperature, which keeps Newton robust where frozen food
loses two thirds of its conductivity within a few kelvin below the freezing point. (The
harmonic mean is the right choice for a jump in material between cells, not for k(T).)

Each face has an unknown surface temperature ``T_s`` fixed by the balance between the
half-cell conduction ``2 (u(T_s) - u(T_0)) / dx`` and the Robin/radiation flux. Both surface
temperatures join the cell enthalpies in one Newton system, whose unknowns
[T_s0, E_0 .. E_{n-1}, T_s1] give a tridiagonal matrix (at convergence this is the same as
solving each surface balance by a scalar Newton). The surfaces are carried in temperature,
not enthalpy: their equations have no storage term, and an enthalpy update there would
overshoot wildly where dT/dE jumps at the freezing point. The half-cell closure is second
order for cell and surface values (verified by the manufactured-solution tests).

Time
----
TR-BDF2 with gamma = 2 - sqrt(2): a trapezoid stage to t + gamma dt, then BDF2 to t + dt.
One-step, second order, L-stable; both stages have the implicit weight gamma/2 * dt, so the
two Newton matrices have the same form. A plate that droops after loading
(:meth:`FaceBC.t_inf_at`) is evaluated at the time of each implicit stage, t + gamma dt and
t + dt, and at the phase start for the rate that starts the phase. Newton iterates are
projected onto the table range; if a step still fails to converge (only seen for steps some
200 times the default on thin slabs, where the thawing front makes Newton cycle) it is
replaced by two half steps.
"""

from __future__ import annotations

import math
from bisect import bisect_right
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.linalg import get_lapack_funcs

from obvert.food.table import PropertyTable
from obvert.thermal.boundary import STEFAN_BOLTZMANN, FaceBC

Array = NDArray[np.float64]
Pair = tuple[float, float]

#: TR-BDF2 parameter; the stage weight ``gamma/2`` equals ``(1 - gamma)/(2 - gamma)``.
GAMMA = 2.0 - math.sqrt(2.0)
STAGE_WEIGHT = 0.5 * GAMMA
#: BDF2 stage: ``E_new - w dt f(E_new) = B2_STAR * E_stage - B2_OLD * E_old``.
B2_STAR = 1.0 / (GAMMA * (2.0 - GAMMA))
B2_OLD = (1.0 - GAMMA) ** 2 / (GAMMA * (2.0 - GAMMA))
_KELVIN = 273.15

#: Verification-only forcing: ``(cell centres x_m, time s) -> (volumetric source per cell,
#: W/m^3; extra heat flux into the food at faces 0 and 1, W/m^2)``.
Forcing = Callable[[Array, float], tuple[Array, Array]]
#: What the time stepper calls: a forcing, or a function returning None (no forcing).
Source = Callable[[Array, float], "tuple[Array, Array] | None"]
#: New unknowns [T_s0, E_cells.., T_s1], cell dE/dt (W/m^3), temperatures (degC).
StepResult = tuple[Array, Array, Array]

#: LAPACK tridiagonal solver, the routine ``scipy.linalg.solve_banded`` dispatches to for one
#: sub- and one super-diagonal; called directly to skip its per-call validation, which cost
#: about a third of the run time. The matrix is stored in the ``solve_banded`` layout.
_GTSV = get_lapack_funcs(("gtsv",), (np.zeros(1),))[0]


class SolverDivergedError(RuntimeError):
    """Newton iterations of a time step did not converge."""


class Props:
    """Piecewise lookups on a :class:`PropertyTable`: k(T) and E(T) piecewise linear.

    The Kirchhoff potential is integrated exactly for the piecewise-linear k of the table,
    so ``du/dT`` equals ``table.k(T)`` and ``T(E)`` equals ``table.temperature(E)``. Outside the
    table the end segments would be extrapolated; Newton iterates are projected onto the
    table range (:meth:`project`) and the input checks keep the solution inside it.
    """

    def __init__(self, table: PropertyTable) -> None:
        t = np.asarray(table.temp_c, dtype=float)
        e = np.asarray(table.vol_enthalpy, dtype=float)
        k = np.asarray(table.conductivity, dtype=float)
        dt = np.diff(t)
        u = np.concatenate([[0.0], np.cumsum(0.5 * (k[1:] + k[:-1]) * dt)])
        # interior breakpoints: searchsorted on them gives the segment, clipped to the ends
        self.t_in, self.e_in = t[1:-1].copy(), e[1:-1].copy()
        # rows: T_j, E_j, dT/dE, k_j, dk/dT, u_j of each segment [j, j+1]
        self.seg = np.vstack([t[:-1], e[:-1], dt / np.diff(e), k[:-1], np.diff(k) / dt, u[:-1]])
        self.rows = [tuple(float(v) for v in col) for col in self.seg.T]
        self.t_list = self.t_in.tolist()
        self.t_lo, self.t_hi = float(t[0]), float(t[-1])
        self.e_lo, self.e_hi = float(e[0]), float(e[-1])

    def _cols(self, grid: Array, x: Array) -> Array:
        return self.seg.take(np.searchsorted(grid, x, side="right"), axis=1)

    def of_e(self, e: Array) -> tuple[Array, Array, Array, Array]:
        """Return T (degC), k (W/m/K), u (W/m) and dT/dE (K m^3/J) at enthalpy e (J/m^3)."""
        t0, e0, sl, k0, dk, u0 = self._cols(self.e_in, e)
        d = sl * (e - e0)
        k = k0 + dk * d
        return t0 + d, k, u0 + 0.5 * d * (k0 + k), sl

    def of_t_scalar(self, t: float) -> tuple[float, float]:
        """Return k (W/m/K) and u (W/m) at one temperature t (degC)."""
        t0, _, _, k0, dk, u0 = self.rows[bisect_right(self.t_list, t)]
        d = t - t0
        k = k0 + dk * d
        return k, u0 + 0.5 * d * (k0 + k)

    def project(self, y: Array) -> Array:
        """Clip [T_s0, E_cells.., T_s1] in place onto the table range; return it."""
        cells = y[1:-1]
        np.maximum(cells, self.e_lo, out=cells)
        np.minimum(cells, self.e_hi, out=cells)
        y[0] = min(max(y[0], self.t_lo), self.t_hi)
        y[-1] = min(max(y[-1], self.t_lo), self.t_hi)
        return y

    def enthalpy(self, t: Array) -> Array:
        """Return volumetric enthalpy (J/m^3) at temperature t (degC)."""
        t0, e0, sl, _, _, _ = self._cols(self.t_in, t)
        return e0 + (t - t0) / sl


@dataclass(frozen=True)
class Faces:
    """Boundary data of faces 0 and 1 in the lab frame of one phase.

    ``t_inf`` holds the surroundings at one instant. Faces whose plate droops after loading
    keep their :class:`FaceBC` in ``drooping``; :meth:`at` evaluates them at a cook time.
    """

    h: tuple[float, float]
    t_inf: tuple[float, float]
    eps_sigma: tuple[float, float]
    drooping: tuple[FaceBC, FaceBC] | None = None

    @classmethod
    def of(cls, face0: FaceBC, face1: FaceBC) -> Faces:
        """Pack two :class:`FaceBC` (surroundings at their recovered ``t_inf_c``)."""
        droop = face0.droop_k != 0.0 or face1.droop_k != 0.0
        return cls(
            h=(float(face0.h), float(face1.h)),
            t_inf=(float(face0.t_inf_c), float(face1.t_inf_c)),
            eps_sigma=(STEFAN_BOLTZMANN * face0.emissivity, STEFAN_BOLTZMANN * face1.emissivity),
            drooping=(face0, face1) if droop else None,
        )

    def at(self, t_s: float) -> Faces:
        """The faces at ``t_s`` seconds from loading (``self`` when nothing droops)."""
        if self.drooping is None:
            return self
        f0, f1 = self.drooping
        return Faces(self.h, (f0.t_inf_at(t_s), f1.t_inf_at(t_s)), self.eps_sigma)

    def flux(self, side: int, ts: float) -> tuple[float, float]:
        """Heat flux into the food (W/m^2) through face ``side`` at T_s (degC), and d/dT_s."""
        h, ti, es = self.h[side], self.t_inf[side], self.eps_sigma[side]
        tk = ts + _KELVIN
        tik = ti + _KELVIN
        return h * (ti - ts) + es * (tik**4 - tk**4), -h - 4.0 * es * tk**3


@dataclass(frozen=True)
class Mesh:
    """Uniform cell-centred mesh and Newton controls."""

    n: int
    dx: float
    x: Array
    tol_k: float
    max_iter: int

    @classmethod
    def uniform(cls, thickness_m: float, n_cells: int, tol_k: float, max_iter: int) -> Mesh:
        """Mesh of ``n_cells`` equal cells on [0, thickness_m]."""
        dx = thickness_m / n_cells
        return cls(n_cells, dx, (np.arange(n_cells) + 0.5) * dx, tol_k, max_iter)


def face_fluxes(
    props: Props, mesh: Mesh, y: Array
) -> tuple[Array, Array, Array, Array, Pair, Pair]:
    """Conductive fluxes in +x (W/m^2, n+1 faces) and the local derivatives.

    ``y`` is [T_s0, E_0 .. E_{n-1}, T_s1] (degC, J/m^3, degC). Returns the fluxes, cell
    temperatures, du/dE and dT/dE of the cells, and k, T of the two surfaces.
    """
    t, k, u, sl = props.of_e(y[1:-1])
    ts0, ts1 = float(y[0]), float(y[-1])
    k0, u0 = props.of_t_scalar(ts0)
    k1, u1 = props.of_t_scalar(ts1)
    inv = 1.0 / mesh.dx
    f = np.empty(mesh.n + 1)
    np.subtract(u[:-1], u[1:], out=f[1:-1])
    f[1:-1] *= inv
    f[0] = 2.0 * inv * (u0 - u[0])  # half-cell distance between a surface and its cell
    f[-1] = 2.0 * inv * (u[-1] - u1)
    return f, t, k * sl, sl, (k0, k1), (ts0, ts1)


def _surface_residuals(faces: Faces, f: Array, ts: Pair, qx: Sequence[float]) -> tuple[float, ...]:
    """Minus the surface balance residuals (W/m^2) and d(flux into food)/dT_s at both faces."""
    q0, dq0 = faces.flux(0, ts[0])
    q1, dq1 = faces.flux(1, ts[1])
    return q0 + qx[0] - f[0], q1 + qx[1] + f[-1], dq0, dq1


def stage(
    props: Props,
    mesh: Mesh,
    faces: Faces,
    wdt: float,
    rhs: Array,
    src: tuple[Array, Array] | None,
    y: Array,
) -> tuple[Array, Array]:
    """Solve ``E - wdt f(E) = rhs`` and both surface balances by Newton.

    Parameters
    ----------
    rhs : ndarray, shape (n,)
        Right-hand side of the cell equations, J/m^3.
    src : tuple of ndarray or None
        Manufactured volumetric source (W/m^3) and extra face fluxes (W/m^2), or None.
    y : ndarray, shape (n + 2,)
        Initial guess of [T_s0, E_0 .. E_{n-1}, T_s1] (degC, J/m^3, degC).

    Returns
    -------
    y : ndarray, shape (n + 2,)
        The converged unknowns.
    t : ndarray, shape (n + 2,)
        Their temperatures, degC.

    Raises
    ------
    SolverDivergedError
        If ``mesh.max_iter`` iterations do not converge (the caller then halves the step).

    Notes
    -----
    Convergence: every cell residual times dT/dE and every surface residual over its
    conductance is below ``mesh.tol_k``; the cell block of the Newton matrix is an M-matrix
    with a unit diagonal part, so these estimates bound the remaining error in K. Iterates
    are projected onto the table range so that they never enter an extrapolated region.
    """
    inv = 1.0 / mesh.dx
    a = wdt * inv * inv
    qx = (0.0, 0.0) if src is None else src[1]
    base = rhs if src is None else rhs + wdt * src[0]
    ab = np.empty((3, y.size))
    res = np.empty(y.size)
    err = math.inf
    for _ in range(mesh.max_iter):
        f, t, w, sl, ks, ts = face_fluxes(props, mesh, y)
        r0, r1, dq0, dq1 = _surface_residuals(faces, f, ts, qx)
        cells = res[1:-1]
        np.subtract(f[:-1], f[1:], out=cells)
        cells *= wdt * inv
        cells += base
        cells -= y[1:-1]
        res[0], res[-1] = r0, r1
        diag0 = 2.0 * ks[0] * inv - dq0
        diag1 = 2.0 * ks[1] * inv - dq1
        err = max(float(np.max(np.abs(cells * sl))), abs(r0) / diag0, abs(r1) / diag1)
        if err < mesh.tol_k:
            return y, np.concatenate(([ts[0]], t, [ts[1]]))
        _jacobian(ab, a * w, w * inv, a, ks, diag0, diag1)
        _, _, _, dy, info = _GTSV(ab[2, :-1], ab[1], ab[0, 1:], res, 1, 1, 1, 1)
        if info != 0:
            raise SolverDivergedError(f"singular Newton matrix (LAPACK gtsv info {info})")
        y = props.project(y + dy)
    raise SolverDivergedError(f"Newton did not converge (last error estimate {err:.3g} K)")


def _jacobian(
    ab: Array, aw: Array, w_dx: Array, a: float, ks: Pair, diag0: float, diag1: float
) -> None:
    """Fill the banded Newton matrix (``solve_banded`` layout) of [T_s0, E_0.., T_s1]."""
    ab[1, 1:-1] = 1.0 + 2.0 * aw
    ab[1, 1] += aw[0]  # a cell next to a surface sees twice the face conductance
    ab[1, -2] += aw[-1]
    ab[1, 0] = diag0
    ab[1, -1] = diag1
    ab[0, 0] = ab[2, -1] = 0.0
    ab[0, 1] = -2.0 * w_dx[0]
    np.negative(aw[1:], out=ab[0, 2:-1])
    ab[0, -1] = -2.0 * a * ks[1]
    ab[2, 0] = -2.0 * a * ks[0]
    np.negative(aw[:-1], out=ab[2, 1:-2])
    ab[2, -2] = -2.0 * w_dx[-1]


def solve_surfaces(props: Props, mesh: Mesh, faces: Faces, y: Array, qx: Sequence[float]) -> Array:
    """Return ``y`` with T_s0, T_s1 solved from the surface balances (cells held fixed)."""
    y = y.copy()
    inv = 1.0 / mesh.dx
    for _ in range(mesh.max_iter):
        f, _, _, _, ks, ts = face_fluxes(props, mesh, y)
        r0, r1, dq0, dq1 = _surface_residuals(faces, f, ts, qx)
        d0 = r0 / (2.0 * ks[0] * inv - dq0)
        d1 = r1 / (2.0 * ks[1] * inv - dq1)
        y[0] = min(max(y[0] + d0, props.t_lo), props.t_hi)
        y[-1] = min(max(y[-1] + d1, props.t_lo), props.t_hi)
        if max(abs(d0), abs(d1)) < mesh.tol_k:
            return y
    raise SolverDivergedError("surface balance did not converge")


def rate(
    props: Props, mesh: Mesh, faces: Faces, y: Array, src: tuple[Array, Array] | None
) -> tuple[Array, Array]:
    """Return dE/dt of the cells (W/m^3) and ``y`` with consistent surfaces."""
    y = solve_surfaces(props, mesh, faces, y, (0.0, 0.0) if src is None else src[1])
    f = face_fluxes(props, mesh, y)[0]
    dedt = (f[:-1] - f[1:]) / mesh.dx
    return (dedt if src is None else dedt + src[0]), y


#: Times a step may be halved when Newton fails (extreme steps only; never at defaults).
MAX_HALVINGS = 12


def trbdf2_step(
    props: Props,
    mesh: Mesh,
    faces: Faces,
    src: Source,
    y: Array,
    fn: Array,
    t0: float,
    dt: float,
    dy: Array,
) -> StepResult:
    """One TR-BDF2 step from ``t0``; ``dy`` is the previous increment (predictor).

    ``t0`` is the cook time (s from loading): each implicit stage sees the surroundings of
    drooping faces at its own time, ``t0 + gamma dt`` and ``t0 + dt``.
    Returns the new unknowns, dE/dt of the cells at the new time (from the BDF2 relation,
    no extra evaluation), and the new temperatures [T_s0, T_cells.., T_s1].
    """
    wdt = STAGE_WEIGHT * dt
    rhs = y[1:-1] + wdt * fn
    t_st, t_new = t0 + GAMMA * dt, t0 + dt
    y_st, _ = stage(props, mesh, faces.at(t_st), wdt, rhs, src(mesh.x, t_st), y + GAMMA * dy)
    rhs = B2_STAR * y_st[1:-1] - B2_OLD * y[1:-1]
    guess = y_st + (1.0 - GAMMA) / GAMMA * (y_st - y)
    y_new, temp = stage(props, mesh, faces.at(t_new), wdt, rhs, src(mesh.x, t_new), guess)
    return y_new, (y_new[1:-1] - rhs) / wdt, temp


def advance(
    props: Props,
    mesh: Mesh,
    faces: Faces,
    src: Source,
    y: Array,
    fn: Array,
    t0: float,
    dt: float,
    dy: Array,
    depth: int = 0,
) -> StepResult:
    """Advance by ``dt``; if Newton fails, take two half steps instead (recursively).

    Returns the new unknowns, cell dE/dt and temperatures as :func:`trbdf2_step`.
    """
    try:
        return trbdf2_step(props, mesh, faces, src, y, fn, t0, dt, dy)
    except SolverDivergedError as err:
        if depth >= MAX_HALVINGS:
            raise SolverDivergedError(f"at t = {t0:.6g} s with dt = {dt:.3g} s: {err}") from err
    half = 0.5 * dt
    y1, fn1, _ = advance(props, mesh, faces, src, y, fn, t0, half, 0.5 * dy, depth + 1)
    return advance(props, mesh, faces, src, y1, fn1, t0 + half, half, y1 - y, depth + 1)


def step_count(duration_s: float, dt_max_s: float) -> int:
    """Return the number of equal steps of a phase, ``ceil(duration/dt_max)`` (0 if empty).

    A ratio within 1e-9 of an integer counts as that integer (a 90 s phase at 0.05 s is
    1800 steps despite rounding in the division).
    """
    if duration_s == 0.0:
        return 0
    return max(1, math.ceil(duration_s / dt_max_s - 1e-9))
