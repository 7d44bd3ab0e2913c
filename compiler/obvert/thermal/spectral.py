"""Reduced-order spectral heat model of the food slab, as CasADi expressions.

Chebyshev collocation on the Gauss-Lobatto nodes of the slab. The state at each node is the
volumetric enthalpy ``E`` (J/m^3), so latent heat is carried exactly; temperature ``T(E)`` and
the Kirchhoff potential ``u(E) = integral of k dT`` (W/m) are smooth B-spline interpolants of the
food's :class:`~obvert.food.table.PropertyTable`. The heat flux ``q = -du/dx`` is computed
spectrally and its end values are replaced by the boundary fluxes (flux-replacement
collocation), so the scheme conserves energy: ``dE/dt = -D q``.

The log reduction is carried as a second set of states,
``dLR/dt = 10**((min(T, cap) - T_ref)/z) / D_ref``, at *lethality points*: equally spaced
points on [0, L] (faces included, so the set is symmetric under a flip) whose temperature is
the polynomial interpolant of the node temperatures (barycentric Lagrange interpolation on
the Chebyshev-Lobatto points: Berrut, J.-P. and Trefethen, L. N. (2004), "Barycentric
Lagrange interpolation", SIAM Review 46(3):501-517, eq. 5.4). The nodes themselves are
sparse mid-slab, and at removal the log reduction has a valley a few tenths of a millimetre
wide between the parts heated before and after a flip, which a node-only rule misses (the
measured effect is in docs/reduced-model.md).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import casadi as ca
import numpy as np
from numpy.typing import NDArray

from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.thermal.boundary import STEFAN_BOLTZMANN, FaceBC

_KELVIN = 273.15


@dataclass(frozen=True)
class SpectralSettings:
    """Settings of the reduced model.

    Attributes
    ----------
    n_nodes : int
        Number of Chebyshev-Gauss-Lobatto nodes (temperature states), -.
    spline_points : int
        Knots of the enthalpy-to-temperature splines, -.
    lethality_points : int
        Equally spaced points where the log reduction is integrated, faces included, -
        (0: at the Chebyshev nodes themselves).
    lethality_stencil : int
        Nodes each lethality point interpolates from (local Lagrange), -; 0: all nodes
        (the global polynomial).
    """

    n_nodes: int = 12
    spline_points: int = 800
    lethality_points: int = 21
    lethality_stencil: int = 4

    def __post_init__(self) -> None:
        if not 4 <= self.n_nodes <= 48:
            raise ValueError(f"n_nodes = {self.n_nodes!r}: allowed 4 to 48")
        if self.lethality_points != 0 and not 3 <= self.lethality_points <= 401:
            raise ValueError(f"lethality_points = {self.lethality_points!r}: allowed 0 or 3 to 401")
        if self.spline_points < 50:
            raise ValueError(f"spline_points = {self.spline_points!r}: allowed >= 50")


def chebyshev_nodes(n_nodes: int, thickness_m: float) -> NDArray[np.float64]:
    """Gauss-Lobatto nodes on [0, L], m, ascending."""
    n = n_nodes - 1
    return 0.5 * thickness_m * (1.0 - np.cos(np.pi * np.arange(n + 1) / n))


def chebyshev_matrix(n_nodes: int, thickness_m: float) -> NDArray[np.float64]:
    """First-derivative collocation matrix on :func:`chebyshev_nodes`, 1/m.

    Standard construction on [-1, 1] (negative-sum trick for the diagonal), mapped to
    x = L (1 - xi) / 2 on [0, L].
    """
    n = n_nodes - 1
    xi = np.cos(np.pi * np.arange(n + 1) / n)
    c = np.ones(n + 1)
    c[0] = c[-1] = 2.0
    c *= (-1.0) ** np.arange(n + 1)
    dx = xi[:, None] - xi[None, :]
    d = np.outer(c, 1.0 / c) / (dx + np.eye(n + 1))
    d -= np.diag(d.sum(axis=1))
    # d/dx = d/dxi * dxi/dx with xi = 1 - 2x/L.
    return d * (-2.0 / thickness_m)


def face_flux(bc: FaceBC, t_s: ca.MX, time_s: ca.MX | float | None = None) -> ca.MX:
    """Heat flux into the food through a face at surface temperature ``t_s``, W/m^2.

    ``time_s`` is the time from loading, s, for a surface that droops after a cold load;
    without it a drooping surface is taken at its lowest (``t_inf_c - droop_k``), which
    never overstates the heat input.
    """
    if bc.droop_k == 0.0:
        t_inf: ca.MX | float = bc.t_inf_c
    elif time_s is None:
        t_inf = bc.t_inf_c - bc.droop_k
    else:
        t_inf = bc.t_inf_c - bc.droop_k * ca.exp(-time_s / bc.droop_tau_s)
    q = bc.h * (t_inf - t_s)
    if bc.emissivity > 0.0:
        q += bc.emissivity * STEFAN_BOLTZMANN * ((t_inf + _KELVIN) ** 4 - (t_s + _KELVIN) ** 4)
    return q


def lethality_positions(thickness_m: float, count: int) -> NDArray[np.float64]:
    """``count`` equally spaced points on [0, L], faces included, m."""
    return np.linspace(0.0, thickness_m, count)


def local_interpolation_matrix(
    nodes_m: NDArray[np.float64], x_m: NDArray[np.float64], width: int = 4
) -> NDArray[np.float64]:
    """Matrix of local Lagrange interpolation on the ``width`` nodes nearest each point.

    Each row has ``width`` non-zeros (the window of consecutive nodes centred on the
    point), so the lethality at a point couples to few states and the planner's KKT
    matrix stays sparse. A row at a node is the unit vector of that node.
    """
    nodes = np.asarray(nodes_m, dtype=float)
    n = nodes.size
    out = np.zeros((len(x_m), n))
    for r, x in enumerate(np.asarray(x_m, dtype=float)):
        hit = np.flatnonzero(np.isclose(nodes, x, rtol=0.0, atol=1e-12 * nodes[-1]))
        if hit.size:
            out[r, hit[0]] = 1.0
            continue
        right = int(np.searchsorted(nodes, x))
        lo = min(max(right - width // 2, 0), n - width)
        idx = np.arange(lo, lo + width)
        for a in idx:
            others = idx[idx != a]
            out[r, a] = np.prod((x - nodes[others]) / (nodes[a] - nodes[others]))
    return out


def interpolation_matrix(
    n_nodes: int, thickness_m: float, x_m: NDArray[np.float64]
) -> NDArray[np.float64]:
    """Matrix taking values at :func:`chebyshev_nodes` to values at positions ``x_m`` (m).

    Barycentric Lagrange interpolation with the Chebyshev-Lobatto weights (Berrut and
    Trefethen 2004, eq. 5.4); a row at a node is the unit vector of that node.
    """
    xi = 1.0 - 2.0 * np.asarray(x_m, dtype=float) / thickness_m
    return barycentric_matrix(n_nodes, xi)


def barycentric_matrix(n_nodes: int, xi: NDArray[np.float64]) -> NDArray[np.float64]:
    """Barycentric Lagrange weights on the Chebyshev-Lobatto points, at coordinates ``xi``.

    ``xi`` is in the Chebyshev coordinate [-1, 1] (``cos(pi j / (n - 1))`` are the nodes).
    """
    xi_nodes = np.cos(np.pi * np.arange(n_nodes) / (n_nodes - 1))
    w = (-1.0) ** np.arange(n_nodes)
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


class SpectralModel:
    """Reduced-order model of one slab thickness.

    Parameters
    ----------
    table : PropertyTable
        Thermal properties of the food.
    thickness_m : float
        Slab thickness, m.
    lethality : LethalityModel
        Kinetics whose log reduction is integrated at every node.
    settings : SpectralSettings
        Number of nodes and spline resolution.
    """

    def __init__(
        self,
        table: PropertyTable,
        thickness_m: float,
        lethality: LethalityModel,
        settings: SpectralSettings | None = None,
    ) -> None:
        if not thickness_m > 0.0:
            raise ValueError(f"thickness_m = {thickness_m!r}: allowed > 0")
        self.table = table
        self.thickness_m = float(thickness_m)
        self.lethality = lethality
        self.settings = settings or SpectralSettings()
        self.n = self.settings.n_nodes
        self.x_m = chebyshev_nodes(self.n, self.thickness_m)
        self.d = chebyshev_matrix(self.n, self.thickness_m)
        e_grid = np.linspace(
            table.vol_enthalpy[0], table.vol_enthalpy[-1], self.settings.spline_points
        )
        t_grid = table.temperature(e_grid)
        u_grid = np.interp(t_grid, table.temp_c, table.kirchhoff())
        self.e_scale = float(table.vol_enthalpy[-1] - table.vol_enthalpy[0])
        s_grid = (e_grid - e_grid[0]) / self.e_scale
        self._e0 = float(e_grid[0])
        self.temp_of = ca.interpolant("T_of_s", "bspline", [s_grid], t_grid)
        self.kirchhoff_of = ca.interpolant("u_of_s", "bspline", [s_grid], u_grid)
        m = self.settings.lethality_points
        if m:
            self.x_lr = lethality_positions(self.thickness_m, m)
            if self.settings.lethality_stencil:
                self.p_lr = local_interpolation_matrix(
                    self.x_m, self.x_lr, self.settings.lethality_stencil
                )
            else:
                self.p_lr = interpolation_matrix(self.n, self.thickness_m, self.x_lr)
        else:
            self.x_lr, self.p_lr = self.x_m.copy(), np.eye(self.n)
        #: Number of lethality points (log-reduction states).
        self.m = int(self.x_lr.size)

    @property
    def n_states(self) -> int:
        """Length of the state vector: scaled enthalpy at the nodes, LR at the points."""
        return self.n + self.m

    def lethality_temps(self, node_temps: ca.MX) -> ca.MX:
        """Temperatures at the lethality points from node temperatures, degC."""
        if self.p_lr.shape[0] == self.n and np.array_equal(self.p_lr, np.eye(self.n)):
            return node_temps
        # structural zeros dropped: a local stencil keeps each point's few couplings only
        return ca.mtimes(ca.sparsify(ca.DM(self.p_lr)), node_temps)

    def initial_state(self, start_temp_c: float) -> NDArray[np.float64]:
        """State of a slab at uniform ``start_temp_c`` (degC) with no lethality yet."""
        e = float(self.table.enthalpy(start_temp_c))
        s = (e - self._e0) / self.e_scale
        return np.concatenate([np.full(self.n, s), np.zeros(self.m)])

    def temperatures(self, state: ca.MX | NDArray[np.float64]) -> ca.MX:
        """Node temperatures (degC) of a state, as CasADi expressions or numbers."""
        s = state[: self.n]
        return ca.vertcat(*[self.temp_of(s[j]) for j in range(self.n)])

    def rhs(
        self, state: ca.MX, face0: FaceBC, face1: FaceBC, time_s: ca.MX | float | None = None
    ) -> ca.MX:
        """Time derivative of the state under the given face conditions, 1/s.

        ``time_s`` is the time from loading, s, for a drooping plate (:func:`face_flux`;
        None: at its lowest).
        """
        s = state[: self.n]
        temp = ca.vertcat(*[self.temp_of(s[j]) for j in range(self.n)])
        u = ca.vertcat(*[self.kirchhoff_of(s[j]) for j in range(self.n)])
        q = -ca.mtimes(ca.DM(self.d), u)
        q_in0 = face_flux(face0, temp[0], time_s)
        q_in1 = face_flux(face1, temp[-1], time_s)
        q = ca.vertcat(q_in0, q[1:-1], -q_in1)
        ds = -ca.mtimes(ca.DM(self.d), q) / self.e_scale
        lm = self.lethality
        t_cap = ca.fmin(self.lethality_temps(temp), lm.cap_c)
        dlr = ca.power(10.0, (t_cap - lm.t_ref_c) / lm.z_k) / lm.d_ref_s
        return ca.vertcat(ds, dlr)

    def flip(self, state: ca.MX | NDArray[np.float64]) -> ca.MX:
        """Mirror the slab: the face that was up now touches the plate."""
        idx = list(range(self.n - 1, -1, -1))
        jdx = list(range(self.m - 1, -1, -1))
        return ca.vertcat(state[: self.n][idx], state[self.n :][jdx])

    @cached_property
    def _sym(self) -> ca.MX:
        return ca.MX.sym("x", self.n_states)

    def trajectory(
        self, face0: FaceBC, face1: FaceBC, fractions: NDArray[np.float64]
    ) -> ca.Function:
        """Function ``(x0, duration_s, start_s) -> X`` with the state at the phase fractions.

        ``X`` has one column per entry of ``fractions`` (ascending, in (0, 1]).
        ``start_s`` is the time of the phase start from loading, s: a drooping plate
        follows its recovery in time, as in the planner's collocation (no effect on
        faces that do not droop).
        """
        x = self._sym
        p, tau = ca.MX.sym("p", 2), ca.MX.sym("tau")  # (duration, start), phase fraction
        rate = self.rhs(x, face0, face1, p[1] + p[0] * tau)
        ode = {"x": x, "p": p, "t": tau, "ode": p[0] * rate}
        opts = {"abstol": 1e-9, "reltol": 1e-7, "max_num_steps": 20000}
        f = ca.integrator("traj", "cvodes", ode, 0.0, [float(v) for v in fractions], opts)
        x0 = ca.MX.sym("x0", self.n_states)
        d, t0 = ca.MX.sym("d"), ca.MX.sym("t0")
        return ca.Function("trajectory", [x0, d, t0], [f(x0=x0, p=ca.vertcat(d, t0))["xf"]])
