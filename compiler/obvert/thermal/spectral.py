"""Reduced-order spectral heat model of the food slab, as CasADi expressions.

Chebyshev collocation on the Gauss-Lobatto nodes of the slab. The state at each node is the
volumetric enthalpy ``E`` (J/m^3), so latent heat is carried exactly; temperature ``T(E)`` and
the Kirchhoff potential ``u(E) = integral of k dT`` (W/m) are smooth B-spline interpolants of the
food's :class:`~obvert.food.table.PropertyTable`. The heat flux ``q = -du/dx`` is computed
spectrally and its end values are replaced by the boundary fluxes (flux-replacement
collocation), so the scheme conserves energy: ``dE/dt = -D q``.

The log reduction at each node is carried as a second set of states,
``dLR/dt = 10**((min(T, cap) - T_ref)/z) / D_ref``.
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
    """

    n_nodes: int = 12
    spline_points: int = 800

    def __post_init__(self) -> None:
        if not 4 <= self.n_nodes <= 48:
            raise ValueError(f"n_nodes = {self.n_nodes!r}: allowed 4 to 48")
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


def face_flux(bc: FaceBC, t_s: ca.MX) -> ca.MX:
    """Heat flux into the food through a face at surface temperature ``t_s``, W/m^2."""
    q = bc.h * (bc.t_inf_c - t_s)
    if bc.emissivity > 0.0:
        q += bc.emissivity * STEFAN_BOLTZMANN * ((bc.t_inf_c + _KELVIN) ** 4 - (t_s + _KELVIN) ** 4)
    return q


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

    @property
    def n_states(self) -> int:
        """Length of the state vector: scaled enthalpy and log reduction at every node."""
        return 2 * self.n

    def initial_state(self, start_temp_c: float) -> NDArray[np.float64]:
        """State of a slab at uniform ``start_temp_c`` (degC) with no lethality yet."""
        e = float(self.table.enthalpy(start_temp_c))
        s = (e - self._e0) / self.e_scale
        return np.concatenate([np.full(self.n, s), np.zeros(self.n)])

    def temperatures(self, state: ca.MX | NDArray[np.float64]) -> ca.MX:
        """Node temperatures (degC) of a state, as CasADi expressions or numbers."""
        s = state[: self.n]
        return ca.vertcat(*[self.temp_of(s[j]) for j in range(self.n)])

    def log_reductions(self, state: ca.MX | NDArray[np.float64]) -> ca.MX:
        """Node log reductions of a state."""
        return state[self.n :]

    def rhs(self, state: ca.MX, face0: FaceBC, face1: FaceBC) -> ca.MX:
        """Time derivative of the state under the given face conditions, 1/s."""
        s = state[: self.n]
        temp = ca.vertcat(*[self.temp_of(s[j]) for j in range(self.n)])
        u = ca.vertcat(*[self.kirchhoff_of(s[j]) for j in range(self.n)])
        q = -ca.mtimes(ca.DM(self.d), u)
        q_in0 = face_flux(face0, temp[0])
        q_in1 = face_flux(face1, temp[-1])
        q = ca.vertcat(q_in0, q[1:-1], -q_in1)
        ds = -ca.mtimes(ca.DM(self.d), q) / self.e_scale
        lm = self.lethality
        t_cap = ca.fmin(temp, lm.cap_c)
        dlr = ca.power(10.0, (t_cap - lm.t_ref_c) / lm.z_c) / lm.d_ref_s
        return ca.vertcat(ds, dlr)

    def flip(self, state: ca.MX | NDArray[np.float64]) -> ca.MX:
        """Mirror the slab: the face that was up now touches the plate."""
        idx = list(range(self.n - 1, -1, -1))
        return ca.vertcat(state[: self.n][idx], state[self.n :][idx])

    @cached_property
    def _sym(self) -> ca.MX:
        return ca.MX.sym("x", self.n_states)

    def phase_integrator(self, face0: FaceBC, face1: FaceBC, steps: int = 1) -> ca.Function:
        """Function ``(x0, duration_s) -> x1`` integrating one phase with BDF (CVODES).

        Time is scaled to [0, 1] so the duration is a differentiable parameter.
        """
        x = self._sym
        dur = ca.MX.sym("dur")
        ode = {"x": x, "p": dur, "ode": dur * self.rhs(x, face0, face1)}
        opts = {
            "abstol": 1e-9,
            "reltol": 1e-7,
            "max_num_steps": 20000,
        }
        f = ca.integrator("phase", "cvodes", ode, 0.0, 1.0, opts)
        x0 = ca.MX.sym("x0", self.n_states)
        d = ca.MX.sym("d")
        out = f(x0=x0, p=d)["xf"]
        return ca.Function("phase_step", [x0, d], [out])

    def trajectory(
        self, face0: FaceBC, face1: FaceBC, fractions: NDArray[np.float64]
    ) -> ca.Function:
        """Function ``(x0, duration_s) -> X`` with the state at the given phase fractions.

        ``X`` has one column per entry of ``fractions`` (ascending, in (0, 1]).
        """
        x = self._sym
        dur = ca.MX.sym("dur")
        ode = {"x": x, "p": dur, "ode": dur * self.rhs(x, face0, face1)}
        opts = {"abstol": 1e-9, "reltol": 1e-7, "max_num_steps": 20000}
        f = ca.integrator("traj", "cvodes", ode, 0.0, [float(v) for v in fractions], opts)
        x0 = ca.MX.sym("x0", self.n_states)
        d = ca.MX.sym("d")
        return ca.Function("trajectory", [x0, d], [f(x0=x0, p=d)["xf"]])
