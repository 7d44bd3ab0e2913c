"""Laboratory variants of the reduced model, measured by ``tests/bench/reduced_model.py``.

Nothing in the build uses this module; it holds the prototypes the benchmark compares with
:class:`~obvert.thermal.spectral.SpectralModel` and :class:`~obvert.plan.ocp.Planner`
(documented in ``docs/reduced-model.md``):

* :func:`interpolation_matrix`: the model's temperature field between its nodes
  (barycentric Lagrange interpolation, Berrut, J.-P. and Trefethen, L. N. (2004),
  "Barycentric Lagrange interpolation", SIAM Review 46(3):501-517, eq. 5.4 with the
  Chebyshev-Lobatto weights).
* :func:`point_matrix`: temperatures at any lethality points from the node temperatures,
  by the model's own rule (local Lagrange on ``lethality_stencil`` nodes, or the global
  polynomial), for any grid (stock or mapped).
* :func:`done_on_model`: the earliest done time on the reduced model itself for given
  events (CVODES), with the log reduction checked either at the model's own lethality
  points (the planner's rule) or on a fine grid of interpolated temperatures. At removal
  the log reduction has a narrow valley between the parts heated before and after the
  flip, and the smallest value over a set of points overstates its bottom.
* :func:`lethality_layout` and :class:`ClusteredSpectralModel`: lethality points denser
  mid-slab (where the valley lies) and sparser at the faces, the nodes unchanged.
* :class:`MappedSpectralModel`: Chebyshev collocation on the mapped grid
  ``x = L (1 - arcsin(a xi)/arcsin(a)) / 2`` of Kosloff, D. and Tal-Ezer, H. (1993),
  "A modified Chebyshev pseudospectral method with an O(N^-1) time step restriction",
  J. Comput. Phys. 104:457-469 (more nodes mid-slab, fewer at the faces).
* :class:`FilteredSpectralModel`: an exponential filter of the Chebyshev coefficients of the
  Kirchhoff potential before the flux is taken (Gottlieb, D. and Hesthaven, J. S. (2001),
  "Spectral methods for hyperbolic problems", J. Comput. Appl. Math. 128:83-131, sec. 5),
  to damp the node-to-node ripple a thawing front excites; energy stays conserved because
  the face fluxes are still replaced.
* :func:`smoothed_table`: the latent-heat peak (and conductivity) spread by a Gaussian in
  temperature, total enthalpy kept.
"""

from __future__ import annotations

import math

import casadi as ca
import numpy as np
from numpy.typing import NDArray

from obvert.food.choi_okos import cumulative_vol_enthalpy
from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.plan.schedule import Schedule, Surroundings, phases_for
from obvert.thermal.boundary import FaceBC, Phase
from obvert.thermal.spectral import (
    SpectralModel,
    SpectralSettings,
    barycentric_matrix,
    chebyshev_matrix,
    face_flux,
    local_interpolation_matrix,
)

Array = NDArray[np.float64]


def _lobatto_xi(n_nodes: int) -> Array:
    """Chebyshev-Gauss-Lobatto points ``cos(pi j / (n - 1))`` on [-1, 1], descending."""
    return np.cos(np.pi * np.arange(n_nodes) / (n_nodes - 1))


def interpolation_matrix(model: SpectralModel, x_m: Array) -> Array:
    """Matrix taking node values of ``model`` to values at positions ``x_m`` (m).

    Parameters
    ----------
    model : SpectralModel
        A stock or :class:`MappedSpectralModel` (the interpolant is a polynomial in the
        Chebyshev coordinate ``xi``, not in ``x``).
    x_m : ndarray
        Positions in [0, L], m.

    Returns
    -------
    ndarray, shape (len(x_m), model.n)
        Barycentric Lagrange weights; rows at a node are unit vectors.
    """
    n = model.n
    g = 1.0 - 2.0 * np.asarray(x_m, dtype=float) / model.thickness_m
    alpha = getattr(model, "alpha", 0.0)
    xi = np.sin(g * math.asin(alpha)) / alpha if alpha > 0.0 else g
    return barycentric_matrix(n, xi)


def sensor_points(thickness_m: float, count: int) -> Array:
    """``count`` equally spaced points on [0, L], faces included (symmetric under a flip), m."""
    if count < 2:
        raise ValueError(f"count = {count!r}: allowed an integer >= 2")
    return np.linspace(0.0, thickness_m, count)


def lethality_layout(thickness_m: float, count: int, alpha: float = 0.0) -> Array:
    """``count`` lethality points on [0, L], faces included, symmetric under a flip, m.

    Parameters
    ----------
    thickness_m : float
        Slab thickness L, m.
    count : int
        Number of points (>= 3), -.
    alpha : float
        0: equally spaced; in (0, 1): ``x = L (1 + arcsin(alpha u) / arcsin(alpha)) / 2`` of
        equally spaced ``u`` in [-1, 1] (the inverse of a Chebyshev-like clustering), so
        the spacing at a face is ``1 / sqrt(1 - alpha**2)`` times that mid-slab, -.

    Returns
    -------
    ndarray, shape (count,)
        Ascending positions, m.
    """
    if count < 3:
        raise ValueError(f"count = {count!r}: allowed an integer >= 3")
    if not 0.0 <= alpha < 1.0:
        raise ValueError(f"alpha = {alpha!r}: allowed 0 <= alpha < 1")
    u = np.linspace(-1.0, 1.0, count)
    g = np.arcsin(alpha * u) / math.asin(alpha) if alpha > 0.0 else u
    g[0], g[-1] = -1.0, 1.0
    x = 0.5 * thickness_m * (1.0 + g)
    return 0.5 * (x + (thickness_m - x[::-1]))  # exactly symmetric


def point_matrix(model: SpectralModel, x_m: Array, stencil: int | None = None) -> Array:
    """Matrix taking node temperatures of ``model`` to temperatures at ``x_m`` (m).

    ``stencil`` (default: the model's ``lethality_stencil``) > 0: local Lagrange on that
    many nearest nodes; 0: the global polynomial (:func:`interpolation_matrix`).
    """
    width = model.settings.lethality_stencil if stencil is None else stencil
    if width:
        return local_interpolation_matrix(model.x_m, np.asarray(x_m, dtype=float), width)
    return interpolation_matrix(model, x_m)


def _relayout(model: SpectralModel, x_lr: Array | None) -> None:
    """Reset the lethality points of ``model`` (None: keep the count, equally spaced)."""
    if model.settings.lethality_points == 0:
        model.x_lr, model.p_lr = model.x_m.copy(), np.eye(model.n)
        return
    if x_lr is None:
        x_lr = sensor_points(model.thickness_m, model.settings.lethality_points)
    model.x_lr, model.p_lr = x_lr, point_matrix(model, x_lr)
    model.m = int(x_lr.size)


class ClusteredSpectralModel(SpectralModel):
    """Stock model whose lethality points follow :func:`lethality_layout` with ``alpha``.

    Parameters
    ----------
    table, thickness_m, lethality, settings
        As for :class:`SpectralModel` (``lethality_points`` > 0).
    alpha : float
        Layout parameter of :func:`lethality_layout`, -.
    """

    def __init__(
        self,
        table: PropertyTable,
        thickness_m: float,
        lethality: LethalityModel,
        settings: SpectralSettings | None = None,
        alpha: float = 0.9,
    ) -> None:
        super().__init__(table, thickness_m, lethality, settings)
        if self.settings.lethality_points == 0:
            raise ValueError("settings.lethality_points = 0: a layout needs points (>= 3)")
        self.alpha_lr = float(alpha)
        m = self.settings.lethality_points
        _relayout(self, lethality_layout(self.thickness_m, m, alpha))


class MappedSpectralModel(SpectralModel):
    """Spectral model on the Kosloff-Tal-Ezer mapped grid (see the module docstring).

    Parameters
    ----------
    table, thickness_m, lethality, settings
        As for :class:`SpectralModel`.
    alpha : float
        Map parameter in (0, 1): 0 gives the Chebyshev grid, 1 an equal spacing, -.
    """

    def __init__(
        self,
        table: PropertyTable,
        thickness_m: float,
        lethality: LethalityModel,
        settings: SpectralSettings | None = None,
        alpha: float = 0.9,
    ) -> None:
        if not 0.0 < alpha < 1.0:
            raise ValueError(f"alpha = {alpha!r}: allowed 0 < alpha < 1")
        super().__init__(table, thickness_m, lethality, settings)
        self.alpha = float(alpha)
        xi = _lobatto_xi(self.n)
        g = np.arcsin(alpha * xi) / math.asin(alpha)
        dg_dxi = alpha / (math.asin(alpha) * np.sqrt(1.0 - (alpha * xi) ** 2))
        # chebyshev_matrix(n, 2) is d/dx on [0, 2] with x = 1 - xi, i.e. -d/dxi.
        d_xi = -chebyshev_matrix(self.n, 2.0)
        self.x_m = 0.5 * self.thickness_m * (1.0 - g)
        self.d = (-2.0 / self.thickness_m) * (d_xi / dg_dxi[:, None])
        _relayout(self, None)  # interpolate from the mapped nodes


class FilteredSpectralModel(SpectralModel):
    """Spectral model with an exponential modal filter on the Kirchhoff potential.

    Parameters
    ----------
    table, thickness_m, lethality, settings
        As for :class:`SpectralModel`.
    strength : float
        Damping of the highest mode, ``exp(-strength)``, -.
    order : int
        Filter order p of ``exp(-strength (k/N)**p)``, -.
    """

    def __init__(
        self,
        table: PropertyTable,
        thickness_m: float,
        lethality: LethalityModel,
        settings: SpectralSettings | None = None,
        strength: float = 36.0,
        order: int = 16,
    ) -> None:
        super().__init__(table, thickness_m, lethality, settings)
        k = np.arange(self.n)
        modes = np.cos(np.pi * np.outer(k, k) / (self.n - 1))
        sigma = np.exp(-strength * (k / (self.n - 1)) ** order)
        self.d_flux = self.d @ modes @ np.diag(sigma) @ np.linalg.inv(modes)

    def rhs(
        self, state: ca.MX, face0: FaceBC, face1: FaceBC, time_s: ca.MX | float | None = None
    ) -> ca.MX:
        """Time derivative of the state, as :meth:`SpectralModel.rhs` with a filtered flux."""
        s = state[: self.n]
        temp = ca.vertcat(*[self.temp_of(s[j]) for j in range(self.n)])
        u = ca.vertcat(*[self.kirchhoff_of(s[j]) for j in range(self.n)])
        q = -ca.mtimes(ca.DM(self.d_flux), u)
        q0, q1 = face_flux(face0, temp[0], time_s), face_flux(face1, temp[-1], time_s)
        q = ca.vertcat(q0, q[1:-1], -q1)
        ds = -ca.mtimes(ca.DM(self.d), q) / self.e_scale
        return ca.vertcat(ds, _rate(self.lethality, self.lethality_temps(temp)))


def _rate(lm: LethalityModel, temp: ca.MX) -> ca.MX:
    """Lethality rate at temperatures ``temp`` (degC), log10 per s."""
    return ca.power(10.0, (ca.fmin(temp, lm.cap_c) - lm.t_ref_c) / lm.z_k) / lm.d_ref_s


def smoothed_table(table: PropertyTable, sigma_c: float) -> PropertyTable:
    """Table with rho*cp and k convolved with a Gaussian of width ``sigma_c`` (degC).

    The enthalpy is re-integrated, so the latent heat is kept; the ends are padded with
    their end values.
    """
    if not sigma_c > 0.0:
        raise ValueError(f"sigma_c = {sigma_c!r}: allowed > 0 degC")
    t = table.temp_c
    step = float(t[1] - t[0])
    half = math.ceil(4.0 * sigma_c / step)
    w = np.exp(-0.5 * (np.arange(-half, half + 1) * step / sigma_c) ** 2)
    w /= w.sum()

    def conv(v: Array) -> Array:
        pad = np.concatenate([np.full(half, v[0]), v, np.full(half, v[-1])])
        return np.convolve(pad, w, mode="valid")

    rho_cp = conv(table.density * table.cp_apparent)
    return PropertyTable(
        name=f"{table.name} (latent peak smoothed {sigma_c:g} K)",
        temp_c=t,
        conductivity=conv(table.conductivity),
        density=table.density,
        cp_apparent=rho_cp / table.density,
        vol_enthalpy=cumulative_vol_enthalpy(t, rho_cp),
        freezing_point_c=table.freezing_point_c,
        ice_fraction=table.ice_fraction,
    )


def done_on_model(
    model: SpectralModel,
    env: Surroundings,
    schedule: Schedule,
    start_temp_c: float,
    target: float,
    points: int = 801,
    dt_s: float = 0.05,
) -> float:
    """Earliest done time at which the reduced model itself meets the log-reduction target.

    The events of ``schedule`` before ``done`` are kept; the model is run by CVODES with
    outputs at most ``dt_s`` apart, and the first time its smallest log reduction reaches
    ``target`` is interpolated between outputs.

    Parameters
    ----------
    model : SpectralModel
        Reduced model (stock or lab variant).
    env : Surroundings
        Plate, air and flip conditions.
    schedule : Schedule
        Planned events; only the time of ``done`` is replaced.
    start_temp_c : float
        Uniform start temperature, degC.
    target : float
        Log reduction the smallest value must reach, log10.
    points : int
        > 0: LR integrated (trapezoid) from the temperature interpolated (global polynomial)
        on that many equally spaced points across the slab; 0: the model's own LR states at
        its lethality points (the planner's rule).
    dt_s : float
        Largest output interval, s.

    Returns
    -------
    float
        Done time, s.
    """
    if points < 0 or points == 1:
        raise ValueError(f"points = {points!r}: allowed 0 or an integer >= 2")
    interp = (
        interpolation_matrix(model, sensor_points(model.thickness_m, points)) if points else None
    )
    done = schedule.done_s * 1.05 + 5.0
    while True:
        phases = phases_for(schedule.with_done(done), env)
        hit = _first_crossing(model, phases, start_temp_c, target, interp, dt_s)
        if hit is not None:
            return hit
        done *= 1.5


def _first_crossing(
    model: SpectralModel,
    phases: list[Phase],
    start_temp_c: float,
    target: float,
    interp: Array | None,
    dt_s: float,
) -> float | None:
    """First time in the last phase at which min LR >= ``target``, s (None: not reached)."""
    n, x, t_start, mirrored = model.n, model.initial_state(start_temp_c), 0.0, False
    lr = np.zeros(0 if interp is None else interp.shape[0])
    rate_old = None if interp is None else model.lethality.rate(np.full(lr.size, start_temp_c))
    for k, ph in enumerate(phases):
        if ph.flip_before:
            x, mirrored = np.array(model.flip(x)).ravel(), not mirrored
        steps = max(1, math.ceil(ph.duration_s / dt_s))
        fr = np.arange(1, steps + 1) / steps
        traj = np.array(model.trajectory(ph.face0, ph.face1, fr)(x, ph.duration_s, t_start))
        low_start = float(x[n:].min()) if interp is None else float(lr.min(initial=np.inf))
        if interp is None:
            low = traj[n:].min(axis=0)
        else:
            temps = np.array(model.temp_of(traj[:n].T.reshape(1, -1))).reshape(-1, n) @ interp.T
            rate = model.lethality.rate(temps[:, ::-1] if mirrored else temps)
            both = np.vstack([rate_old[None, :], rate])
            cum = lr + np.cumsum(0.5 * (both[1:] + both[:-1]), axis=0) * (ph.duration_s / steps)
            low, lr, rate_old = cum.min(axis=1), cum[-1], rate[-1]
        if k == len(phases) - 1 and low[-1] >= target:
            t = t_start + ph.duration_s * np.concatenate([[0.0], fr])
            low = np.concatenate([[low_start], low])
            i = int(np.argmax(low >= target))
            if i == 0:
                return float(t[0])
            return float(np.interp(target, low[i - 1 : i + 1], t[i - 1 : i + 1]))
        x, t_start = traj[:, -1], t_start + ph.duration_s
    return None
