"""Compiled finite-volume kernel of the reference slab solver (internal to the thermal models).

:func:`obvert.thermal.reference.simulate` (one cook, full time history) and
:func:`obvert.thermal.batch.simulate_many` (many cooks, summaries) both run :func:`run_case`,
the one implementation of the discretisation below, compiled with numba.

Why one compiled per-case kernel
--------------------------------
Each cook is marched on its own by one compiled function (:func:`_march`) that holds the
whole time loop: phases, flips, TR-BDF2 stages, Newton, step halving and the per-cell
accumulation. A batch is a plain loop over cases. Once the loop is compiled there is no
per-step Python overhead left to share, so marching many cases in lockstep (as a vectorised
array code must) gains nothing and costs bookkeeping: cases of different length, Newton
iterations that converge at different counts and steps halved in one case only. Per case,
each result is by construction independent of how the cases are grouped (byte-identical),
a case that needs step halving simply halves its own step, the working memory is a few
arrays of ``n_cells + 2`` values that stay in cache, and worker processes can share out cases
freely. Compiled with ``cache=True``: a spawned worker loads the machine code from the cache
instead of compiling again.

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
[T_s0, E_0 .. E_{n-1}, T_s1] give a tridiagonal matrix, solved by the Thomas algorithm (the
matrix is an M-matrix after scaling the cell columns by dT/dE, so elimination without
pivoting is stable). The surfaces are carried in temperature, not enthalpy: their equations
have no storage term, and an enthalpy update there would overshoot wildly where dT/dE jumps
at the freezing point. The half-cell closure is second order for cell and surface values
(verified by the manufactured-solution tests).

Time
----
TR-BDF2 with gamma = 2 - sqrt(2): a trapezoid stage to t + gamma dt, then BDF2 to t + dt.
One-step, second order, L-stable; both stages have the implicit weight gamma/2 * dt, so the
two Newton matrices have the same form. A plate that droops after loading
(:meth:`FaceBC.t_inf_at`) is evaluated at the time of each implicit stage, t + gamma dt and
t + dt, and at the phase start for the rate that starts the phase. Newton iterates are
projected onto the table range; if a step still fails to converge (only seen for steps some
200 times the default on thin slabs, where the thawing front makes Newton cycle) it is
replaced by two half steps, recursively up to :data:`MAX_HALVINGS` times.

Per-cell accumulators
---------------------
Quantities integrated in time in every cell live in one array ``acc`` of shape
(:data:`N_ACC`, n_cells), updated once per step by :func:`_accumulate` from the cell
temperatures at the two step ends and mirrored with the state at flips. Row
:data:`ACC_LOG_REDUCTION` is the log reduction (trapezoid rule on the step ends). A further
per-cell quantity (for instance the time spent at or above a temperature) is one more row,
one more line in :func:`_accumulate` and its parameters in the ``kin`` vector; the kernel
already returns the cell temperatures at removal (:attr:`CaseOutput.removal_temp_c`).
"""

from __future__ import annotations

import math
import weakref
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numba
import numpy as np
from numpy.typing import NDArray

from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.thermal.boundary import STEFAN_BOLTZMANN, Phase

Array = NDArray[np.float64]

#: TR-BDF2 parameter; the stage weight ``gamma/2`` equals ``(1 - gamma)/(2 - gamma)``.
GAMMA = 2.0 - math.sqrt(2.0)
STAGE_WEIGHT = 0.5 * GAMMA
#: BDF2 stage: ``E_new - w dt f(E_new) = B2_STAR * E_stage - B2_OLD * E_old``.
B2_STAR = 1.0 / (GAMMA * (2.0 - GAMMA))
B2_OLD = (1.0 - GAMMA) ** 2 / (GAMMA * (2.0 - GAMMA))
#: Predictor factor of the BDF2 stage guess ``y_st + (1 - gamma)/gamma (y_st - y)``.
B2_GUESS = (1.0 - GAMMA) / GAMMA
KELVIN = 273.15
#: Times a step may be halved when Newton fails (extreme steps only; never at defaults).
MAX_HALVINGS = 12
#: Largest bucket table of the enthalpy lookup (entries); finer tables use a binary search.
MAX_BUCKETS = 1 << 22

#: Rows of the per-cell accumulator array: log reduction, log10 (see the module docstring).
ACC_LOG_REDUCTION = 0
N_ACC = 1

#: Verification-only forcing: ``(cell centres x_m, time s) -> (volumetric source per cell,
#: W/m^3; extra heat flux into the food at faces 0 and 1, W/m^2)``.
Forcing = Callable[[Array, float], tuple[Array, Array]]

# Outcome codes of the kernel.
_OK = 0
_NEWTON_FAILED = 1
_SURFACE_FAILED = 2
_FORCED_HALVING = 3

# Columns of a segment row of the property lookup: T_j, E_j, dT/dE, k_j, dk/dT, u_j.
_T0, _E0, _SL, _K0, _DK, _U0 = 0, 1, 2, 3, 4, 5
# Entries of the lookup limits vector.
_E_LO, _E_HI, _T_LO, _T_HI, _INV_WIDTH, _BUCKETED = 0, 1, 2, 3, 4, 5
# Columns of a face row (per phase and face): h, t_inf_c, droop_k, droop_tau_s, eps*sigma.
_H, _TINF, _DROOP, _TAU, _ES = 0, 1, 2, 3, 4
# Entries of the kinetics vector: on (1/0), D_ref (s), T_ref (degC), z (K), cap (degC).
_KILL_ON, _D_REF, _T_REF, _Z, _CAP = 0, 1, 2, 3, 4
# Rows of the work array (each n_cells + 2 long).
_F, _TC, _W, _SLC, _U, _RES, _DL, _DD, _DU, _CP, _DY = 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10
_RHS, _BASE, _YST, _GUESS, _TEMP, _ROLD = 11, 12, 13, 14, 15, 16
_N_WORK = 17


class SolverDivergedError(RuntimeError):
    """Newton iterations of a time step did not converge."""


def step_count(duration_s: float, dt_max_s: float) -> int:
    """Return the number of equal steps of a phase, ``ceil(duration/dt_max)`` (0 if empty).

    A ratio within 1e-9 of an integer counts as that integer (a 90 s phase at 0.05 s is
    1800 steps despite rounding in the division).
    """
    if duration_s == 0.0:
        return 0
    return max(1, math.ceil(duration_s / dt_max_s - 1e-9))


# ----------------------------------------------------------------------------- lookups


@numba.njit(cache=True, inline="always")
def _segment(
    e: float,
    e_in: Array,
    base: NDArray[np.int64],
    nxt: Array,
    e_lo: float,
    inv_width: float,
    bucketed: bool,
) -> int:
    """Table segment of enthalpy ``e`` (J/m^3), as ``searchsorted(e_in, e, 'right')``."""
    if not bucketed:
        return np.searchsorted(e_in, e, side="right")
    x = (e - e_lo) * inv_width
    top = base.size - 1
    i = 0
    if x >= top:
        i = top
    elif x > 0.0:  # also false for NaN: bucket 0, never an index outside the table
        i = int(x)
    b = base[i]
    if e >= nxt[b]:
        b += 1
    return b


@numba.njit(cache=True)
def _segments(e: Array, e_in: Array, base: NDArray[np.int64], nxt: Array, lim: Array) -> Array:
    """:func:`_segment` of every entry of ``e``."""
    e_lo, inv_width, bucketed = lim[_E_LO], lim[_INV_WIDTH], lim[_BUCKETED] != 0.0
    out = np.empty(e.size, dtype=np.int64)
    for i in range(e.size):
        out[i] = _segment(e[i], e_in, base, nxt, e_lo, inv_width, bucketed)
    return out


@numba.njit(cache=True)
def _cells(lk: tuple, y: Array, n: int, wk: Array) -> None:
    """T (degC), du/dE, dT/dE and u (W/m) of cells 0..n-1 of ``y`` into rows of ``wk``."""
    seg, e_in, _, base, nxt, lim = lk
    e_lo, inv_width, bucketed = lim[_E_LO], lim[_INV_WIDTH], lim[_BUCKETED] != 0.0
    for i in range(n):
        e = y[i + 1]
        j = _segment(e, e_in, base, nxt, e_lo, inv_width, bucketed)
        sl = seg[j, _SL]
        k0 = seg[j, _K0]
        d = sl * (e - seg[j, _E0])
        k = k0 + seg[j, _DK] * d
        wk[_TC, i] = seg[j, _T0] + d
        wk[_W, i] = k * sl
        wk[_SLC, i] = sl
        wk[_U, i] = seg[j, _U0] + 0.5 * d * (k0 + k)


@numba.njit(cache=True)
def _surface(lk: tuple, t: float) -> tuple[float, float]:
    """Return k (W/m/K) and u (W/m) at one temperature t (degC)."""
    seg, _, t_in, _, _, _ = lk
    j = np.searchsorted(t_in, t, side="right")
    k0 = seg[j, _K0]
    d = t - seg[j, _T0]
    k = k0 + seg[j, _DK] * d
    return k, seg[j, _U0] + 0.5 * d * (k0 + k)


@numba.njit(cache=True)
def _flux(face: Array, t_inf: float, ts: float) -> tuple[float, float]:
    """Heat flux into the food (W/m^2) at surface temperature ts (degC), and d/dT_s."""
    h, es = face[_H], face[_ES]
    tk = ts + KELVIN
    tik = t_inf + KELVIN
    return h * (t_inf - ts) + es * (tik**4 - tk**4), -h - 4.0 * es * tk**3


@numba.njit(cache=True)
def _t_inf_at(face: Array, t_s: float) -> float:
    """Surroundings of a (possibly drooping) face at ``t_s`` s from loading, degC."""
    if face[_DROOP] == 0.0:
        return face[_TINF]
    return face[_TINF] - face[_DROOP] * math.exp(-t_s / face[_TAU])


# ------------------------------------------------------------------------------ Newton


@numba.njit(cache=True)
def _fluxes(lk: tuple, y: Array, n: int, inv: float, wk: Array) -> tuple[float, float]:
    """Conductive fluxes in +x (W/m^2, n+1 faces) into ``wk[_F]``; return k at both surfaces."""
    _cells(lk, y, n, wk)
    k0, u0 = _surface(lk, y[0])
    k1, u1 = _surface(lk, y[n + 1])
    f, u = wk[_F], wk[_U]
    for j in range(1, n):
        f[j] = (u[j - 1] - u[j]) * inv
    f[0] = 2.0 * inv * (u0 - u[0])  # half-cell distance between a surface and its cell
    f[n] = 2.0 * inv * (u[n - 1] - u1)
    return k0, k1


@numba.njit(cache=True)
def _thomas(n2: int, wk: Array) -> bool:
    """Thomas algorithm: solve rows _DL/_DD/_DU of ``wk`` for ``wk[_RES]`` into ``wk[_DY]``.

    Returns False if a pivot vanishes or the solution is not finite.
    """
    lo, dd, up, r, c, x = wk[_DL], wk[_DD], wk[_DU], wk[_RES], wk[_CP], wk[_DY]
    den = dd[0]
    if den == 0.0:
        return False
    piv = 1.0 / den
    c[0] = up[0] * piv
    x[0] = r[0] * piv
    for j in range(1, n2):
        den = dd[j] - lo[j] * c[j - 1]
        if den == 0.0:
            return False
        piv = 1.0 / den
        c[j] = up[j] * piv
        x[j] = (r[j] - lo[j] * x[j - 1]) * piv
    finite = math.isfinite(x[n2 - 1])
    for j in range(n2 - 2, -1, -1):
        x[j] -= c[j] * x[j + 1]
        finite &= math.isfinite(x[j])
    return finite


@numba.njit(cache=True)
def _stage(
    lk: tuple,
    n: int,
    inv: float,
    wdt: float,
    faces: Array,
    t_inf0: float,
    t_inf1: float,
    qx0: float,
    qx1: float,
    y: Array,
    tol: float,
    max_iter: int,
    wk: Array,
) -> tuple[bool, float]:
    """Solve ``E - wdt f(E) = wk[_BASE]`` and both surface balances by Newton, in place.

    ``y`` holds the initial guess of [T_s0, E_0 .. E_{n-1}, T_s1] (degC, J/m^3, degC) and on
    success the converged unknowns; ``wk[_TEMP]`` then holds their temperatures. Convergence:
    every cell residual times dT/dE and every surface residual over its conductance is below
    ``tol`` (K); the cell block of the Newton matrix is an M-matrix with a unit diagonal part,
    so these estimates bound the remaining error in K. Returns (converged, last estimate K).
    """
    lim = lk[5]
    e_lo, e_hi = lim[_E_LO], lim[_E_HI]
    a = wdt * inv * inv
    wdt_inv = wdt * inv
    res, f, base, sl, w = wk[_RES], wk[_F], wk[_BASE], wk[_SLC], wk[_W]
    err = math.inf
    for _ in range(max_iter):
        ks0, ks1 = _fluxes(lk, y, n, inv, wk)
        ts0, ts1 = y[0], y[n + 1]
        q0, dq0 = _flux(faces[0], t_inf0, ts0)
        q1, dq1 = _flux(faces[1], t_inf1, ts1)
        r0 = q0 + qx0 - f[0]
        r1 = q1 + qx1 + f[n]
        diag0 = 2.0 * ks0 * inv - dq0
        diag1 = 2.0 * ks1 * inv - dq1
        err = max(abs(r0) / diag0, abs(r1) / diag1)
        cell_err = 0.0
        for i in range(n):
            r = (f[i] - f[i + 1]) * wdt_inv + base[i] - y[i + 1]
            res[i + 1] = r
            cell_err = max(cell_err, abs(r * sl[i]))
        err = max(cell_err, err)
        res[0], res[n + 1] = r0, r1
        if err < tol:
            temp = wk[_TEMP]
            temp[0], temp[n + 1] = ts0, ts1
            temp[1 : n + 1] = wk[_TC, :n]
            return True, err
        # Newton matrix of [T_s0, E_0.., T_s1]: lower (row j, column j-1), diagonal, upper
        lo, dd, up = wk[_DL], wk[_DD], wk[_DU]
        for i in range(n):
            dd[i + 1] = 1.0 + 2.0 * (a * w[i])
        dd[1] += a * w[0]  # a cell next to a surface sees twice the face conductance
        dd[n] += a * w[n - 1]
        dd[0], dd[n + 1] = diag0, diag1
        lo[0] = 0.0
        lo[1] = -2.0 * a * ks0
        for i in range(1, n):
            lo[i + 1] = -(a * w[i - 1])
        lo[n + 1] = -2.0 * (w[n - 1] * inv)
        up[0] = -2.0 * (w[0] * inv)
        for i in range(n - 1):
            up[i + 1] = -(a * w[i + 1])
        up[n] = -2.0 * a * ks1
        up[n + 1] = 0.0
        if not _thomas(n + 2, wk):
            return False, err
        dy = wk[_DY]
        for i in range(1, n + 1):
            y[i] = min(max(y[i] + dy[i], e_lo), e_hi)
        y[0] = min(max(y[0] + dy[0], lim[_T_LO]), lim[_T_HI])
        y[n + 1] = min(max(y[n + 1] + dy[n + 1], lim[_T_LO]), lim[_T_HI])
    return False, err


@numba.njit(cache=True)
def _rate(
    lk: tuple,
    n: int,
    dx: float,
    faces: Array,
    t_s: float,
    src: Array,
    qx: Array,
    forced: bool,
    y: Array,
    fn: Array,
    tol: float,
    max_iter: int,
    wk: Array,
) -> bool:
    """Solve the surface balances at ``t_s`` with the cells held, then dE/dt of the cells.

    Overwrites the surfaces of ``y`` and fills ``fn`` (W/m^3); False if the surface balance
    does not converge.
    """
    lim = lk[5]
    inv = 1.0 / dx
    t_inf0, t_inf1 = _t_inf_at(faces[0], t_s), _t_inf_at(faces[1], t_s)
    qx0, qx1 = (qx[0], qx[1]) if forced else (0.0, 0.0)
    _cells(lk, y, n, wk)
    u_first, u_last = wk[_U, 0], wk[_U, n - 1]
    ok = False
    for _ in range(max_iter):
        ks0, us0 = _surface(lk, y[0])
        ks1, us1 = _surface(lk, y[n + 1])
        q0, dq0 = _flux(faces[0], t_inf0, y[0])
        q1, dq1 = _flux(faces[1], t_inf1, y[n + 1])
        r0 = q0 + qx0 - 2.0 * inv * (us0 - u_first)
        r1 = q1 + qx1 + 2.0 * inv * (u_last - us1)
        d0 = r0 / (2.0 * ks0 * inv - dq0)
        d1 = r1 / (2.0 * ks1 * inv - dq1)
        y[0] = min(max(y[0] + d0, lim[_T_LO]), lim[_T_HI])
        y[n + 1] = min(max(y[n + 1] + d1, lim[_T_LO]), lim[_T_HI])
        if max(abs(d0), abs(d1)) < tol:
            ok = True
            break
    if not ok:
        return False
    _fluxes(lk, y, n, inv, wk)
    f = wk[_F]
    for i in range(n):
        fn[i] = (f[i] - f[i + 1]) / dx
        if forced:
            fn[i] += src[i]
    return True


@numba.njit(cache=True)
def _trbdf2(
    lk: tuple,
    n: int,
    dx: float,
    faces: Array,
    y: Array,
    fn: Array,
    t0: float,
    dt: float,
    pred: Array,
    fsrc: Array,
    fqx: Array,
    step: int,
    forced: bool,
    y_out: Array,
    fn_out: Array,
    tol: float,
    max_iter: int,
    wk: Array,
) -> tuple[bool, float]:
    """One TR-BDF2 step from cook time ``t0``; ``pred`` is the previous increment.

    Writes the new unknowns to ``y_out``, dE/dt of the cells at the new time (from the BDF2
    relation) to ``fn_out`` and the new temperatures to ``wk[_TEMP]``; ``y`` and ``fn`` are
    left unchanged. ``step`` indexes the tabulated forcing when ``forced``.
    """
    inv = 1.0 / dx
    wdt = STAGE_WEIGHT * dt
    rhs, base, y_st = wk[_RHS], wk[_BASE], wk[_YST]
    t_st, t_new = t0 + GAMMA * dt, t0 + dt
    for i in range(n):
        rhs[i] = y[i + 1] + wdt * fn[i]
        base[i] = rhs[i] + wdt * fsrc[step, 0, i] if forced else rhs[i]
    for j in range(n + 2):
        y_st[j] = y[j] + GAMMA * pred[j]
    qx0, qx1 = (fqx[step, 0, 0], fqx[step, 0, 1]) if forced else (0.0, 0.0)
    ti0, ti1 = _t_inf_at(faces[0], t_st), _t_inf_at(faces[1], t_st)
    ok, err = _stage(lk, n, inv, wdt, faces, ti0, ti1, qx0, qx1, y_st, tol, max_iter, wk)
    if not ok:
        return False, err
    for i in range(n):
        rhs[i] = B2_STAR * y_st[i + 1] - B2_OLD * y[i + 1]
        base[i] = rhs[i] + wdt * fsrc[step, 1, i] if forced else rhs[i]
    for j in range(n + 2):
        y_out[j] = y_st[j] + B2_GUESS * (y_st[j] - y[j])
    qx0, qx1 = (fqx[step, 1, 0], fqx[step, 1, 1]) if forced else (0.0, 0.0)
    ti0, ti1 = _t_inf_at(faces[0], t_new), _t_inf_at(faces[1], t_new)
    ok, err = _stage(lk, n, inv, wdt, faces, ti0, ti1, qx0, qx1, y_out, tol, max_iter, wk)
    if not ok:
        return False, err
    for i in range(n):
        fn_out[i] = (y_out[i + 1] - rhs[i]) / wdt
    return True, err


@numba.njit(cache=True)
def _advance(
    lk: tuple,
    n: int,
    dx: float,
    faces: Array,
    y: Array,
    fn: Array,
    t0: float,
    dt: float,
    dy: Array,
    fsrc: Array,
    fqx: Array,
    step: int,
    forced: bool,
    tol: float,
    max_iter: int,
    wk: Array,
    hw: Array,
) -> tuple[int, float, float, float]:
    """Advance ``y`` and ``fn`` in place by ``dt``, halving the step where Newton fails.

    A step whose Newton fails is replaced by two half steps, recursively (an explicit stack
    of at most 2 (MAX_HALVINGS + 2) pieces).
    The first half step is predicted with half the increment ``dy`` of the parent, the
    second with the increment of the first half. ``hw`` holds scratch rows: 0 the new
    unknowns, 1 the new rate, 2.. the predictors and starts of each halving depth. Returns
    (outcome code, time and step of the failing piece, last Newton error estimate).
    """
    m = MAX_HALVINGS + 2
    st_t = np.empty(2 * m)
    st_dt = np.empty(2 * m)
    st_depth = np.empty(2 * m, dtype=np.int64)
    st_second = np.empty(2 * m, dtype=np.bool_)
    y_new, fn_new = hw[0], hw[1, :n]
    preds, starts = hw[2 : 2 + m], hw[2 + m : 2 + 2 * m]
    preds[0, :] = dy
    sp = 1
    st_t[0], st_dt[0], st_depth[0], st_second[0] = t0, dt, 0, False
    while sp > 0:
        sp -= 1
        t, h, d = st_t[sp], st_dt[sp], st_depth[sp]
        pred = preds[d]
        if st_second[sp]:  # predictor: the increment of the first half
            pred[:] = y - starts[d]
        ok, err = _trbdf2(
            lk, n, dx, faces, y, fn, t, h, pred, fsrc, fqx, step, forced, y_new, fn_new,
            tol, max_iter, wk,
        )  # fmt: skip
        if ok:
            y[:] = y_new
            fn[:] = fn_new
            continue
        if d >= MAX_HALVINGS:
            return _NEWTON_FAILED, t, h, err
        if forced:
            return _FORCED_HALVING, t, h, err
        half = 0.5 * h
        starts[d + 1, :] = y
        preds[d + 1, :] = 0.5 * pred
        st_t[sp], st_dt[sp], st_depth[sp], st_second[sp] = t + half, half, d + 1, True
        st_t[sp + 1], st_dt[sp + 1], st_depth[sp + 1], st_second[sp + 1] = t, half, d + 1, False
        sp += 2
    return _OK, t0, dt, 0.0


# ------------------------------------------------------------------- per-cell accumulators


@numba.njit(cache=True, inline="always")
def _kill_rate(t: float, d_ref: float, t_ref: float, z: float, cap: float) -> float:
    """Lethality rate at t (degC), log10 reductions per second (log-linear D/z kinetics)."""
    return 10.0 ** ((min(t, cap) - t_ref) / z) / d_ref


@numba.njit(cache=True)
def _start_accumulators(temp: Array, n: int, kin: Array, wk: Array) -> None:
    """Per-cell rates at the start of a phase from cell temperatures ``temp[1:n+1]``."""
    if kin[_KILL_ON] != 0.0:
        d_ref, t_ref, z, cap = kin[_D_REF], kin[_T_REF], kin[_Z], kin[_CAP]
        r_old = wk[_ROLD]
        for i in range(n):
            r_old[i] = _kill_rate(temp[i + 1], d_ref, t_ref, z, cap)


@numba.njit(cache=True)
def _accumulate(acc: Array, temp: Array, n: int, dt: float, kin: Array, wk: Array) -> None:
    """Add one step of length ``dt`` (s) to every per-cell accumulator (trapezoid rule).

    ``temp[1:n+1]`` are the cell temperatures at the step end (degC); ``wk[_ROLD]`` holds the
    rates at the step start and is advanced to the step end.
    """
    if kin[_KILL_ON] != 0.0:
        d_ref, t_ref, z, cap = kin[_D_REF], kin[_T_REF], kin[_Z], kin[_CAP]
        r_old, lr = wk[_ROLD], acc[ACC_LOG_REDUCTION]
        for i in range(n):
            r_new = _kill_rate(temp[i + 1], d_ref, t_ref, z, cap)
            lr[i] = lr[i] + 0.5 * dt * (r_old[i] + r_new)
            r_old[i] = r_new


# ------------------------------------------------------------------------------- march


@numba.njit(cache=True)
def _march(
    lk: tuple,
    dx: float,
    y: Array,
    steps: NDArray[np.int64],
    durations: Array,
    t_starts: Array,
    flips: NDArray[np.bool_],
    faces: Array,
    tol: float,
    max_iter: int,
    kin: Array,
    removal_phase: int,
    fsrc0: Array,
    fqx0: Array,
    fsrc: Array,
    fqx: Array,
    forced: bool,
    hist_t: Array,
    hist_temp: Array,
    hist_acc: Array,
    hist_surf: Array,
    hist_phase: NDArray[np.int64],
    hist_mirr: NDArray[np.bool_],
    last_acc: Array,
    last_temp: Array,
    removal_temp: Array,
    stop: Array,
    minima: bool,
) -> tuple[int, float, float, float, bool, int]:
    """March the unknowns ``y`` = [T_s0, E_cells.., T_s1] through all phases of one cook.

    Records every step end into the ``hist_*`` arrays when they have rows (with ``minima``,
    ``hist_temp`` and ``hist_acc`` have one column: the smallest value over the cells); always
    keeps the state of the last recorded row (``last_temp`` with surfaces at both ends, the
    per-cell accumulators ``last_acc`` and the returned mirrored flag) and the cell
    temperatures at the end of the removal phase. ``stop`` = [time s, log reduction,
    temperature degC]: the march ends after the first step that ends at or after that time
    with every cell at or above both (an infinite time: never). Returns (outcome code, time
    and step of a failure, its last Newton error estimate, mirrored, index of the last row
    marched).
    """
    n = y.size - 2
    record = hist_t.size > 0
    acc = np.zeros_like(last_acc)
    wk = np.zeros((_N_WORK, n + 2))
    hw = np.zeros((2 * MAX_HALVINGS + 6, n + 2))
    fn = np.zeros(n)
    dy = np.zeros(n + 2)
    y_prev = np.empty(n + 2)
    mirrored = False
    last_mirrored = False
    row = 0
    step = 0
    for p in range(steps.size):
        if flips[p]:
            y[:] = y[::-1].copy()
            for a in range(acc.shape[0]):
                acc[a, :] = acc[a, ::-1].copy()
            mirrored = not mirrored
        ph_faces = faces[p]
        t_start = t_starts[p]
        if not _rate(
            lk, n, dx, ph_faces, t_start, fsrc0[p], fqx0[p], forced, y, fn, tol, max_iter, wk
        ):
            return _SURFACE_FAILED, t_start, 0.0, math.inf, last_mirrored, row
        temp = wk[_TEMP]
        if p == 0:
            _cells(lk, y, n, wk)
            temp[0], temp[n + 1] = y[0], y[n + 1]
            temp[1 : n + 1] = wk[_TC, :n]
            last_temp[:] = temp
            last_acc[:, :] = acc
            last_mirrored = mirrored
            if record:
                hist_t[0], hist_phase[0], hist_mirr[0] = 0.0, 0, mirrored
                _record(hist_temp, hist_acc, 0, temp, acc, n, minima)
                hist_surf[0, 0], hist_surf[0, 1] = y[0], y[n + 1]
        m = steps[p]
        if m > 0:
            duration = durations[p]
            dt = duration / m
            _cells(lk, y, n, wk)
            temp[1 : n + 1] = wk[_TC, :n]
            _start_accumulators(temp, n, kin, wk)
            dy[:] = 0.0
            for k in range(m):
                y_prev[:] = y
                code, t_fail, dt_fail, err = _advance(
                    lk, n, dx, ph_faces, y, fn, t_start + k * dt, dt, dy, fsrc, fqx, step,
                    forced, tol, max_iter, wk, hw,
                )  # fmt: skip
                if code != _OK:
                    return code, t_fail, dt_fail, err, last_mirrored, row
                dy[:] = y - y_prev
                temp = wk[_TEMP]
                _accumulate(acc, temp, n, dt, kin, wk)
                step += 1
                row += 1
                last_temp[:] = temp
                last_acc[:, :] = acc
                last_mirrored = mirrored
                t_row = t_start + duration * (k + 1) / m
                if record:
                    hist_t[row] = t_row
                    hist_phase[row], hist_mirr[row] = p, mirrored
                    _record(hist_temp, hist_acc, row, temp, acc, n, minima)
                    hist_surf[row, 0], hist_surf[row, 1] = temp[0], temp[n + 1]
                if t_row >= stop[0] and _all_at_least(acc[ACC_LOG_REDUCTION], temp, n, stop):
                    if p == removal_phase:
                        removal_temp[:] = last_temp[1 : n + 1]
                    return _OK, 0.0, 0.0, 0.0, last_mirrored, row
        if p == removal_phase:
            removal_temp[:] = last_temp[1 : n + 1]
    return _OK, 0.0, 0.0, 0.0, last_mirrored, row


@numba.njit(cache=True)
def _record(
    hist_temp: Array, hist_acc: Array, row: int, temp: Array, acc: Array, n: int, minima: bool
) -> None:
    """Cell temperatures and log reductions of one row: all cells, or their minima."""
    lr = acc[ACC_LOG_REDUCTION]
    if minima:
        t_min, lr_min = temp[1], lr[0]
        for c in range(1, n):
            t_min = min(t_min, temp[c + 1])
            lr_min = min(lr_min, lr[c])
        hist_temp[row, 0], hist_acc[row, 0] = t_min, lr_min
    else:
        hist_temp[row, :] = temp[1 : n + 1]
        hist_acc[row, :] = lr


@numba.njit(cache=True)
def _all_at_least(lr: Array, temp: Array, n: int, stop: Array) -> bool:
    """Every cell has log reduction >= ``stop[1]`` and temperature >= ``stop[2]``."""
    for c in range(n):
        if lr[c] < stop[1] or temp[c + 1] < stop[2]:
            return False
    return True


# ------------------------------------------------------------------------ Python side


class PropertyLookup:
    """Piecewise lookups on a :class:`PropertyTable`: k(T) and E(T) piecewise linear.

    The Kirchhoff potential is integrated exactly for the piecewise-linear k of the table,
    so ``du/dT`` equals ``table.k(T)`` and ``T(E)`` equals ``table.temperature(E)``. Outside the
    table the end segments would be extrapolated; Newton iterates are projected onto the
    table range and the input checks keep the solution inside it.

    The segment of an enthalpy is found through a uniform bucket table whose buckets are
    narrower than the closest pair of table breakpoints (at most one breakpoint per bucket),
    which replaces the binary search by two reads and a comparison; tables too fine for
    :data:`MAX_BUCKETS` buckets use the binary search.

    Attributes
    ----------
    seg : ndarray, shape (segments, 6)
        Per table segment [j, j+1]: T_j (degC), E_j (J/m^3), dT/dE (K m^3/J), k_j (W/m/K),
        dk/dT (W/m/K^2), u_j (W/m).
    e_in, t_in : ndarray
        Interior breakpoints of the table, J/m^3 and degC.
    e_lo, e_hi, t_lo, t_hi : float
        Table range, J/m^3 and degC.
    """

    def __init__(self, table: PropertyTable) -> None:
        t = np.asarray(table.temp_c, dtype=float)
        e = np.asarray(table.vol_enthalpy, dtype=float)
        k = np.asarray(table.conductivity, dtype=float)
        dt = np.diff(t)
        u = np.concatenate([[0.0], np.cumsum(0.5 * (k[1:] + k[:-1]) * dt)])
        self.t_in, self.e_in = t[1:-1].copy(), e[1:-1].copy()
        self.seg = np.ascontiguousarray(
            np.vstack([t[:-1], e[:-1], dt / np.diff(e), k[:-1], np.diff(k) / dt, u[:-1]]).T
        )
        self.t_lo, self.t_hi = float(t[0]), float(t[-1])
        self.e_lo, self.e_hi = float(e[0]), float(e[-1])
        gaps = np.diff(e)
        n_buckets = math.ceil((self.e_hi - self.e_lo) / float(gaps.min())) + 1
        bucketed = n_buckets <= MAX_BUCKETS
        width = (self.e_hi - self.e_lo) / n_buckets
        if bucketed:
            edges = self.e_lo + width * np.arange(n_buckets + 1)
            self.base = np.searchsorted(self.e_in, edges, side="right").astype(np.int64)
            self.next = np.append(self.e_in, np.inf)
        else:
            self.base, self.next = np.zeros(1, dtype=np.int64), np.zeros(1)
        self.limits = np.array(
            [self.e_lo, self.e_hi, self.t_lo, self.t_hi, 1.0 / width, float(bucketed)]
        )

    def arrays(self) -> tuple[Array, Array, Array, NDArray[np.int64], Array, Array]:
        """The lookup as the kernel takes it: (seg, e_in, t_in, base, next, limits)."""
        return self.seg, self.e_in, self.t_in, self.base, self.next, self.limits

    def segment(self, e: Array) -> NDArray[np.int64]:
        """Table segment of each enthalpy (J/m^3), as ``searchsorted(e_in, e, 'right')``.

        Exact, except within rounding of a breakpoint, where both neighbouring segments give
        the same values to rounding.
        """
        flat = np.ascontiguousarray(e, dtype=float).ravel()
        return _segments(flat, self.e_in, self.base, self.next, self.limits).reshape(np.shape(e))

    def enthalpy(self, t: Array) -> Array:
        """Return volumetric enthalpy (J/m^3) at temperature t (degC)."""
        t0, e0, sl = self.seg[np.searchsorted(self.t_in, t, side="right"), :3].T
        return e0 + (t - t0) / sl

    def temperature(self, e: Array) -> Array:
        """Return temperature (degC) at volumetric enthalpy e (J/m^3)."""
        t0, e0, sl = self.seg[self.segment(e), :3].T
        return t0 + sl * (e - e0)


_LOOKUPS: weakref.WeakKeyDictionary[PropertyTable, PropertyLookup] = weakref.WeakKeyDictionary()


def lookup_for(table: PropertyTable) -> PropertyLookup:
    """The :class:`PropertyLookup` of ``table``, built once per table object.

    A property table is immutable (a frozen dataclass compared by identity) and so are its
    lookups; a search runs the same food thousands of times, and building the lookups took
    a tenth of a short run.
    """
    found = _LOOKUPS.get(table)
    if found is None:
        found = _LOOKUPS[table] = PropertyLookup(table)
    return found


@dataclass(frozen=True, eq=False)
class CaseOutput:
    """What :func:`run_case` returns for one cook.

    Attributes
    ----------
    t_s : ndarray, shape (rows,)
        Time of each recorded row, s (empty unless recorded).
    temp_c : ndarray, shape (rows, n_cells), or (rows, 1) when minima were recorded
        Cell temperatures of each row, degC, lab frame of the row's phase (or their minimum).
    log_reduction : ndarray, shape (rows, n_cells), or (rows, 1) when minima were recorded
        Accumulated log reduction per cell of each row, log10 (or its minimum).
    surface_c : ndarray, shape (rows, 2)
        Surface temperatures of faces 0 and 1, degC.
    phase_index : ndarray of int, shape (rows,)
        Phase each row belongs to.
    mirrored : ndarray of bool, shape (rows,)
        Row mirrored with respect to the initial orientation.
    final_temp_c : ndarray, shape (n_cells,)
        Cell temperatures of the last row, degC, its lab frame.
    final_acc : ndarray, shape (N_ACC, n_cells)
        Per-cell accumulators of the last row (row ``ACC_LOG_REDUCTION``: log10 reduction).
    final_mirrored : bool
        The last row is mirrored.
    removal_temp_c : ndarray, shape (n_cells,)
        Cell temperatures of the last row of the removal phase, degC, that row's frame.
    """

    t_s: Array
    temp_c: Array
    log_reduction: Array
    surface_c: Array
    phase_index: NDArray[np.int64]
    mirrored: NDArray[np.bool_]
    final_temp_c: Array
    final_acc: Array
    final_mirrored: bool
    removal_temp_c: Array


def _kinetics(lethality: LethalityModel | None) -> Array:
    """The kinetics vector of the kernel (all zero without a model)."""
    if lethality is None:
        return np.zeros(5)
    lm = lethality
    return np.array([1.0, lm.d_ref_s, lm.t_ref_c, lm.z_k, lm.cap_c], dtype=float)


def _tabulate(
    forcing: Forcing | None,
    x: Array,
    phases: Sequence[Phase],
    counts: Sequence[int],
    t_starts: Array,
) -> tuple[Array, Array, Array, Array]:
    """Forcing at every phase start and at both stage times of every step.

    Returns arrays of shape (phases, n), (phases, 2), (steps, 2, n) and (steps, 2, 2); empty
    trailing dimensions without a forcing. Tabulated forcing fixes the stage times, so a
    forced run cannot halve a step (verification runs never need to).
    """
    n_ph, n = len(phases), x.size
    if forcing is None:
        return np.zeros((n_ph, 0)), np.zeros((n_ph, 0)), np.zeros((0, 2, 0)), np.zeros((0, 2, 0))
    src0, qx0 = np.zeros((n_ph, n)), np.zeros((n_ph, 2))
    src, qx = np.zeros((sum(counts), 2, n)), np.zeros((sum(counts), 2, 2))
    s = 0
    for p, (phase, m) in enumerate(zip(phases, counts, strict=True)):
        src0[p], qx0[p] = forcing(x, float(t_starts[p]))
        dt = phase.duration_s / m if m else 0.0
        for k in range(m):
            t0 = float(t_starts[p]) + k * dt
            src[s, 0], qx[s, 0] = forcing(x, t0 + GAMMA * dt)
            src[s, 1], qx[s, 1] = forcing(x, t0 + dt)
            s += 1
    return src0, qx0, src, qx


def run_case(
    lookup: PropertyLookup,
    thickness_m: float,
    start_temp_c: Array,
    phases: Sequence[Phase],
    lethality: LethalityModel | None,
    dt_max_s: float,
    newton_tol_k: float,
    max_newton: int,
    record: bool,
    removal_phase: int,
    forcing: Forcing | None = None,
    stop: tuple[float, float, float] | None = None,
    minima: bool = False,
) -> CaseOutput:
    """March one cook through the compiled kernel (inputs already checked by the caller).

    Parameters
    ----------
    lookup : PropertyLookup
        Property lookups of the food.
    thickness_m : float
        Slab thickness, m.
    start_temp_c : ndarray, shape (n_cells,)
        Initial cell temperatures, degC, initial orientation.
    phases : sequence of Phase
        The cook (durations s, faces, flips).
    lethality : LethalityModel or None
        Kinetics integrated per cell (None: accumulators stay 0).
    dt_max_s : float
        Largest time step, s; each phase gets :func:`step_count` equal steps.
    newton_tol_k : float
        Newton tolerance, K.
    max_newton : int
        Newton iterations allowed per stage.
    record : bool
        Keep every step end (time history); otherwise only the last row and the removal row.
    removal_phase : int
        Index of the phase whose last row is the removal row.
    forcing : callable, optional
        Verification-only manufactured source, see :data:`Forcing`.
    stop : (float, float, float), optional
        End the cook early, after the first step that ends at or after ``stop[0]`` s with
        every cell's log reduction at least ``stop[1]`` (log10) and temperature at least
        ``stop[2]`` (degC); the history then ends at that row (None: run every phase).
    minima : bool
        Record, per row, only the smallest cell temperature and log reduction
        (:attr:`CaseOutput.temp_c` and :attr:`CaseOutput.log_reduction` then have one
        column): the same numbers as the full record's row minima, with a row's memory
        traffic cut from ``2 n_cells`` values to 2.

    Returns
    -------
    CaseOutput
        History (when recorded), last row and removal row.

    Raises
    ------
    SolverDivergedError
        If Newton fails even after halving a step :data:`MAX_HALVINGS` times, if a surface
        balance at a phase start does not converge, or if a forced run would need halving.
    """
    n = start_temp_c.size
    dx = thickness_m / n
    counts = [step_count(p.duration_s, dt_max_s) for p in phases]
    durations = np.array([p.duration_s for p in phases], dtype=float)
    t_starts = np.zeros(len(phases))
    t = 0.0
    for p, phase in enumerate(phases):  # summed in order, as the cook time runs
        t_starts[p] = t
        t += phase.duration_s
    faces = np.array(
        [
            [[f.h, f.t_inf_c, f.droop_k, f.droop_tau_s, STEFAN_BOLTZMANN * f.emissivity]
             for f in (p.face0, p.face1)]
            for p in phases
        ],
        dtype=float,
    ).reshape(len(phases), 2, 5)  # fmt: skip
    x = (np.arange(n) + 0.5) * dx
    src0, qx0, src, qx = _tabulate(forcing, x, phases, counts, t_starts)
    rows = sum(counts) + 1 if record else 0
    cols = 1 if minima else n
    hist = (
        np.zeros(rows),
        np.zeros((rows, cols)),
        np.zeros((rows, cols)),
        np.zeros((rows, 2)),
        np.zeros(rows, dtype=np.int64),
        np.zeros(rows, dtype=np.bool_),
    )
    y = np.concatenate([start_temp_c[:1], lookup.enthalpy(start_temp_c), start_temp_c[-1:]])
    last_acc, last_temp, removal_temp = np.zeros((N_ACC, n)), np.zeros(n + 2), np.zeros(n)
    stop_at = np.array([math.inf, 0.0, 0.0] if stop is None else stop, dtype=float)
    code, t_fail, dt_fail, err, mirrored, last_row = _march(
        lookup.arrays(), dx, y, np.array(counts, dtype=np.int64), durations, t_starts,
        np.array([p.flip_before for p in phases], dtype=np.bool_), faces, float(newton_tol_k),
        int(max_newton), _kinetics(lethality), int(removal_phase), src0, qx0, src, qx,
        forcing is not None, *hist, last_acc, last_temp, removal_temp, stop_at, bool(minima),
    )  # fmt: skip
    if code == _SURFACE_FAILED:
        raise SolverDivergedError(f"at t = {t_fail:.6g} s: surface balance did not converge")
    if code == _FORCED_HALVING:
        raise SolverDivergedError(
            f"at t = {t_fail:.6g} s with dt = {dt_fail:.3g} s: Newton did not converge and a "
            "run with a tabulated forcing cannot halve its step"
        )
    if code != _OK:
        raise SolverDivergedError(
            f"at t = {t_fail:.6g} s with dt = {dt_fail:.3g} s: Newton did not converge "
            f"(last error estimate {err:.3g} K)"
        )
    t_hist, temp, lr, surf, phase_index, mirr = (h[: last_row + 1] for h in hist)
    return CaseOutput(
        t_hist, temp, lr, surf, phase_index, mirr,
        last_temp[1:-1].copy(), last_acc, bool(mirrored), removal_temp,
    )  # fmt: skip
