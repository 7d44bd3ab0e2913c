"""Order of accuracy of the reference solver by the method of manufactured solutions.

Sources
-------
* Roache, P. J., Verification and Validation in Computational Science and Engineering,
  Hermosa Publishers, 1998 (method of manufactured solutions, observed order of accuracy).
* Salari, K. and Knupp, P., Code Verification by the Method of Manufactured Solutions,
  Sandia National Laboratories report SAND2000-1444, 2000 (boundary source terms for
  manufactured solutions with Robin conditions).

A smooth temperature field T(x, t) is chosen; the volumetric source
``S = rho*cp(T) T_t - d/dx(k(T) T_x)`` and the extra face fluxes that make T satisfy the
Robin/radiation conditions are added to the solver (through the verification-only forcing
hook ``obvert.thermal.reference.simulate_forced``). k(T) and rho*cp(T) are nonlinear
polynomials; the property table samples them exactly at its nodes with a 0.01 K step, whose
interpolation error (below 1e-7 K) is far below the errors measured here.

Expected slope 2 (second order in space and time); the asserted band [1.8, 2.3] is the
task's requirement; it allows for the pre-asymptotic range of the coarsest meshes.
"""

from __future__ import annotations

import numpy as np

from obvert.food.table import PropertyTable
from obvert.thermal.boundary import STEFAN_BOLTZMANN, FaceBC, Phase
from obvert.thermal.reference import ReferenceSettings, simulate_forced

L = 0.01  # slab thickness, m
T_END = 10.0  # s
FACE0 = FaceBC(h=300.0, t_inf_c=90.0, emissivity=0.9)
FACE1 = FaceBC(h=20.0, t_inf_c=25.0, emissivity=0.9)

# Nonlinear properties: k = K0 + K1 (T - 20); rho*cp = C0 (1 + C1 d + C2 d^2), d = T - 20.
K0, K1 = 0.4, 0.002
C0, C1, C2 = 3.6e6, 0.003, 2e-5


def k(t):
    return K0 + K1 * (t - 20.0)


def rho_cp(t):
    d = t - 20.0
    return C0 * (1.0 + C1 * d + C2 * d * d)


def vol_enthalpy(t):
    d = t - 20.0
    return C0 * (d + C1 * d**2 / 2.0 + C2 * d**3 / 3.0)


def smooth_table() -> PropertyTable:
    t = np.arange(0.0, 120.0 + 0.005, 0.01)
    e = vol_enthalpy(t)
    return PropertyTable(
        name="manufactured",
        temp_c=t,
        conductivity=k(t),
        density=np.full_like(t, 1000.0),
        cp_apparent=rho_cp(t) / 1000.0,
        vol_enthalpy=e - e[0],
        freezing_point_c=float("-inf"),
        ice_fraction=np.zeros_like(t),
    )


# Manufactured field: decaying cosine, growing quadratic and a 5 s oscillation.
A, TAU1, W, PH = 25.0, 30.0, 2.2, 0.3
B, TAU2 = 15.0, 10.0
D, OMEGA = 6.0, 2.0 * np.pi / 5.0


def field(x, t):
    """Return T, T_t, T_x, T_xx of the manufactured solution at (x m, t s)."""
    s = x / L
    ea, eb, sn, cs = np.exp(-t / TAU1), np.exp(-t / TAU2), np.sin(OMEGA * t), np.cos(OMEGA * t)
    c, sn_w = np.cos(W * s + PH), np.sin(W * s + PH)
    cp, sp = np.cos(np.pi * s), np.sin(np.pi * s)
    temp = 40.0 + A * ea * c + B * s**2 * (1.0 - eb) + D * sn * cp
    t_t = -A / TAU1 * ea * c + B * s**2 * eb / TAU2 + D * OMEGA * cs * cp
    t_x = (-A * ea * W * sn_w + 2.0 * B * s * (1.0 - eb) - D * sn * np.pi * sp) / L
    t_xx = (-A * ea * W**2 * c + 2.0 * B * (1.0 - eb) - D * sn * np.pi**2 * cp) / L**2
    return temp, t_t, t_x, t_xx


def bc_flux(bc: FaceBC, ts):
    rad = STEFAN_BOLTZMANN * ((bc.t_inf_c + 273.15) ** 4 - (ts + 273.15) ** 4)
    return bc.h * (bc.t_inf_c - ts) + bc.emissivity * rad


def forcing(x, t):
    temp, t_t, t_x, t_xx = field(x, t)
    source = rho_cp(temp) * t_t - K1 * t_x**2 - k(temp) * t_xx
    t0, _, tx0, _ = field(0.0, t)
    t1, _, tx1, _ = field(L, t)
    extra0 = -k(t0) * tx0 - bc_flux(FACE0, t0)  # required conduction into the food at x = 0
    extra1 = k(t1) * tx1 - bc_flux(FACE1, t1)  # and at x = L
    return source, np.array([extra0, extra1])


def errors(n_cells: int, dt: float) -> tuple[float, float]:
    """Max error over all rows of the cell temperatures and of the face-0 surface, K."""
    x = (np.arange(n_cells) + 0.5) * L / n_cells
    settings = ReferenceSettings(n_cells=n_cells, dt_max_s=dt)
    start = field(x, 0.0)[0]
    r = simulate_forced(
        smooth_table(), L, start, [Phase(T_END, FACE0, FACE1)], None, settings, forcing
    )
    exact = field(r.x_m[None, :], r.t_s[:, None])[0]
    cells = float(np.max(np.abs(r.temp_c - exact)))
    surface = float(np.max(np.abs(r.surface_c[:, 0] - field(0.0, r.t_s)[0])))
    return cells, surface


def slope(h, err) -> float:
    return float(np.polyfit(np.log(h), np.log(err), 1)[0])


def test_manufactured_solution_is_consistent() -> None:
    # The forcing hook must matter: without the source the solution departs from T(x, t)
    # by far more than the discretisation errors below (guards against a vacuous test).
    x = (np.arange(40) + 0.5) * L / 40
    r = simulate_forced(
        smooth_table(),
        L,
        field(x, 0.0)[0],
        [Phase(T_END, FACE0, FACE1)],
        None,
        ReferenceSettings(n_cells=40, dt_max_s=0.05),
        None,
    )
    assert np.max(np.abs(r.temp_c[-1] - field(r.x_m, T_END)[0])) > 0.5


def test_second_order_in_space() -> None:
    # Roache 1998 / Salari and Knupp 2000 (SAND2000-1444): observed order from 4 meshes,
    # time step small enough that the temporal error is negligible (< 1e-6 K).
    cells = [20, 40, 80, 160]
    res = [errors(n, 0.01) for n in cells]
    h = [L / n for n in cells]
    s_cells = slope(h, [r[0] for r in res])
    s_surface = slope(h, [r[1] for r in res])
    assert 1.8 <= s_cells <= 2.3, (s_cells, res)
    assert 1.8 <= s_surface <= 2.3, (s_surface, res)
    assert res[-1][0] < 1e-3  # 160 cells over 10 mm: max error 0.24 mK measured


def test_second_order_in_time() -> None:
    # Roache 1998: observed order from 4 time steps on a 400-cell mesh whose spatial error
    # (about 4e-5 K) is a few per cent of the temporal error at the finest step.
    steps = [0.4, 0.2, 0.1, 0.05]
    res = [errors(400, dt) for dt in steps]
    s_cells = slope(steps, [r[0] for r in res])
    s_surface = slope(steps, [r[1] for r in res])
    assert 1.8 <= s_cells <= 2.3, (s_cells, res)
    assert 1.8 <= s_surface <= 2.3, (s_surface, res)
