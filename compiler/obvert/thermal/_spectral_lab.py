"""Laboratory variants of the reduced model, measured by ``tests/bench/reduced_model.py``.

Nothing in the build uses this module; it holds the prototypes the benchmark compares with
:class:`~obvert.thermal.spectral.SpectralModel` and :class:`~obvert.plan.ocp.Planner`
(documented in ``docs/reduced-model.md``):

* :func:`interpolation_matrix`: the model's temperature field between its nodes
  (barycentric Lagrange interpolation, Berrut, J.-P. and Trefethen, L. N. (2004),
  "Barycentric Lagrange interpolation", SIAM Review 46(3):501-517, eq. 5.4 with the
  Chebyshev-Lobatto weights).
* :class:`SensorPlanner`: the planner with the log reduction integrated at equally spaced
  "sensor" points from the interpolated temperature instead of at the Chebyshev nodes,
  which are sparse in the middle of the slab where the cold spot lies.
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
from types import SimpleNamespace

import casadi as ca
import numpy as np
from numpy.typing import NDArray

from obvert.food.choi_okos import cumulative_vol_enthalpy
from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.plan.collocation import Grid, PhaseBlock, radau_coefficients
from obvert.plan.ocp import (
    DWELL_SCALE_S,
    SOLVE_BUDGET_S,
    Planner,
    PlanResult,
    Requirement,
    _phase_specs,
)
from obvert.plan.schedule import Surroundings
from obvert.thermal.boundary import FaceBC
from obvert.thermal.spectral import (
    SpectralModel,
    SpectralSettings,
    chebyshev_matrix,
    face_flux,
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
    xi_nodes = _lobatto_xi(n)
    g = 1.0 - 2.0 * np.asarray(x_m, dtype=float) / model.thickness_m
    alpha = getattr(model, "alpha", 0.0)
    xi = np.sin(g * math.asin(alpha)) / alpha if alpha > 0.0 else g
    w = (-1.0) ** np.arange(n)
    w[0] *= 0.5
    w[-1] *= 0.5
    diff = xi[:, None] - xi_nodes[None, :]
    exact = np.isclose(diff, 0.0, atol=1e-14)
    diff[exact] = 1.0
    c = w[None, :] / diff
    p = c / c.sum(axis=1, keepdims=True)
    rows = exact.any(axis=1)
    p[rows] = exact[rows].astype(float)
    return p


def sensor_points(thickness_m: float, count: int) -> Array:
    """``count`` equally spaced points on [0, L], faces included (symmetric under a flip), m."""
    if count < 2:
        raise ValueError(f"count = {count!r}: allowed an integer >= 2")
    return np.linspace(0.0, thickness_m, count)


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

    def rhs(self, state: ca.MX, face0: FaceBC, face1: FaceBC) -> ca.MX:
        """Time derivative of the state, as :meth:`SpectralModel.rhs` with a filtered flux."""
        s = state[: self.n]
        temp = ca.vertcat(*[self.temp_of(s[j]) for j in range(self.n)])
        u = ca.vertcat(*[self.kirchhoff_of(s[j]) for j in range(self.n)])
        q = -ca.mtimes(ca.DM(self.d_flux), u)
        q = ca.vertcat(face_flux(face0, temp[0]), q[1:-1], -face_flux(face1, temp[-1]))
        ds = -ca.mtimes(ca.DM(self.d), q) / self.e_scale
        return ca.vertcat(ds, _rate(self.lethality, temp))


def _rate(lm: LethalityModel, temp: ca.MX) -> ca.MX:
    """Lethality rate at temperatures ``temp`` (degC), log10 per s."""
    return ca.power(10.0, (ca.fmin(temp, lm.cap_c) - lm.t_ref_c) / lm.z_c) / lm.d_ref_s


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


class SensorBlock(PhaseBlock):
    """Collocation of one phase with lethality integrated at sensor points.

    Same states and collocation equations as :class:`~obvert.plan.collocation.PhaseBlock`;
    the lethality rate (and the end temperature returned) is taken at ``interp @ T_nodes``.

    Parameters
    ----------
    model : SpectralModel
        Reduced model.
    face0, face1 : FaceBC
        Boundary conditions during the phase.
    grid : Grid
        Element layout.
    interp : ndarray, shape (n_sensors, model.n)
        Node-to-sensor interpolation; sensors symmetric under a flip.
    """

    def __init__(
        self, model: SpectralModel, face0: FaceBC, face1: FaceBC, grid: Grid, interp: Array
    ) -> None:
        self.model, self.grid = model, grid
        n, d, m = model.n, grid.degree, grid.elements
        s = ca.MX.sym("s", n)
        t = ca.vertcat(*[model.temp_of(s[j]) for j in range(n)])
        u = ca.vertcat(*[model.kirchhoff_of(s[j]) for j in range(n)])
        dmat = ca.DM(model.d)
        q = -ca.mtimes(dmat, u)
        q = ca.vertcat(face_flux(face0, t[0]), q[1:-1], -face_flux(face1, t[-1]))
        ds = -ca.mtimes(dmat, q) / model.e_scale
        t_sensor = ca.mtimes(ca.DM(interp), t)
        f = ca.Function("f", [s], [ds, _rate(model.lethality, t_sensor), t_sensor])
        self.c, self.b = radau_coefficients(d)
        xs, zs, h = ca.MX.sym("xs", n), ca.MX.sym("zs", n * d), ca.MX.sym("h")
        pts = [xs] + [zs[r * n : (r + 1) * n] for r in range(d)]
        res, lr, t_end = [], 0, None
        for r in range(1, d + 1):
            ds_r, rate_r, t_r = f(pts[r])
            xp = sum(float(self.c[j, r]) * pts[j] for j in range(d + 1))
            res.append(xp - h * ds_r)
            lr = lr + h * float(self.b[r]) * rate_r
            t_end = t_r
        elem = ca.Function("element", [xs, zs, h], [ca.vertcat(*res), lr, t_end])
        self._elem = elem.map(m)
        self.n_stage_vars = n * m * d


#: Fine grid on which a plan's log-reduction profile is checked, points across the slab.
CHECK_POINTS = 801


class SensorPlanner(Planner):
    """:class:`~obvert.plan.ocp.Planner` whose log-reduction rule holds across the slab.

    At removal the log reduction across the slab has a narrow valley, a few tenths of a
    millimetre wide, between the part heated before the flip and the part heated after it,
    so a fixed set of points misses its bottom (and the optimiser moves the flip until the
    valley falls between points). The rule ``LR(x) >= target`` for all x is therefore held
    (i) at ``n_sensors`` equally spaced points, faces included, and (ii) at the bottom of
    the valley, tracked by one extra decision variable ``x_v`` with the stationarity
    condition ``dLR/dx(x_v) = 0`` (the lower-level optimality condition of the
    semi-infinite constraint, Hettich, R. and Kortanek, K. O. (1993), "Semi-infinite
    programming: theory, methods and applications", SIAM Review 35(3):380-429, sec. 5),
    started at the lowest of :data:`CHECK_POINTS` points of the initial guess. The valley
    point is left out when that lowest point is at a face (no interior minimum). LR at any
    point is the Radau quadrature of the rate at the temperature interpolated from the
    nodes. Other parameters as for :class:`~obvert.plan.ocp.Planner`. Relies on the private
    structure of :mod:`obvert.plan.ocp` (``_simulate``, the transcription's fields).
    """

    def __init__(
        self,
        model: SpectralModel,
        env: Surroundings,
        requirement: Requirement,
        min_gap_s: float,
        grid: Grid | None = None,
        n_sensors: int = 25,
    ) -> None:
        super().__init__(model, env, requirement, min_gap_s, grid)
        self.interp = interpolation_matrix(model, sensor_points(model.thickness_m, n_sensors))
        x = np.linspace(0.0, model.thickness_m, CHECK_POINTS)
        self._check = (x, interpolation_matrix(model, x))
        self._guesses: dict[tuple[tuple[str, ...], float], Array] = {}
        self.valley = False

    def block(self, face0: FaceBC, face1: FaceBC) -> PhaseBlock:
        """Collocation block with sensor lethality for a pair of face conditions (cached)."""
        key = (face0, face1)
        if key not in self._blocks:
            self._blocks[key] = SensorBlock(self.model, face0, face1, self.grid, self.interp)
        return self._blocks[key]

    def feasible_guess(self, kinds: tuple[str, ...], start_temp_c: float) -> Array:
        """:meth:`Planner.feasible_guess` on the sensors, computed once per start, s."""
        key = (kinds, float(start_temp_c))
        if key not in self._guesses:
            self._guesses[key] = super().feasible_guess(kinds, start_temp_c)
        return self._guesses[key]

    def solve(
        self, kinds: tuple[str, ...], start_temp_c: float, seeds: tuple[Array, ...] = ()
    ) -> PlanResult:
        """Minimum-time schedule, as :meth:`Planner.solve` with the sensor transcription."""
        self.valley = False
        x_low, _ = self.check(kinds, start_temp_c, self.feasible_guess(kinds, start_temp_c))
        edge = 2.0 * self.model.thickness_m / (CHECK_POINTS - 1)
        self.valley = edge < x_low < self.model.thickness_m - edge
        key = (*kinds, "valley") if self.valley else kinds
        if key not in self._nlps:
            self._nlps[key] = _sensor_transcription(self, kinds)
        self._nlps[kinds] = self._nlps[key]
        return super().solve(kinds, start_temp_c, seeds)

    def check(
        self, kinds: tuple[str, ...], start_temp_c: float, dwell: Array
    ) -> tuple[float, float]:
        """Position (m) and value of the lowest LR on the check grid for ``dwell`` (CVODES)."""
        stages, _, _ = Planner._simulate(self, kinds, start_temp_c, dwell)
        _, lr, _ = self._lethality(kinds, dwell, stages, self._check[1])
        j = int(np.argmin(lr))
        return float(self._check[0][j]), float(lr[j])

    def _simulate(
        self, kinds: tuple[str, ...], start_temp_c: float, dwell: Array
    ) -> tuple[list[Array], Array, Array]:
        """CVODES simulation: stage states (then x_v/L), food-frame sensor LR, removal temps."""
        stages, _, _ = super()._simulate(kinds, start_temp_c, dwell)
        after, lr, t_rem = self._lethality(kinds, dwell, stages, self.interp)
        self._last_lr_after = after
        if self.valley:  # the valley variable rides at the end of the stage block
            _, lr_fine, _ = self._lethality(kinds, dwell, stages, self._check[1])
            v0 = self._check[0][int(np.argmin(lr_fine))] / self.model.thickness_m
            stages = [*stages[:-1], np.append(stages[-1], v0)]
        return stages, lr, t_rem

    def _lethality(
        self, kinds: tuple[str, ...], dwell: Array, stages: list[Array], interp: Array
    ) -> tuple[list[Array], Array, Array]:
        """Radau quadrature of the rate at ``interp @ T`` over the stage states.

        Returns the food-frame LR after each phase, at removal, and the removal temperatures.
        """
        model, grid = self.model, self.grid
        _, b = radau_coefficients(grid.degree)
        weights = (grid.fractions()[:, None] * b[None, 1:]).ravel()
        lr, flipped, after, t_rem = np.zeros(interp.shape[0]), False, [], np.zeros(0)
        for ph, z in zip(_phase_specs(kinds, self.env, self.req.rest_s), stages, strict=True):
            flipped = flipped != ph.flip_before
            dur = float(dwell[ph.dwell_index]) if ph.dwell_index is not None else ph.fixed_s
            temps = np.array(model.temp_of(z.reshape(1, -1))).reshape(-1, model.n)
            t_points = temps @ interp.T
            gain = dur * weights @ model.lethality.rate(t_points)
            lr = lr + (gain[::-1] if flipped else gain)
            after.append(lr.copy())
            t_rem = t_points[-1] if ph.is_removal else t_rem
        return after, lr, t_rem


def _point_row(model: SpectralModel, pos: ca.MX) -> ca.MX:
    """Interpolation row (1, n) at the symbolic position ``pos`` (fraction of L from face 0).

    Chebyshev series: coefficients from the nodal values, T_k(xi) by the three-term
    recurrence (smooth in ``pos``, unlike the barycentric formula at the nodes).
    """
    n = model.n
    modes = np.cos(np.pi * np.outer(np.arange(n), np.arange(n)) / (n - 1))
    g = 1.0 - 2.0 * pos
    alpha = getattr(model, "alpha", 0.0)
    xi = ca.sin(g * math.asin(alpha)) / alpha if alpha > 0.0 else g
    t = [ca.MX(1.0), xi]
    for _ in range(2, n):
        t.append(2.0 * xi * t[-1] - t[-2])
    return ca.mtimes(ca.horzcat(*t[:n]), ca.DM(np.linalg.inv(modes)))


def _point_function(model: SpectralModel) -> ca.Function:
    """``(s_nodes, pos) -> (rate, d rate / d pos)`` at position ``pos`` (fraction of L)."""
    s, pos = ca.MX.sym("s", model.n), ca.MX.sym("pos")
    temp = ca.vertcat(*[model.temp_of(s[j]) for j in range(model.n)])
    row = _point_row(model, pos)
    t_p = ca.mtimes(row, temp)
    dt_p = ca.jacobian(t_p, pos)
    lm = model.lethality
    rate = _rate(lm, t_p)
    drate = ca.if_else(t_p < lm.cap_c, rate * math.log(10.0) / lm.z_c, 0.0) * dt_p
    return ca.Function("point", [s, pos], [rate, drate])


def _valley_gain(
    planner: SensorPlanner, point: ca.Function, z: ca.MX, h: ca.MX | ca.DM, pos: ca.MX
) -> tuple[ca.MX, ca.MX]:
    """Log reduction gained in one phase at lab position ``pos``, and its d/d(pos)."""
    n, m, d = planner.model.n, planner.grid.elements, planner.grid.degree
    rate, drate = point.map(m * d)(ca.reshape(z, n, m * d), ca.repmat(pos, 1, m * d))
    w = ca.kron(h, ca.DM(radau_coefficients(d)[1][1:]).T)
    return ca.sum2(w * rate), ca.sum2(w * drate)


def _sensor_transcription(planner: SensorPlanner, kinds: tuple[str, ...]) -> SimpleNamespace:
    """The NLP of :mod:`obvert.plan.ocp` with one log-reduction row per sensor.

    Same variables (scaled dwells, element lengths, accumulated log reduction per phase,
    stage states), objective, collocation equations and IPOPT options; the lethality (and
    minimum-temperature) rows are taken at the sensors, plus the valley point if
    ``planner.valley`` (its position ``x_v/L`` is the last variable).
    """
    req, grid, n = planner.req, planner.grid, planner.model.n
    phases = _phase_specs(kinds, planner.env, req.rest_s)
    n_s = planner.interp.shape[0]
    x0 = ca.MX.sym("x0", n)
    dwell_scaled = ca.MX.sym("dwell_scaled", len(kinds) + 1)
    blocks = [planner.block(ph.face0, ph.face1) for ph in phases]
    stages = [ca.MX.sym(f"z{i}", b.n_stage_vars) for i, b in enumerate(blocks)]
    v = ca.MX.sym("valley", 1 if planner.valley else 0)
    frac = ca.DM(grid.fractions()).T
    x, flipped, lr_food, t_removal, lr_v, dlr_v = x0, False, ca.DM.zeros(n_s), None, 0, 0
    point = _point_function(planner.model) if planner.valley else None
    res, h_vars, lr_vars = [], [], []
    for ph, blk, z in zip(phases, blocks, stages, strict=True):
        if ph.flip_before:
            x, flipped = x[list(range(n - 1, -1, -1))], not flipped
        if ph.dwell_index is not None:
            h = ca.MX.sym(f"h{len(h_vars)}", 1, grid.elements)
            h_vars.append(h)
            dwell = DWELL_SCALE_S * dwell_scaled[ph.dwell_index]
            res.append(ca.vec(h - dwell * frac) / DWELL_SCALE_S)
        else:
            h = ph.fixed_s * frac
        r, lr_lab, x, t_end = blk.equations(x, z, h)
        lr_var = ca.MX.sym(f"lr{len(lr_vars)}", n_s)
        lr_vars.append(lr_var)
        gain = lr_lab[list(range(n_s - 1, -1, -1))] if flipped else lr_lab
        res += [r, (lr_var - lr_food - gain) / req.log_reduction]
        lr_food = lr_var
        t_removal = t_end if ph.is_removal else t_removal
        if planner.valley:
            gain_v, dgain_v = _valley_gain(planner, point, z, h, 1.0 - v if flipped else v)
            lr_v, dlr_v = lr_v + gain_v, dlr_v + (-dgain_v if flipped else dgain_v)
    g_ineq = [ca.log10(lr_food / req.log_reduction)]
    if planner.valley:
        res.append(dlr_v / req.log_reduction)
        g_ineq.append(ca.log10(lr_v / req.log_reduction))
    if req.min_temp_c is not None:
        g_ineq.append((t_removal - req.min_temp_c) / 10.0)
    g = [ca.vertcat(*res), *g_ineq]
    w = ca.vertcat(dwell_scaled, *[ca.vec(h) for h in h_vars], *lr_vars, *stages, v)
    nlp = {"x": w, "p": x0, "f": ca.sum1(dwell_scaled), "g": ca.vertcat(*g)}
    return SimpleNamespace(
        kinds=kinds,
        phases=phases,
        n_h=sum(int(h.numel()) for h in h_vars),
        n_lr=n_s * len(lr_vars),
        n_res=int(g[0].shape[0]),
        n_g=int(nlp["g"].shape[0]),
        lr_of=ca.Function("lr_of", [w, x0], [ca.vertcat(lr_food, lr_v) if v.numel() else lr_food]),
        solver=ca.nlpsol("plan_sensors", "ipopt", nlp, _ipopt_options(planner.hessian)),
    )


def _ipopt_options(hessian: str) -> dict[str, object]:
    """The IPOPT options of :mod:`obvert.plan.ocp` (copied so the comparison is like for like)."""
    return {
        "ipopt.print_level": 0,
        "ipopt.sb": "yes",
        "print_time": False,
        "ipopt.tol": 1e-7,
        "ipopt.constr_viol_tol": 1e-8,
        "ipopt.acceptable_tol": 1e-5,
        "ipopt.acceptable_constr_viol_tol": 1e-8,
        "ipopt.acceptable_iter": 5,
        "ipopt.max_iter": 300,
        "ipopt.max_wall_time": SOLVE_BUDGET_S,
        "ipopt.mu_strategy": "adaptive",
        "ipopt.mumps_pivot_order": 0,
        "ipopt.hessian_approximation": hessian,
    }
