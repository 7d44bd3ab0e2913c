"""Direct collocation of one cook phase on the spectral model (Radau IIA, implicit).

Each phase is split into elements whose lengths are fixed fractions of the phase's dwell
(graded: short elements just after an event, where the surface transient is fast). On
every element the enthalpy states at the Radau points are decision variables tied by the
collocation equations; the log reduction is the Radau quadrature of the lethality rate,
so it needs no states of its own.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import casadi as ca
import numpy as np
from numpy.typing import NDArray

from obvert.thermal.boundary import FaceBC
from obvert.thermal.spectral import SpectralModel, face_flux


@dataclass(frozen=True)
class Grid:
    """Element layout of a phase.

    Attributes
    ----------
    elements : int
        Elements per phase, -.
    degree : int
        Radau collocation points per element, -.
    grading : float
        Ratio of consecutive element lengths (> 1: finer after the event), -.
    """

    elements: int = 8
    degree: int = 3
    grading: float = 1.35

    def fractions(self) -> NDArray[np.float64]:
        """Element lengths as fractions of the phase, summing to 1."""
        f = self.grading ** np.arange(self.elements)
        return f / f.sum()

    def stage_times(self) -> NDArray[np.float64]:
        """Times of all collocation points as fractions of the phase, ascending."""
        tau = np.array(ca.collocation_points(self.degree, "radau"))
        f = self.fractions()
        start = np.concatenate([[0.0], np.cumsum(f)[:-1]])
        return (start[:, None] + f[:, None] * tau[None, :]).ravel()


def radau_coefficients(degree: int) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Derivative matrix ``c[j, r]`` and quadrature weights ``b[r]`` of Radau IIA.

    ``c[j, r]`` is the derivative at point r of the Lagrange basis polynomial j on the
    points ``[0, tau_1, ..., tau_d]``; ``b[r]`` integrates over [0, 1].
    """
    tau = np.concatenate([[0.0], np.array(ca.collocation_points(degree, "radau"))])
    c = np.zeros((degree + 1, degree + 1))
    b = np.zeros(degree + 1)
    for j in range(degree + 1):
        p = np.poly1d([1.0])
        for r in range(degree + 1):
            if r != j:
                p *= np.poly1d([1.0, -tau[r]]) / (tau[j] - tau[r])
        dp = np.polyder(p)
        for r in range(degree + 1):
            c[j, r] = dp(tau[r])
        b[j] = np.polyint(p)(1.0)
    return c, b


#: How the collocation equations are evaluated: ``"mx"`` (default) is a matrix graph with a
#: scalar interpolant call per node and stage; ``"sx"`` evaluates the interpolants as two
#: batched calls per element and everything downstream as one scalar (SX) function. Same
#: equations, same numbers (to rounding); ``"sx"`` was measured slower in IPOPT (the
#: Jacobian's forward directions dominate either way; tests/bench/plan_solve.py), so it is
#: kept only for that comparison.
EVALUATIONS = ("mx", "sx")


class PhaseBlock:
    """Symbolic collocation of one phase: states, equations, lethality and end state.

    Parameters
    ----------
    model : SpectralModel
        Reduced model.
    face0, face1 : FaceBC
        Boundary conditions at x = 0 and x = L during the phase.
    grid : Grid
        Element layout.
    evaluation : str
        One of :data:`EVALUATIONS`.
    """

    def __init__(
        self,
        model: SpectralModel,
        face0: FaceBC,
        face1: FaceBC,
        grid: Grid,
        evaluation: str = "mx",
    ) -> None:
        if evaluation not in EVALUATIONS:
            raise ValueError(f"evaluation = {evaluation!r}: allowed {EVALUATIONS}")
        self.model, self.grid, self.evaluation = model, grid, evaluation
        self.face0, self.face1 = face0, face1
        self.c, self.b = radau_coefficients(grid.degree)
        if evaluation == "sx":
            elem = self._element_sx()
        else:
            elem = self._element_mx()
        n, d, m = model.n, grid.degree, grid.elements
        self._elem = elem.map(m)
        self.n_stage_vars = n * m * d

    def _rates(self, s: ca.SX | ca.MX, t: ca.SX | ca.MX, u: ca.SX | ca.MX, time_s: ca.SX | ca.MX):
        """Enthalpy rates, lethality rates and lethality-point temperatures at one stage."""
        model = self.model
        dmat = ca.DM(model.d)
        q = -ca.mtimes(dmat, u)
        q = ca.vertcat(
            face_flux(self.face0, t[0], time_s), q[1:-1], -face_flux(self.face1, t[-1], time_s)
        )
        ds = -ca.mtimes(dmat, q) / model.e_scale
        lm = model.lethality
        t_lr = model.lethality_temps(t)
        rate = ca.power(10.0, (ca.fmin(t_lr, lm.cap_c) - lm.t_ref_c) / lm.z_k) / lm.d_ref_s
        return ds, rate, t_lr

    def _element_mx(self) -> ca.Function:
        """One element as a matrix graph with a scalar interpolant call per node and stage."""
        model, d, n = self.model, self.grid.degree, self.model.n
        tau = np.concatenate([[0.0], np.array(ca.collocation_points(d, "radau"))])
        s, time_s = ca.MX.sym("s", n), ca.MX.sym("time_s")
        t = ca.vertcat(*[model.temp_of(s[j]) for j in range(n)])
        u = ca.vertcat(*[model.kirchhoff_of(s[j]) for j in range(n)])
        f = ca.Function("f", [s, time_s], list(self._rates(s, t, u, time_s)))
        # One element: start state, stage states (stage-major), length, start time (s from
        # loading) -> residuals, LR gain, temperatures at the lethality points at its end.
        xs, zs, h = ca.MX.sym("xs", n), ca.MX.sym("zs", n * d), ca.MX.sym("h")
        t0 = ca.MX.sym("t0")
        pts = [xs] + [zs[r * n : (r + 1) * n] for r in range(d)]
        res, lr, t_end = [], 0, None
        for r in range(1, d + 1):
            ds_r, rate_r, t_r = f(pts[r], t0 + float(tau[r]) * h)
            xp = sum(float(self.c[j, r]) * pts[j] for j in range(d + 1))
            res.append(xp - h * ds_r)
            lr = lr + h * float(self.b[r]) * rate_r
            t_end = t_r
        return ca.Function("element", [xs, zs, h, t0], [ca.vertcat(*res), lr, t_end])

    def _element_sx(self) -> ca.Function:
        """One element: the property interpolants as two batched calls, the rest scalar.

        The temperature and Kirchhoff potential at every stage of the element are two
        mapped interpolant calls (the same B-splines as the model's, so the same numbers);
        everything downstream of them is one scalar (SX) function, whose derivatives
        CasADi builds as scalar graphs.
        """
        model, d, n = self.model, self.grid.degree, self.model.n
        tau = np.concatenate([[0.0], np.array(ca.collocation_points(d, "radau"))])
        xs, zs, h, t0 = ca.SX.sym("xs", n), ca.SX.sym("zs", n * d), ca.SX.sym("h"), ca.SX.sym("t0")
        tz, uz = ca.SX.sym("tz", n * d), ca.SX.sym("uz", n * d)
        pts = [xs] + [zs[r * n : (r + 1) * n] for r in range(d)]
        res, lr, t_end = [], 0, None
        for r in range(1, d + 1):
            sl = slice((r - 1) * n, r * n)
            ds_r, rate_r, t_r = self._rates(pts[r], tz[sl], uz[sl], t0 + float(tau[r]) * h)
            xp = sum(float(self.c[j, r]) * pts[j] for j in range(d + 1))
            res.append(xp - h * ds_r)
            lr = lr + h * float(self.b[r]) * rate_r
            t_end = t_r
        rest = ca.Function("element_rest", [xs, zs, tz, uz, h, t0], [ca.vertcat(*res), lr, t_end])
        temp_of, kirch_of = model.temp_of.map(n * d), model.kirchhoff_of.map(n * d)
        xm, zm, hm, t0m = (
            ca.MX.sym("xs", n),
            ca.MX.sym("zs", n * d),
            ca.MX.sym("h"),
            ca.MX.sym("t0"),
        )
        zrow = zm.T
        out = rest(xm, zm, temp_of(zrow).T, kirch_of(zrow).T, hm, t0m)
        return ca.Function("element", [xm, zm, hm, t0m], out)

    def equations(
        self, x_start: ca.MX, stages: ca.MX, h_s: ca.MX, t_start: ca.MX | float = 0.0
    ) -> tuple[ca.MX, ca.MX, ca.MX, ca.MX]:
        """Collocation residuals, lab-frame log reduction gained, end state, end temperatures.

        The log reduction and the end temperatures are at the model's lethality points.

        Parameters
        ----------
        x_start : MX (n,)
            Scaled enthalpy at the phase start.
        stages : MX (n * degree * elements,)
            Scaled enthalpy at every collocation point: element-major, then stage-major.
        h_s : MX (1, elements)
            Element lengths, s (their own variables when the dwell is free, so that the
            dwell couples to a few equations only and the KKT matrix stays sparse).
        t_start : MX or float
            Time of the phase start from loading, s (drives a drooping plate).
        """
        n, d, m = self.model.n, self.grid.degree, self.grid.elements
        z = ca.reshape(stages, n * d, m)
        ends = z[(d - 1) * n :, :]
        starts = ca.horzcat(x_start, ends[:, : m - 1])
        offsets = ca.horzcat(ca.DM.zeros(1, 1), ca.cumsum(h_s[:, : m - 1], 1)) if m > 1 else 0
        res, lr, t_end = self._elem(starts, z, h_s, t_start + offsets)
        return ca.vec(res), ca.sum2(lr), ends[:, m - 1], t_end[:, m - 1]


class BlockCache:
    """Collocation blocks of a set of scenarios, built once per face pair and reused.

    Parameters
    ----------
    models : sequence of SpectralModel
        Reduced model of each scenario, by scenario index.
    grid : Grid
        Element layout shared by every block.
    evaluation : str
        One of :data:`EVALUATIONS`.
    """

    def __init__(self, models: Sequence[SpectralModel], grid: Grid, evaluation: str = "mx") -> None:
        if evaluation not in EVALUATIONS:
            raise ValueError(f"evaluation = {evaluation!r}: allowed {EVALUATIONS}")
        self.models, self.grid, self.evaluation = tuple(models), grid, evaluation
        self._blocks: dict[tuple[int, FaceBC, FaceBC], PhaseBlock] = {}

    def block(self, k: int, face0: FaceBC, face1: FaceBC) -> PhaseBlock:
        """Block of scenario ``k`` for a pair of face conditions (built on first use)."""
        key = (k, face0, face1)
        if key not in self._blocks:
            self._blocks[key] = PhaseBlock(self.models[k], face0, face1, self.grid, self.evaluation)
        return self._blocks[key]
