"""Convergence of the reduced model in space (nodes) and of the planner's collocation in time.

Sources
-------
* Space: the plane wall of constant properties with equal convective faces, initially
  uniform; its exact temperature is the series
  ``theta/theta_i = sum C_n exp(-zeta_n^2 Fo) cos(zeta_n xi)``, ``zeta_n tan zeta_n = Bi``,
  ``C_n = 4 sin zeta_n / (2 zeta_n + sin 2 zeta_n)`` (separation of variables; Carslaw, H. S.
  and Jaeger, J. C., Conduction of Heat in Solids, 2nd ed., Oxford, 1959, section 3.11, the
  section number from memory; the same series is checked against the one-term table of a
  heat-transfer textbook in ``tests/physics/test_reference_analytic.py``). With constant
  properties the model's temperature and Kirchhoff splines are linear, so what is measured
  is the Chebyshev collocation alone, which converges faster than any power of the number
  of nodes for a smooth solution (spectral accuracy; Trefethen, L. N., Spectral Methods in
  MATLAB, SIAM, 2000, chapter 4, from memory).
* Time: Radau IIA with 3 stages per element has classical order 5 at the element ends and
  stage order 3, the order that survives for stiff problems (Hairer, E. and Wanner, G.,
  Solving Ordinary Differential Equations II, 2nd ed., Springer, 1996, sections IV.5 and
  IV.15, from memory). The exact solution is the same reduced model integrated by CVODES
  (variable-order BDF) with absolute and relative tolerances of 1e-12.
"""

from __future__ import annotations

import casadi as ca
import numpy as np
from scipy.optimize import brentq

from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.food.table import constant_table
from obvert.plan.collocation import Grid, PhaseBlock
from obvert.thermal.boundary import FaceBC
from obvert.thermal.spectral import SpectralModel, SpectralSettings, interpolation_matrix

TIGHT = {"abstol": 1e-12, "reltol": 1e-12, "max_num_steps": 100000}


def _integrate(model: SpectralModel, x0: np.ndarray, faces: tuple[FaceBC, FaceBC], t_s: float):
    x = ca.MX.sym("x", model.n_states)
    ode = {"x": x, "ode": model.rhs(x, *faces)}
    f = ca.integrator("fine", "cvodes", ode, 0.0, t_s, TIGHT)
    return np.array(f(x0=x0)["xf"]).ravel()


def _slope(sizes, errors) -> float:
    return float(np.polyfit(np.log(sizes), np.log(errors), 1)[0])


# -- space ------------------------------------------------------------------------------
K, RHO, CP = 0.5, 1000.0, 4000.0  # W/(m K), kg/m^3, J/(kg K): a water-like solid
HALF = 0.005  # half-thickness, m
BIOT, FOURIER = 1.0, 0.2  # h HALF / k; alpha t / HALF^2
T_INF, T_I = 100.0, 0.0  # degC


def _series(xi: np.ndarray, terms: int = 80) -> np.ndarray:
    """Exact temperature of the wall (degC) at ``xi`` = distance from the centre / HALF."""
    z = np.array(
        [
            brentq(lambda v: v * np.sin(v) - BIOT * np.cos(v), i * np.pi, (i + 0.5) * np.pi)
            for i in range(terms)
        ]
    )
    c = 4.0 * np.sin(z) / (2.0 * z + np.sin(2.0 * z))
    theta = np.sum(c[:, None] * np.exp(-(z[:, None] ** 2) * FOURIER) * np.cos(z[:, None] * xi), 0)
    return T_INF + (T_I - T_INF) * theta


def test_spectral_model_converges_to_the_series_solution() -> None:
    table = constant_table("water-like solid", K, RHO, CP)
    face = FaceBC(BIOT * K / HALF, T_INF)
    t_end = FOURIER * HALF**2 / (K / (RHO * CP))
    x_pts = np.linspace(0.0, 2.0 * HALF, 21)
    exact = _series((x_pts - HALF) / HALF)
    sizes = (4, 6, 8, 10, 12)
    errors = []
    for n in sizes:
        leth = LethalityModel(1e6, 60.0, 10.0)  # unused here; keeps the LR states small
        model = SpectralModel(table, 2.0 * HALF, leth, SpectralSettings(n, lethality_points=0))
        xe = _integrate(model, model.initial_state(T_I), (face, face), t_end)
        temps = np.array(model.temperatures(xe)).ravel()
        field = interpolation_matrix(n, 2.0 * HALF, x_pts) @ temps
        errors.append(float(np.abs(field - exact).max()))
    assert all(b < a for a, b in zip(errors, errors[1:], strict=False)), errors
    # spectral accuracy: faster than any fixed power; an order-6 bound is far below it
    assert _slope(sizes, errors) < -6.0, errors
    assert errors[-1] < 1e-4, errors  # 12 nodes: within 0.1 mK of the series (100 K span)


# -- time -------------------------------------------------------------------------------
LETH = LethalityModel(103.6, 60.0, 5.586)  # the 7-log Salmonella fit of the demo
LEAN = Composition(water=0.68, protein=0.19, fat=0.11, ash=0.02)
PLATE, AIR = FaceBC(450.0, 190.0), FaceBC(12.0, 30.0, 0.9)


def test_radau_collocation_converges_to_a_fine_integration() -> None:
    """A 60 s plate phase of an 8 mm lean patty, starting 10 s after loading.

    The first 10 s are integrated by CVODES: the uniform start is not compatible with the
    face conditions, and the fast surface layer it leaves limits the order of any
    fixed-step method there (the planner grades its elements for it); past it the solution
    is smooth and the classical order can show. Elements are equal here (grading 1).
    """
    table = composition_table(LEAN, "lean")
    model = SpectralModel(table, 0.008, LETH, SpectralSettings(8, lethality_points=5))
    start = _integrate(model, model.initial_state(4.0), (PLATE, AIR), 10.0)
    dur = 60.0
    exact = np.array(model.temperatures(_integrate(model, start, (PLATE, AIR), dur))).ravel()
    sizes = (2, 4, 8, 16)
    errors = []
    for elements in sizes:
        grid = Grid(elements, 3, 1.0)
        blk = PhaseBlock(model, PLATE, AIR, grid)
        z = ca.MX.sym("z", blk.n_stage_vars)
        h = ca.DM(dur * grid.fractions()).T
        res, _, x_end, _ = blk.equations(ca.DM(start[: model.n]), z, h, 10.0)
        opts = {"abstol": 1e-13, "abstolStep": 1e-14, "max_iter": 100}
        newton = ca.rootfinder("collocation", "newton", ca.Function("r", [z], [res]), opts)
        z_sol = newton(np.tile(start[: model.n], grid.degree * elements))
        x_col = np.array(ca.Function("end", [z], [x_end])(z_sol)).ravel()
        temps = np.array(model.temperatures(x_col)).ravel()
        errors.append(float(np.abs(temps - exact).max()))
    assert _slope(sizes, errors) < -3.0, errors  # at least the stage order
    assert errors[2] < 1e-3, errors  # 8 elements (the build's default): within 1 mK
