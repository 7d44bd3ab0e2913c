"""Interface, input checks, flips, energy balance and lethality of the reference solver."""

from __future__ import annotations

import math

import numpy as np
import pytest

from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.food.table import constant_table
from obvert.thermal.boundary import STEFAN_BOLTZMANN, FaceBC, Phase
from obvert.thermal.reference import (
    EarlyEnd,
    ReferenceResult,
    ReferenceSettings,
    face_flux,
    food_frame,
    simulate,
    simulate_minima,
)

TABLE = constant_table("lean-meat-like solid", 0.45, 1050.0, 3500.0)
PLATE = FaceBC(h=400.0, t_inf_c=180.0)
AIR = FaceBC(h=15.0, t_inf_c=25.0, emissivity=0.9)
COARSE = ReferenceSettings(n_cells=40, dt_max_s=0.1)
# Illustrative kinetics (D = 60 s at 60 degC, z = 5.6 K; of the order of the USDA FSIS
# Appendix A 7-log fit quoted in REFERENCES.md, not a certified value).
KINETICS = LethalityModel(d_ref_s=60.0, t_ref_c=60.0, z_k=5.6)


def run(phases, start=5.0, settings=COARSE, lethality=None, table=TABLE, thickness=0.01):
    return simulate(table, thickness, start, phases, lethality, settings)


# ----------------------------------------------------------------------------- input checks


def test_negative_duration_is_rejected_with_field_and_value() -> None:
    with pytest.raises(ValueError, match=r"phases\[1\]\.duration_s = -1\.0 .*>= 0"):
        run([Phase(10.0, PLATE, AIR), Phase(-1.0, PLATE, AIR)])


def test_non_finite_duration_is_rejected() -> None:
    with pytest.raises(ValueError, match=r"phases\[0\]\.duration_s = inf"):
        run([Phase(math.inf, PLATE, AIR)])


@pytest.mark.parametrize("thickness", [0.0, -0.01, math.nan])
def test_bad_thickness_is_rejected(thickness: float) -> None:
    with pytest.raises(ValueError, match=r"thickness_m = .* must be finite > 0 m"):
        run([Phase(1.0, PLATE, AIR)], thickness=thickness)


def test_start_temperature_outside_table_is_rejected() -> None:
    with pytest.raises(ValueError, match=r"start_temp_c = -50\.0 .*\[-40\.0, 300\.0\]"):
        run([Phase(1.0, PLATE, AIR)], start=-50.0)


def test_start_profile_outside_table_names_the_cell() -> None:
    start = np.full(40, 5.0)
    start[3] = 400.0
    with pytest.raises(ValueError, match=r"start_temp_c\[3\] = 400\.0"):
        run([Phase(1.0, PLATE, AIR)], start=start)


def test_start_profile_of_wrong_length_is_rejected() -> None:
    with pytest.raises(ValueError, match=r"start_temp_c\.shape = \(39,\)"):
        run([Phase(1.0, PLATE, AIR)], start=np.full(39, 5.0))


@pytest.mark.parametrize(
    ("face", "pattern"),
    [
        (FaceBC(-1.0, 25.0), r"phases\[0\]\.face1\.h = -1\.0"),
        (FaceBC(10.0, 350.0), r"phases\[0\]\.face1\.t_inf_c = 350\.0"),
        (FaceBC(10.0, 25.0, 1.5), r"phases\[0\]\.face1\.emissivity = 1\.5"),
    ],
)
def test_bad_face_is_rejected(face: FaceBC, pattern: str) -> None:
    with pytest.raises(ValueError, match=pattern):
        run([Phase(1.0, PLATE, face)])


def test_empty_cook_is_rejected() -> None:
    with pytest.raises(ValueError, match=r"phases = \[\]"):
        run([])


@pytest.mark.parametrize(
    ("kwargs", "pattern"),
    [
        ({"n_cells": 1}, r"n_cells = 1"),
        ({"n_cells": 20.0}, r"n_cells = 20\.0"),
        ({"dt_max_s": 0.0}, r"dt_max_s = 0\.0"),
        ({"newton_tol_k": -1e-9}, r"newton_tol_k = -1e-09"),
    ],
)
def test_bad_settings_are_rejected(kwargs: dict, pattern: str) -> None:
    with pytest.raises(ValueError, match=pattern):
        ReferenceSettings(**kwargs)


# --------------------------------------------------------------------- rows and time steps


def test_rows_steps_and_phase_boundaries() -> None:
    # n = ceil(duration/dt_max) equal steps per phase; a zero phase adds no row.
    phases = [Phase(1.0, PLATE, AIR), Phase(0.0, AIR, AIR), Phase(0.25, AIR, PLATE)]
    r = run(phases)
    assert isinstance(r, ReferenceResult)
    assert r.t_s.shape == (10 + 3 + 1,)
    assert r.temp_c.shape == r.log_reduction.shape == (14, 40)
    assert r.surface_c.shape == (14, 2)
    np.testing.assert_allclose(r.t_s[:11], np.linspace(0.0, 1.0, 11), atol=1e-12)
    np.testing.assert_allclose(r.t_s[10:], [1.0, 1.0 + 1 / 12, 1.0 + 2 / 12, 1.25], atol=1e-12)
    assert r.t_s[10] == 1.0 and r.t_s[-1] == 1.25  # events exactly on step ends
    assert list(r.phase_index) == [0] * 11 + [2] * 3
    np.testing.assert_allclose(r.x_m, (np.arange(40) + 0.5) * 0.01 / 40)
    assert np.all(r.log_reduction == 0.0)  # no lethality model
    assert np.all(r.temp_c[0] == 5.0)


def test_90_second_phase_is_exactly_1800_default_steps() -> None:
    # 90/0.05 is 1800.0000000000002 in floating point: must not become 1801 steps.
    r = run([Phase(90.0, AIR, AIR)], settings=ReferenceSettings(n_cells=4))
    assert r.t_s.size == 1801


def test_runs_are_deterministic() -> None:
    phases = [Phase(20.0, PLATE, AIR), Phase(5.0, AIR, PLATE, flip_before=True)]
    a = run(phases, lethality=KINETICS)
    b = run(phases, lethality=KINETICS)
    assert np.array_equal(a.temp_c, b.temp_c) and np.array_equal(a.log_reduction, b.log_reduction)


def test_surface_temperatures_lie_between_food_and_surroundings() -> None:
    r = run([Phase(30.0, PLATE, AIR)])
    assert np.all(r.surface_c[1:, 0] > r.temp_c[1:, 0]) and np.all(r.surface_c[:, 0] < 180.0)
    assert np.all(r.surface_c[1:, 1] > 5.0) and np.all(r.surface_c[:, 1] < 25.0)


# ----------------------------------------------------------------------------------- flips


def test_flip_mirrors_temperature_and_lethality() -> None:
    # A flip before phase 2 must equal, mirrored, the same cook without a flip where the
    # plate simply moves to face 1. The start profile is asymmetric so a missing or wrong
    # mirroring cannot pass.
    start = np.linspace(0.0, 40.0, 40)
    flipped = run(
        [Phase(30.0, PLATE, AIR), Phase(20.0, PLATE, AIR, flip_before=True)],
        start=start,
        lethality=KINETICS,
    )
    fixed = run([Phase(30.0, PLATE, AIR), Phase(20.0, AIR, PLATE)], start=start, lethality=KINETICS)
    second = flipped.phase_index == 1
    assert np.all(flipped.mirrored == second) and not np.any(fixed.mirrored)
    np.testing.assert_allclose(flipped.temp_c[second], fixed.temp_c[second][:, ::-1], atol=1e-6)
    np.testing.assert_allclose(
        flipped.surface_c[second], fixed.surface_c[second][:, ::-1], atol=1e-6
    )
    lr_fixed = fixed.log_reduction[second][:, ::-1]
    assert lr_fixed.max() > 1e-3  # lethality really accumulates in this cook
    np.testing.assert_allclose(flipped.log_reduction[second], lr_fixed, rtol=1e-6, atol=1e-12)
    temp, lr = food_frame(flipped)
    np.testing.assert_allclose(temp, fixed.temp_c, atol=1e-6)
    np.testing.assert_allclose(lr, fixed.log_reduction, rtol=1e-6, atol=1e-12)
    assert not np.allclose(flipped.temp_c[second], fixed.temp_c[second], atol=0.1)


def test_two_flips_cancel_and_zero_phase_flip_applies() -> None:
    start = np.linspace(0.0, 40.0, 40)
    plain = run([Phase(10.0, PLATE, AIR), Phase(10.0, PLATE, AIR)], start=start)
    double = run(
        [
            Phase(10.0, PLATE, AIR),
            Phase(0.0, AIR, AIR, flip_before=True),
            Phase(10.0, PLATE, AIR, flip_before=True),
        ],
        start=start,
    )
    assert double.t_s.size == plain.t_s.size and not np.any(double.mirrored)
    np.testing.assert_allclose(double.temp_c, plain.temp_c, atol=1e-6)


def test_flip_before_the_first_phase_mirrors_row_zero() -> None:
    start = np.linspace(0.0, 40.0, 40)
    r = run([Phase(1.0, PLATE, AIR, flip_before=True)], start=start)
    assert np.all(r.mirrored)
    np.testing.assert_allclose(r.temp_c[0], start[::-1], atol=1e-9)
    np.testing.assert_allclose(food_frame(r)[0][0], start, atol=1e-9)


def test_symmetric_cook_stays_symmetric() -> None:
    # Same contact on both faces and a uniform start: the profile is an even function.
    r = run([Phase(20.0, PLATE, PLATE), Phase(5.0, AIR, AIR, flip_before=True)])
    np.testing.assert_allclose(r.temp_c, r.temp_c[:, ::-1], atol=1e-7)
    assert r.temp_c[-1].max() - r.temp_c[-1].min() > 10.0  # not trivially uniform


# ------------------------------------------------------------------------ energy balance


def test_face_flux_formula() -> None:
    # Heat flux into the food: h (T_inf - T_s) + eps sigma (T_inf^4 - T_s^4), kelvin.
    expected = 15.0 * (25.0 - 60.0) + 0.9 * STEFAN_BOLTZMANN * (298.15**4 - 333.15**4)
    assert float(face_flux(AIR, 60.0)) == pytest.approx(expected, rel=1e-14)


def test_energy_balance_through_thawing() -> None:
    # First law: the change of total enthalpy equals the time integral of the heat flux
    # through both faces (trapezoid rule on the stored surface temperatures, second order).
    # A frozen beef-like slab (Choi and Okos 1986 properties, obvert.food.choi_okos) thaws
    # on a plate with radiation and convection to the air above.
    table = composition_table(Composition(water=0.62, protein=0.172, fat=0.20, ash=0.008), "beef")
    r = run(
        [Phase(60.0, PLATE, AIR)],
        start=-18.0,
        settings=ReferenceSettings(),
        table=table,
        thickness=0.012,
    )
    dx = 0.012 / r.x_m.size
    stored = dx * (table.enthalpy(r.temp_c[-1]) - table.enthalpy(r.temp_c[0])).sum()
    q = face_flux(PLATE, r.surface_c[:, 0]) + face_flux(AIR, r.surface_c[:, 1])
    supplied = float(np.sum(0.5 * (q[1:] + q[:-1]) * np.diff(r.t_s)))
    assert stored > 1e5  # J/m^2: a substantial heat load, including latent heat
    assert abs(stored - supplied) < 1e-4 * stored, (stored, supplied)


# ------------------------------------------------------------------------------- lethality


def test_lethality_at_constant_temperature_is_rate_times_time() -> None:
    # LR = integral of 10**((T - T_ref)/z)/D_ref dt (obvert.food.lethality, log-linear
    # kinetics): an insulated slab at 65 degC keeps its temperature, so LR = t * rate(65).
    insulated = FaceBC(h=0.0, t_inf_c=65.0)
    r = run([Phase(12.0, insulated, insulated)], start=65.0, lethality=KINETICS)
    np.testing.assert_allclose(r.temp_c, 65.0, atol=1e-9)
    expected = r.t_s[:, None] * float(KINETICS.rate(65.0))
    np.testing.assert_allclose(
        r.log_reduction, np.broadcast_to(expected, r.temp_c.shape), rtol=1e-9
    )


def test_huge_steps_on_a_thin_frozen_slab_converge_within_physical_bounds() -> None:
    # 10 s steps (200 times the default) on 1000 cells across 4 mm of frozen beef make
    # Newton cycle at the thawing front; the solver must recover (step halving) and keep
    # the maximum principle of the heat equation (e.g. Evans, Partial Differential
    # Equations, 2nd ed., AMS 2010, chapter 2; section from memory): no temperature outside
    # [start, plate].
    table = composition_table(Composition(water=0.62, protein=0.172, fat=0.20, ash=0.008), "beef")
    hot = FaceBC(h=650.0, t_inf_c=230.0)
    r = run(
        [Phase(60.0, hot, AIR), Phase(3.0, AIR, AIR, True), Phase(120.0, hot, hot)],
        start=-18.0,
        settings=ReferenceSettings(n_cells=1000, dt_max_s=10.0),
        table=table,
        thickness=0.004,
    )
    assert r.t_s[-1] == 183.0
    assert r.temp_c.min() >= -18.0 - 1e-9 and r.temp_c.max() <= 230.0 + 1e-9
    assert r.temp_c[-1].min() > 200.0  # 4 mm between two 230 degC plates for 2 min


# ------------------------------------------------------------------------------ early end


def test_a_cook_ended_early_is_the_full_cook_cut_at_the_first_done_row() -> None:
    phases = [Phase(40.0, PLATE, AIR), Phase(400.0, PLATE, AIR, flip_before=True)]
    full = run(phases, lethality=KINETICS)
    end = EarlyEnd(after_s=60.0, log_reduction=3.0, temp_c=60.0)
    short = simulate(TABLE, 0.01, 5.0, phases, KINETICS, COARSE, end)
    lr, tmin = full.log_reduction.min(axis=1), full.temp_c.min(axis=1)
    done = np.flatnonzero((full.t_s >= 60.0) & (lr >= 3.0) & (tmin >= 60.0))
    assert done.size and done[0] < full.t_s.size - 10  # it ends well before the full cook
    k = int(done[0])
    assert short.t_s.size == k + 1
    for name in ("t_s", "temp_c", "log_reduction", "surface_c", "phase_index", "mirrored"):
        np.testing.assert_array_equal(getattr(short, name), getattr(full, name)[: k + 1])


def test_a_cook_that_never_gets_done_runs_to_its_end() -> None:
    phases = [Phase(30.0, PLATE, AIR)]
    full = run(phases, lethality=KINETICS)
    never = simulate(TABLE, 0.01, 5.0, phases, KINETICS, COARSE, EarlyEnd(0.0, 1e9))
    np.testing.assert_array_equal(never.temp_c, full.temp_c)


# ------------------------------------------------------------------------------ row minima


def test_row_minima_are_the_full_record_s_row_minima_bit_for_bit() -> None:
    # two flips (the record's frame changes) and a phase start at every flip
    phases = [
        Phase(25.0, PLATE, AIR),
        Phase(30.0, PLATE, AIR, flip_before=True),
        Phase(300.0, PLATE, AIR, flip_before=True),
    ]
    full = simulate(TABLE, 0.01, -5.0, phases, KINETICS, COARSE)
    rows = simulate_minima(TABLE, 0.01, -5.0, phases, KINETICS, COARSE)
    np.testing.assert_array_equal(rows.t_s, full.t_s)
    np.testing.assert_array_equal(rows.min_temp_c, full.temp_c.min(axis=1))
    np.testing.assert_array_equal(rows.min_log_reduction, full.log_reduction.min(axis=1))
    assert rows.min_log_reduction[-1] > 1.0  # the lethality really accumulated
    # and ended early, the same rows as the full record cut at its first done row
    end = EarlyEnd(after_s=60.0, log_reduction=3.0, temp_c=60.0)
    short = simulate_minima(TABLE, 0.01, -5.0, phases, KINETICS, COARSE, end)
    done = np.flatnonzero(
        (full.t_s >= 60.0) & (rows.min_log_reduction >= 3.0) & (rows.min_temp_c >= 60.0)
    )
    k = int(done[0])
    assert k < full.t_s.size - 10
    np.testing.assert_array_equal(short.t_s, full.t_s[: k + 1])
    np.testing.assert_array_equal(short.min_temp_c, rows.min_temp_c[: k + 1])


def test_row_minima_check_their_inputs_like_simulate() -> None:
    with pytest.raises(ValueError, match=r"thickness_m = -0\.01"):
        simulate_minima(TABLE, -0.01, 5.0, [Phase(10.0, PLATE, AIR)], None, COARSE)
