"""Batched finite-volume stepping of many slabs at once (internal).

The discretisation is exactly that of :mod:`obvert.thermal._fv`; only the bookkeeping differs.
Row ``b`` of every 2-D array is one case: unknowns [T_s0, E_0 .. E_{n-1}, T_s1] (degC, J/m^3,
degC) on that case's own mesh spacing, with its own step, surroundings and stage times. The
property lookups run over the whole (rows, cells) array at once, and the tridiagonal Newton
systems of all rows are laid end to end as one long tridiagonal system whose couplings between
consecutive rows are zero, solved by one LAPACK ``gtsv`` call (partial pivoting never crosses a
zero coupling, so each row's solution is that of its own system).

A row whose Newton iterations converge is taken out of the working set and keeps the iterate at
which it converged, as the scalar solver does; the others iterate on. A row that does not
converge within the allowed iterations is reported as failed and must not be used.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from obvert.thermal import _fv

Array = NDArray[np.float64]
Mask = NDArray[np.bool_]
Index = NDArray[np.intp]

#: Largest bucket table of the enthalpy lookup (entries); finer tables use a binary search.
_MAX_BUCKETS = 1 << 22


class BatchProps:
    """Lookups of :class:`obvert.thermal._fv.Props` over arrays of any shape.

    The segment of an enthalpy is found through a uniform bucket table whose buckets are
    narrower than the closest pair of table breakpoints (at most one breakpoint per bucket),
    which replaces the binary search by two gathers and a comparison.
    """

    def __init__(self, props: _fv.Props) -> None:
        self.props = props
        self.seg = props.seg
        e_in = props.e_in
        gaps = np.diff(np.concatenate(([props.e_lo], e_in, [props.e_hi])))
        n_buckets = math.ceil((props.e_hi - props.e_lo) / float(gaps.min())) + 1
        self._bucketed = n_buckets <= _MAX_BUCKETS
        width = (props.e_hi - props.e_lo) / n_buckets
        self._inv_width = 1.0 / width
        self._top = n_buckets
        if self._bucketed:
            edges = props.e_lo + width * np.arange(n_buckets + 1)
            self._base = np.searchsorted(e_in, edges, side="right")
            self._next = np.append(e_in, np.inf)

    def segment(self, e: Array) -> Index:
        """Table segment of each enthalpy ``e`` (J/m^3), as ``searchsorted(e_in, e, 'right')``.

        Exact, except within rounding of a breakpoint, where both neighbouring segments give
        the same values to rounding.
        """
        if not self._bucketed:
            return np.searchsorted(self.props.e_in, e, side="right")
        i = ((e - self.props.e_lo) * self._inv_width).astype(np.intp)
        b = self._base.take(i, mode="clip")  # guesses may lie outside the table: end segments
        b += e >= self._next.take(b)
        return b

    def of_e(self, e: Array) -> tuple[Array, Array, Array, Array]:
        """Return T (degC), k (W/m/K), u (W/m) and dT/dE (K m^3/J) at enthalpy e (J/m^3)."""
        t0, e0, sl, k0, dk, u0 = self.seg.take(self.segment(e), axis=1)
        d = e - e0
        d *= sl
        k = dk * d
        k += k0
        u = k + k0
        u *= d
        u *= 0.5
        u += u0
        t0 += d
        return t0, k, u, sl

    def temperature(self, e: Array) -> Array:
        """Return T (degC) at enthalpy e (J/m^3)."""
        t0, e0, sl = self.seg[:3].take(self.segment(e), axis=1)
        return t0 + sl * (e - e0)

    def of_t(self, t: Array) -> tuple[Array, Array]:
        """Return k (W/m/K) and u (W/m) at temperatures t (degC)."""
        j = np.searchsorted(self.props.t_in, t, side="right")
        t0, _, _, k0, dk, u0 = self.seg.take(j, axis=1)
        d = t - t0
        k = k0 + dk * d
        return k, u0 + 0.5 * d * (k0 + k)


@dataclass(frozen=True)
class FaceArrays:
    """Surroundings of faces 0 and 1 of every row at one instant (columns: face 0, face 1).

    Attributes
    ----------
    h : ndarray, shape (rows, 2)
        Heat-transfer coefficients, W/(m^2 K).
    t_inf : ndarray, shape (rows, 2)
        Surroundings temperatures, degC.
    eps_sigma : ndarray, shape (rows, 2)
        Emissivity times the Stefan-Boltzmann constant, W/(m^2 K^4).
    """

    h: Array
    t_inf: Array
    eps_sigma: Array

    def flux(self, ts: Array) -> tuple[Array, Array]:
        """Heat flux into the food (W/m^2) at surface temperatures ``ts`` (degC), and d/dT_s."""
        tk = ts + _fv._KELVIN
        tik = self.t_inf + _fv._KELVIN
        es = self.eps_sigma
        q = self.h * (self.t_inf - ts) + es * (tik**4 - tk**4)
        return q, -self.h - 4.0 * es * tk**3

    def take(self, keep: Mask) -> FaceArrays:
        """The rows where ``keep`` is true."""
        return FaceArrays(self.h[keep], self.t_inf[keep], self.eps_sigma[keep])


@dataclass(frozen=True)
class StageRows:
    """Per-row data of one implicit stage ``E - wdt f(E) = rhs``.

    Attributes
    ----------
    a : ndarray, shape (rows, 1)
        ``wdt / dx^2``, s/m^2.
    inv : ndarray, shape (rows, 1)
        ``1 / dx``, 1/m.
    rhs : ndarray, shape (rows, n)
        Right-hand side of the cell equations, J/m^3.
    faces : FaceArrays
        Surroundings at the stage time.
    """

    a: Array
    inv: Array
    rhs: Array
    faces: FaceArrays

    def take(self, keep: Mask) -> StageRows:
        """The rows where ``keep`` is true."""
        return StageRows(self.a[keep], self.inv[keep], self.rhs[keep], self.faces.take(keep))


@dataclass(frozen=True)
class _Eval:
    """Residuals and local derivatives at one Newton iterate (see :func:`_evaluate`)."""

    res: Array  # (rows, n + 2): surface residuals (W/m^2) and cell residuals (J/m^3)
    err: Array  # (rows,): error estimate, K
    temp: Array  # (rows, n): cell temperatures, degC
    w: Array  # (rows, n): du/dE of the cells, W m^2/J
    ks: Array  # (rows, 2): surface conductivities, W/m/K
    diag: Array  # (rows, 2): surface diagonals of the Newton matrix, W/(m^2 K)

    def take(self, keep: Mask) -> _Eval:
        """The rows where ``keep`` is true, without temperatures (no longer needed)."""
        res, err, w, ks, diag = (v[keep] for v in (self.res, self.err, self.w, self.ks, self.diag))
        return _Eval(res, err, self.temp[:0], w, ks, diag)


def _evaluate(bp: BatchProps, rows: StageRows, y: Array) -> _Eval:
    """Residuals of the stage equations at ``y`` and the error estimate of every row (K)."""
    m, n2 = y.shape
    e = y[:, 1:-1]
    t, k, u, sl = bp.of_e(e)
    ts = y[:, [0, -1]]
    ks, us = bp.of_t(ts)
    g = np.empty((m, n2 - 1))  # dx times the conductive fluxes in +x
    np.subtract(u[:, :-1], u[:, 1:], out=g[:, 1:-1])
    g[:, 0] = 2.0 * (us[:, 0] - u[:, 0])
    g[:, -1] = 2.0 * (u[:, -1] - us[:, 1])
    q, dq = rows.faces.flux(ts)
    res = np.empty_like(y)
    cells = res[:, 1:-1]
    np.subtract(g[:, :-1], g[:, 1:], out=cells)
    cells *= rows.a
    cells += rows.rhs
    cells -= e
    inv = rows.inv[:, 0]
    res[:, 0] = q[:, 0] - inv * g[:, 0]
    res[:, -1] = q[:, 1] + inv * g[:, -1]
    diag = 2.0 * ks * rows.inv - dq
    k *= sl  # now du/dE
    sl *= cells
    np.abs(sl, out=sl)
    err = np.maximum(sl.max(axis=1), (np.abs(res[:, [0, -1]]) / diag).max(axis=1))
    return _Eval(res, err, t, k, ks, diag)


def _newton(bp: BatchProps, rows: StageRows, ev: _Eval, y: Array) -> Array | None:
    """One Newton update of every row, projected onto the table; None if LAPACK fails."""
    m, n2 = y.shape
    a, inv, w, ks = rows.a[:, 0], rows.inv[:, 0], ev.w, ev.ks
    aw = w * rows.a
    diag, lower, upper = np.empty((m, n2)), np.empty((m, n2)), np.empty((m, n2))
    np.multiply(aw, 2.0, out=diag[:, 1:-1])
    diag[:, 1:-1] += 1.0
    diag[:, 1] += aw[:, 0]  # a cell next to a surface sees twice the face conductance
    diag[:, -2] += aw[:, -1]
    diag[:, 0], diag[:, -1] = ev.diag[:, 0], ev.diag[:, 1]
    # upper[:, j] couples unknown j to j + 1, lower[:, j] unknown j + 1 to j; the last column
    # of both would couple a row to the next one and is zero.
    upper[:, 0] = -2.0 * inv * w[:, 0]
    np.negative(aw[:, 1:], out=upper[:, 1:-2])
    upper[:, -2] = -2.0 * a * ks[:, 1]
    lower[:, 0] = -2.0 * a * ks[:, 0]
    np.negative(aw[:, :-1], out=lower[:, 1:-2])
    lower[:, -2] = -2.0 * inv * w[:, -1]
    upper[:, -1] = lower[:, -1] = 0.0
    _, _, _, dy, info = _fv._GTSV(
        lower.ravel()[:-1], diag.ravel(), upper.ravel()[:-1], ev.res.ravel(), 1, 1, 1, 1
    )
    if info != 0:
        return None
    y = y + dy.reshape(m, n2)
    p, cells = bp.props, y[:, 1:-1]
    np.maximum(cells, p.e_lo, out=cells)
    np.minimum(cells, p.e_hi, out=cells)
    for j in (0, -1):
        y[:, j] = np.minimum(np.maximum(y[:, j], p.t_lo), p.t_hi)
    return y


def stage(
    bp: BatchProps, rows: StageRows, y: Array, tol_k: float, max_iter: int
) -> tuple[Array, Array, Mask]:
    """Solve ``E - wdt f(E) = rhs`` and both surface balances of every row by Newton.

    Parameters
    ----------
    bp : BatchProps
        Property lookups.
    rows : StageRows
        Per-row stage data.
    y : ndarray, shape (rows, n + 2)
        Initial guesses of [T_s0, E_0 .. E_{n-1}, T_s1] (degC, J/m^3, degC); overwritten.
    tol_k : float
        Newton tolerance of :func:`obvert.thermal._fv.stage`, K.
    max_iter : int
        Residual evaluations allowed per row.

    Returns
    -------
    y : ndarray, shape (rows, n + 2)
        Converged unknowns (rows that failed hold their last finite iterate).
    temp : ndarray, shape (rows, n)
        Cell temperatures at ``y``, degC.
    failed : ndarray of bool, shape (rows,)
        Rows that did not converge.
    """
    temp = np.empty((y.shape[0], y.shape[1] - 2))
    live: Index | None = None  # rows of the working set in the full batch (None: all)
    cur = y
    for _ in range(max_iter):
        ev = _evaluate(bp, rows, cur)
        done = ev.err < tol_k
        if live is None and done.all():
            return cur, ev.temp, np.zeros(y.shape[0], dtype=bool)
        if done.any():
            idx = np.flatnonzero(done) if live is None else live[done]
            y[idx], temp[idx] = cur[done], ev.temp[done]
            keep = ~done
            live = np.flatnonzero(keep) if live is None else live[keep]
            if live.size == 0:
                return y, temp, np.zeros(y.shape[0], dtype=bool)
            cur, rows, ev = cur[keep], rows.take(keep), ev.take(keep)
        step = _newton(bp, rows, ev, cur)
        if step is None:
            break
        cur = step
    failed = np.zeros(y.shape[0], dtype=bool)
    idx = slice(None) if live is None else live
    failed[idx] = True
    y[idx], temp[idx] = cur, 0.0  # finite (projected), so the next solve stays clean
    return y, temp, failed


def rate(
    bp: BatchProps, inv: Array, faces: FaceArrays, y: Array, tol_k: float, max_iter: int
) -> tuple[Array, Array, Array, Mask]:
    """Solve the surface balances with the cells held, and return dE/dt of the cells.

    Parameters
    ----------
    bp : BatchProps
        Property lookups.
    inv : ndarray, shape (rows, 1)
        ``1 / dx`` of every row, 1/m.
    faces : FaceArrays
        Surroundings at the phase start.
    y : ndarray, shape (rows, n + 2)
        Unknowns [T_s0, E_cells.., T_s1]; the surfaces are initial guesses.
    tol_k : float
        Tolerance on the last surface update, K.
    max_iter : int
        Iterations allowed.

    Returns
    -------
    dedt : ndarray, shape (rows, n)
        Cell dE/dt, W/m^3.
    y : ndarray, shape (rows, n + 2)
        ``y`` with the solved surface temperatures (a new array).
    temp : ndarray, shape (rows, n)
        Cell temperatures, degC.
    failed : ndarray of bool, shape (rows,)
        Rows whose surface balance did not converge.
    """
    p = bp.props
    temp, _, u, _ = bp.of_e(y[:, 1:-1])
    u_end = u[:, [0, -1]]
    ts = y[:, [0, -1]]
    done = np.zeros(y.shape[0], dtype=bool)
    for _ in range(max_iter):
        ks, us = bp.of_t(ts)
        q, dq = faces.flux(ts)
        r = q - 2.0 * inv * (us - u_end)  # both faces: flux in minus half-cell conduction
        d = r / (2.0 * ks * inv - dq)
        d[done] = 0.0  # a converged row keeps its value, as the scalar solver stops there
        ts = np.clip(ts + d, p.t_lo, p.t_hi)
        done |= np.abs(d).max(axis=1) < tol_k
        if done.all():
            break
    us = bp.of_t(ts)[1]
    g = np.empty((y.shape[0], y.shape[1] - 1))
    np.subtract(u[:, :-1], u[:, 1:], out=g[:, 1:-1])
    g[:, 0] = 2.0 * (us[:, 0] - u[:, 0])
    g[:, -1] = 2.0 * (u[:, -1] - us[:, 1])
    y = y.copy()
    y[:, 0], y[:, -1] = ts[:, 0], ts[:, 1]
    return (g[:, :-1] - g[:, 1:]) * (inv * inv), y, temp, ~done


def trbdf2_step(
    bp: BatchProps,
    inv: Array,
    dt: Array,
    faces_st: FaceArrays,
    faces_new: FaceArrays,
    y: Array,
    fn: Array,
    dy: Array,
    tol_k: float,
    max_iter: int,
) -> tuple[Array, Array, Array, Mask]:
    """One TR-BDF2 step of every row, as :func:`obvert.thermal._fv.trbdf2_step`.

    Parameters
    ----------
    bp : BatchProps
        Property lookups.
    inv, dt : ndarray, shape (rows, 1)
        ``1 / dx`` (1/m) and the step (s) of every row.
    faces_st, faces_new : FaceArrays
        Surroundings at the trapezoid stage (``t0 + gamma dt``) and at the step end.
    y : ndarray, shape (rows, n + 2)
        Unknowns at the step start.
    fn : ndarray, shape (rows, n)
        Cell dE/dt at the step start, W/m^3.
    dy : ndarray, shape (rows, n + 2)
        Increment of the previous step (predictor; zeros at a phase start).
    tol_k, max_iter : float, int
        Newton controls of :func:`stage`.

    Returns
    -------
    y, dedt, temp, failed
        New unknowns, cell dE/dt (W/m^3) and cell temperatures (degC) at the step end,
        and the rows where a stage did not converge.
    """
    wdt = _fv.STAGE_WEIGHT * dt
    a = wdt * inv * inv
    e = y[:, 1:-1]
    rows = StageRows(a, inv, e + wdt * fn, faces_st)
    y_st, _, failed_st = stage(bp, rows, y + _fv.GAMMA * dy, tol_k, max_iter)
    rhs = _fv.B2_STAR * y_st[:, 1:-1] - _fv.B2_OLD * e
    guess = y_st + (1.0 - _fv.GAMMA) / _fv.GAMMA * (y_st - y)
    y_new, temp, failed = stage(bp, StageRows(a, inv, rhs, faces_new), guess, tol_k, max_iter)
    return y_new, (y_new[:, 1:-1] - rhs) / wdt, temp, failed | failed_st
