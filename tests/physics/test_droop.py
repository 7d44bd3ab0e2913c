"""Plate droop after loading in the reference solver and the reduced model.

A heated surface that droops after a cold load is at ``t_inf_c - droop_k exp(-t/tau)`` at
cook time ``t`` (from loading, not from the phase start; obvert.thermal.boundary.FaceBC).

Sources
-------
* Independent solution: a vertex-centred finite-difference method-of-lines discretisation of
  the constant-property heat equation with Robin faces, written below, integrated by the
  variable-order BDF method of scipy.integrate.solve_ivp (Shampine, L. F. and Reichelt, M. W.,
  "The MATLAB ODE Suite", SIAM Journal on Scientific Computing 18(1), 1997; the method scipy
  implements, as its documentation states). It shares nothing with obvert.thermal except the
  material constants: nodal temperatures on a grid twice as fine as the cell-centred mesh,
  half-cell balances at the surface nodes, adaptive time steps to a 1e-9 relative tolerance.
* Comparison principle of the heat equation (Protter, M. H. and Weinberger, H. F., Maximum
  Principles in Differential Equations, Prentice-Hall, 1967, chapter 3; chapter from memory):
  colder surroundings at every instant give a temperature field that is nowhere warmer, and
  the log-linear lethality rate increases with temperature, so its integral cannot grow.
  The enthalpy form with k(T) > 0 and increasing E(T) keeps this property (from memory).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import scipy.sparse as sp
from scipy.integrate import solve_ivp

from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.food.table import constant_table
from obvert.thermal.boundary import FaceBC, Phase
from obvert.thermal.reference import ReferenceSettings, simulate
from obvert.thermal.spectral import SpectralModel, SpectralSettings, chebyshev_nodes

K, RHO, CP = 0.45, 1050.0, 3500.0  # W/m/K, kg/m^3, J/kg/K (lean-meat-like solid)
L = 0.01  # m
START_C = 5.0
PLATE = FaceBC(h=400.0, t_inf_c=180.0, droop_k=40.0, droop_tau_s=25.0)
PLATEN = FaceBC(h=300.0, t_inf_c=170.0, droop_k=20.0, droop_tau_s=15.0)
AIR = FaceBC(h=15.0, t_inf_c=25.0)
# The platen closes on face 1 after the flip: both faces droop, and phase 3 starts 42 s after
# loading, so a droop restarted at the phase start would be far off.
PHASES = [
    Phase(40.0, PLATE, AIR),
    Phase(2.0, AIR, AIR, flip_before=True),
    Phase(50.0, PLATE, PLATEN),
]
FD_INTERVALS = 800  # node spacing L/800: every reference cell centre (up to 400 cells) is a node
SAMPLE_S = 1.0
#: Task tolerance on every cell and surface temperature at every sample after loading (K);
#: measured 0.017 K (cells) and 0.027 K (surfaces), largest 1 s after a face changes, where
#: the profile is steepest. At t = 0 the reference surface is already in balance with the
#: plate while the finite-difference surface node starts at the food temperature.
TOL_K = 0.05


def fd_solution(phases: list[Phase], phase_time_droop: bool = False):
    """Nodal temperatures at every SAMPLE_S (rows) by finite differences and BDF."""
    n, dx, c = FD_INTERVALS, L / FD_INTERVALS, RHO * CP
    lap = sp.diags([np.ones(n), np.full(n + 1, -2.0), np.ones(n)], [-1, 0, 1], format="lil")
    lap[0, 1] = lap[n, n - 1] = 2.0  # half-cell balance at the surface nodes
    base = (K / (c * dx * dx)) * lap.tocsc()
    temp, t0 = np.full(n + 1, START_C), 0.0
    times, rows = [0.0], [temp.copy()]
    for ph in phases:
        if ph.flip_before:
            temp = temp[::-1].copy()
        g0, g1 = 2.0 * ph.face0.h / (c * dx), 2.0 * ph.face1.h / (c * dx)
        jac = (base - sp.diags([[g0] + [0.0] * (n - 1) + [g1]], [0])).tocsc()
        shift = t0 if phase_time_droop else 0.0

        def fun(t, y, ph=ph, jac=jac, g0=g0, g1=g1, shift=shift):
            out = jac @ y
            out[0] += g0 * ph.face0.t_inf_at(t - shift)
            out[-1] += g1 * ph.face1.t_inf_at(t - shift)
            return out

        t1 = t0 + ph.duration_s
        n_samples = round(ph.duration_s / SAMPLE_S)
        t_eval = t0 + SAMPLE_S * np.arange(1, n_samples + 1)
        sol = solve_ivp(fun, (t0, t1), temp, "BDF", t_eval=t_eval, rtol=1e-9, atol=1e-9, jac=jac)
        assert sol.success, sol.message
        times.extend(sol.t)
        rows.extend(sol.y.T)
        temp, t0 = sol.y[:, -1], t1
    return np.array(times), np.array(rows)


def _errors(table, settings: ReferenceSettings, times: np.ndarray, fd: np.ndarray) -> float:
    """Largest |reference - finite differences| over cells and surfaces for t > 0, K."""
    ref = simulate(table, L, START_C, PHASES, settings=settings)
    rows = np.searchsorted(ref.t_s, times - 1e-9)
    np.testing.assert_allclose(ref.t_s[rows], times, atol=1e-9)
    stride = FD_INTERVALS // settings.n_cells
    centres = fd[:, stride // 2 :: stride]  # nodes at the cell centres (i + 1/2) L / n
    assert centres.shape == ref.temp_c[rows].shape
    err_cells = np.abs(ref.temp_c[rows] - centres)[1:].max()
    err_surf = np.abs(ref.surface_c[rows] - fd[:, [0, -1]])[1:].max()
    return max(err_cells, err_surf)


def test_drooping_plate_and_platen_match_finite_difference_solution() -> None:
    table = constant_table("lean-meat-like solid", K, RHO, CP)
    times, fd = fd_solution(PHASES)
    assert times[-1] == 92.0 and times.size == 93
    err = _errors(table, ReferenceSettings(), times, fd)
    assert err < TOL_K, err
    # The difference is discretisation error: halving the cell size and the step cuts it by
    # more than 3 (second order would give 4; measured 3.5, 0.027 -> 0.0079 K).
    fine = _errors(table, ReferenceSettings(n_cells=400, dt_max_s=0.025), times, fd)
    assert fine < err / 3.0, (err, fine)
    # The droop is resolved, not negligible: without it, or restarted at each phase start
    # (phase time instead of cook time), the field differs by far more than the tolerance.
    no_droop = [
        Phase(
            p.duration_s,
            FaceBC(p.face0.h, p.face0.t_inf_c),
            FaceBC(p.face1.h, p.face1.t_inf_c),
            p.flip_before,
        )
        for p in PHASES
    ]
    for other in (fd_solution(PHASES, phase_time_droop=True)[1], fd_solution(no_droop)[1]):
        assert np.abs(other - fd).max() > 20.0 * TOL_K


def patty_table():
    # Ground beef about 80 % lean (USDA composition as summarised in REFERENCES.md; water
    # from memory), Choi and Okos (1986) property model (obvert.food.choi_okos).
    return composition_table(Composition(water=0.62, protein=0.172, fat=0.20, ash=0.008), "beef")


def test_colder_or_drooping_plate_never_gives_more_lethality() -> None:
    # Frozen patty, 10 mm, one flip; kinetics of the order of the USDA FSIS Appendix A
    # 7-log fit (D = 60 s at 60 degC, z = 5.6 K; illustrative, not a certified value).
    table, kinetics = patty_table(), LethalityModel(d_ref_s=60.0, t_ref_c=60.0, z_k=5.6)
    air = FaceBC(h=15.0, t_inf_c=25.0, emissivity=0.9)
    settings = ReferenceSettings(n_cells=100, dt_max_s=0.1)

    def min_lr(plate: FaceBC) -> float:
        phases = [Phase(120.0, plate, air), Phase(2.0, air, air, True), Phase(120.0, plate, air)]
        r = simulate(table, 0.010, -18.0, phases, kinetics, settings)
        return float(r.log_reduction[-1].min())

    # Ordered from warmest to coldest plate at every instant.
    plates = [
        FaceBC(400.0, 190.0),
        FaceBC(400.0, 190.0, droop_k=15.0, droop_tau_s=20.0),
        FaceBC(400.0, 190.0, droop_k=15.0, droop_tau_s=60.0),
        FaceBC(400.0, 190.0, droop_k=40.0, droop_tau_s=60.0),
        FaceBC(400.0, 190.0, droop_k=40.0, droop_tau_s=60.0).steady(),
        FaceBC(400.0, 140.0),
    ]
    lrs = [min_lr(p) for p in plates]  # measured 15.7, 12.4, 6.75, 1.58, 0.0030, 0.00034
    assert lrs[0] > 1.0  # the cook really kills: the ordering is not between zeros
    assert all(b <= a for a, b in zip(lrs, lrs[1:], strict=False)), lrs
    assert lrs[0] - lrs[3] > 0.05 * lrs[0]  # a 40 K droop costs lethality visibly


def _spectral_history(start_of: Callable[[float], float]) -> np.ndarray:
    """16-node reduced model on PHASES at the finite-difference sample times; node
    temperatures (degC, rows), the droop clock of each phase set by ``start_of``."""
    table = constant_table("lean-meat-like solid", K, RHO, CP)
    kinetics = LethalityModel(d_ref_s=60.0, t_ref_c=60.0, z_k=5.6)
    model = SpectralModel(table, L, kinetics, SpectralSettings(16, lethality_points=0))
    x, start, rows = model.initial_state(START_C), 0.0, []
    for ph in PHASES:
        if ph.flip_before:
            x = np.array(model.flip(x)).ravel()
        fr = SAMPLE_S * np.arange(1, round(ph.duration_s / SAMPLE_S) + 1) / ph.duration_s
        traj = np.array(model.trajectory(ph.face0, ph.face1, fr)(x, ph.duration_s, start_of(start)))
        rows.append(np.array(model.temp_of(traj[: model.n].T.reshape(1, -1))).reshape(-1, model.n))
        x, start = traj[:, -1], start + ph.duration_s
    return np.vstack(rows)


def test_reduced_model_follows_the_droop_in_cook_time() -> None:
    """The reduced model's trajectory (what the planner simulates for its starting guesses
    and the scales of its variables) follows a drooping plate and platen on cook time, like
    the collocation and the reference: at its 16 nodes it matches the independent
    finite-difference solution within 0.15 K at every sample (measured 0.080 K, largest
    just after a face changes; 0.014 K from 3 s after). Restarting the droop at each phase
    start is off by more than 20 times the reference tolerance."""
    times, fd = fd_solution(PHASES)
    x_fd = np.linspace(0.0, L, FD_INTERVALS + 1)
    x_nodes = chebyshev_nodes(16, L)
    exact = np.array([np.interp(x_nodes, x_fd, row) for row in fd[1:]])
    assert np.abs(_spectral_history(lambda start: start) - exact).max() < 0.15
    restarted = _spectral_history(lambda _start: 0.0)
    assert np.abs(restarted - exact).max() > 20.0 * TOL_K
