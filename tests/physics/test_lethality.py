"""Log-linear lethality and organism presets vs published time-temperature tables and D values.

Sources
-------
FSIS_1999
    USDA FSIS (1999), "Appendix A: Compliance Guidelines for Meeting Lethality Performance
    Standards for Certain Meat and Poultry Products", time-temperature table for cooked beef,
    6.5-log and 7-log Salmonella columns (temperatures printed in degF; converted exactly).
FOOD_CODE
    US FDA Food Code, section 3-401.11(A)(2), comminuted meat: 2013 edition 145 degF 3 min,
    150 degF 1 min, 155 degF 15 s, 158 degF < 1 s; 2017 edition 3 min, 1 min, 17 s,
    instantaneous.
JUNEJA_1997
    Juneja, V. K., Snyder, O. P. and Marmer, B. S. (1997), Int. J. Food Microbiol. 35:231,
    E. coli O157:H7 in 90 % lean beef: D 55 degC 21.13, 57.5 degC 4.95, 60 degC 3.17,
    62.5 degC 0.93, 65 degC 0.39 min; z 6.0 degC.
LINE_1991
    Line, J. E. et al. (1991), J. Food Prot. 54:762, E. coli O157:H7 in beef of 2 % and 30.5 %
    fat: D 51.7 degC 78.2/115.5, 57.2 degC 4.1/5.3, 62.8 degC 0.3/0.5 min; z about 4.6 degC.
GOODFELLOW_1978
    Goodfellow, S. J. and Brown, W. L. (1978), J. Food Prot. 41:598, Salmonella in ground
    beef: D 51.6 degC 61-62, 57.2 degC 3.8-4.2, 62.7 degC 0.6-0.7 min.

Hold times are found by integrating the model's rate over time with scipy.integrate.quad
(a general-purpose reference integrator) and solving for the time that reaches the target,
never from the closed form.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.stats import linregress

from obvert.food.lethality import LethalityModel, log_reduction
from obvert.food.presets import PRESETS, preset


def f_to_c(f: float) -> float:
    return (f - 32.0) / 1.8


# FSIS_1999 cooked-beef rows: degF -> (6.5-log s, 7-log s); the 158 degF row (0 s) apart.
FSIS_ROWS = {
    130: (112 * 60.0, 121 * 60.0),
    135: (36 * 60.0, 37 * 60.0),
    140: (12 * 60.0, 12 * 60.0),
    145: (4 * 60.0, 4 * 60.0),
    150: (67.0, 72.0),
    155: (22.0, 23.0),
    157: (14.0, 15.0),
}
# FOOD_CODE rows: degF -> (2013 s, 2017 s, half-unit of the printed precision, s).
FOOD_CODE_ROWS = {145: (180.0, 180.0, 30.0), 150: (60.0, 60.0, 30.0), 155: (15.0, 17.0, 0.5)}

# Half a printed unit at the coarsest FSIS_1999 rows is 0.5 min in 4 min (12.5 %); the
# 6.5/7-log columns also depart from exact log-linear proportionality (7/6.5 = 1.077) by a
# few per cent. Tolerance on every FSIS row: 15 %.
FSIS_TOL = 0.15
# Published D values scatter about any straight line in log10(D): JUNEJA_1997's own five
# values depart from the line of their published z by up to a factor 1.38 (57.5 degC).
# Band for every preset D check: a factor 1.5.
D_FACTOR = 1.5


def quad_hold_time(model: LethalityModel, temp_c: float, log_red: float) -> float:
    """Time (s) at constant ``temp_c`` for which the quadrature of the rate reaches ``log_red``."""

    def accumulated(t_end: float) -> float:
        return quad(lambda _t: float(model.rate(temp_c)), 0.0, t_end)[0] - log_red

    return brentq(accumulated, 1e-6, 1e6, xtol=1e-9, rtol=1e-12)


@pytest.fixture(scope="module")
def salmonella():
    return preset("salmonella_beef_7log").model()


@pytest.mark.parametrize("deg_f", sorted(FSIS_ROWS))
def test_fsis_7log_rows_reproduced(salmonella, deg_f):
    """FSIS_1999 7-log Salmonella column, each row 54.4-69.4 degC, within FSIS_TOL."""
    t_hold = quad_hold_time(salmonella, f_to_c(deg_f), 7.0)
    assert abs(t_hold / FSIS_ROWS[deg_f][1] - 1.0) < FSIS_TOL, t_hold


@pytest.mark.parametrize("deg_f", sorted(FSIS_ROWS))
def test_fsis_65log_rows_from_7log_kinetics(salmonella, deg_f):
    """FSIS_1999 6.5-log column, not used in the fit, predicted by the 7-log-fitted kinetics
    with a 6.5-log target, within FSIS_TOL."""
    t_hold = quad_hold_time(salmonella, f_to_c(deg_f), 6.5)
    assert abs(t_hold / FSIS_ROWS[deg_f][0] - 1.0) < FSIS_TOL, t_hold


def test_fsis_zero_second_row_bounded(salmonella):
    """FSIS_1999 158 degF row reads 0 s: the table counts lethality gained while heating up,
    which no log-linear hold model can represent. The model must still be monotone and
    conservative there: a positive hold shorter than its own 157 degF hold and than the
    table's 15 s at 157 degF."""
    t158 = quad_hold_time(salmonella, f_to_c(158), 7.0)
    t157 = quad_hold_time(salmonella, f_to_c(157), 7.0)
    assert 0.0 < t158 < t157 < FSIS_ROWS[157][1] * (1 + FSIS_TOL)


@pytest.mark.xfail(
    strict=True,
    reason="Log-linear fit needs about 12 s at 70 degC for 7 log (8 s for 5 log), not the "
    "0 s / < 1 s / instantaneous of the tables; not met.",
)
@pytest.mark.parametrize("log_red", [7.0, 5.0])
def test_zero_second_rows_within_a_few_seconds(salmonella, log_red):
    """FSIS_1999 158 degF 0 s and FOOD_CODE 158 degF (< 1 s 2013, instantaneous 2017): target
    a hold below 3 s."""
    assert quad_hold_time(salmonella, f_to_c(158), log_red) < 3.0


@pytest.mark.parametrize("deg_f", sorted(FOOD_CODE_ROWS))
@pytest.mark.parametrize("edition", [2013, 2017])
def test_food_code_rows_at_5log(salmonella, deg_f, edition):
    """FOOD_CODE comminuted-meat rows reproduced by the Salmonella kinetics with a 5-log
    target (the basis of the code's comminuted-meat times: from memory). The printed times
    are the code's requirements, taken as exact; tolerance per row 15 % (the 2013 -> 2017
    change at 155 degF, 13 %, shows the code's own rounding). Measured: -8 %, -13 %, +11 %
    (2013) / -2 % (2017) at 145, 150, 155 degF."""
    t2013, t2017, _half_unit = FOOD_CODE_ROWS[deg_f]
    code = t2013 if edition == 2013 else t2017
    t_hold = quad_hold_time(salmonella, f_to_c(deg_f), 5.0)
    assert abs(t_hold / code - 1.0) < 0.15, t_hold


@pytest.mark.parametrize("deg_f", sorted(FOOD_CODE_ROWS))
def test_fsis_7log_kinetics_meet_food_code(salmonella, deg_f):
    """A hold meeting the 7-log kinetics (FSIS_1999 fit) also meets both FOOD_CODE editions:
    the model hold is not shorter than either printed time."""
    t_hold = quad_hold_time(salmonella, f_to_c(deg_f), 7.0)
    assert t_hold >= max(FOOD_CODE_ROWS[deg_f][:2])


def _fit(temps_c, seconds):
    """Least-squares line log10(seconds) = a + b*(T - 60): returns (value at 60 degC, z)."""
    fit = linregress(np.asarray(temps_c) - 60.0, np.log10(seconds))
    return 10.0**fit.intercept, -1.0 / fit.slope


def test_fsis_preset_is_the_fit_it_states():
    """The salmonella_beef_7log preset states a derived least-squares fit to the FSIS_1999
    7-log column; the fit redone here agrees to the preset's printed digits (0.1 %)."""
    d60, z = _fit([f_to_c(f) for f in FSIS_ROWS], [v[1] / 7.0 for v in FSIS_ROWS.values()])
    p = preset("salmonella_beef_7log")
    assert p.t_ref_c == 60.0 and p.target_log_reduction == 7.0
    assert p.d_ref_s == pytest.approx(d60, rel=1e-3) and p.z_k == pytest.approx(z, abs=1e-3)
    assert "derived fit" in p.source.lower()
    # Project references: "D(60 degC) about 1.7 min and z about 5.6 degC (derived)".
    assert abs(d60 / 60.0 - 1.7) < 0.05 and abs(z - 5.6) < 0.05


JUNEJA_T = [55.0, 57.5, 60.0, 62.5, 65.0]
JUNEJA_D = [21.13, 4.95, 3.17, 0.93, 0.39]
LINE_T = [51.7, 57.2, 62.8]
LINE_D = {
    "ecoli_o157_beef_2pct_fat": [78.2, 4.1, 0.3],
    "ecoli_o157_beef_30pct_fat": [115.5, 5.3, 0.5],
}
GOODFELLOW_T = [51.6, 57.2, 62.7]
GOODFELLOW_D = [61.5, 4.0, 0.65]  # mid-points of the published ranges

PUBLISHED_D = {
    "ecoli_o157_lean_beef": (JUNEJA_T, JUNEJA_D),
    "ecoli_o157_beef_2pct_fat": (LINE_T, LINE_D["ecoli_o157_beef_2pct_fat"]),
    "ecoli_o157_beef_30pct_fat": (LINE_T, LINE_D["ecoli_o157_beef_30pct_fat"]),
    "salmonella_ground_beef": (GOODFELLOW_T, GOODFELLOW_D),
}


@pytest.mark.parametrize("name", sorted(PUBLISHED_D))
def test_preset_reproduces_published_d_values(name):
    """Each study preset's D at every published temperature (JUNEJA_1997, LINE_1991,
    GOODFELLOW_1978) within a factor D_FACTOR; D is read from the model's rate (1/rate)."""
    model = preset(name).model()
    temps, d_min = PUBLISHED_D[name]
    for t, d in zip(temps, d_min, strict=True):
        ratio = (1.0 / float(model.rate(t))) / (60.0 * d)
        assert 1.0 / D_FACTOR < ratio < D_FACTOR, (name, t, ratio)


def test_juneja_preset_uses_published_z_and_fitted_d():
    """JUNEJA_1997: the preset keeps the published z (6.0 degC) and a D(60 degC) fitted at that
    z, redone here (0.1 %); the free fit of the published D values gives z within 0.1 degC of
    the published value (printed to 0.1 degC)."""
    p = preset("ecoli_o157_lean_beef")
    assert p.z_k == 6.0
    d60 = 10.0 ** np.mean(np.log10(np.array(JUNEJA_D) * 60.0) + (np.array(JUNEJA_T) - 60.0) / 6.0)
    assert p.d_ref_s == pytest.approx(d60, rel=1e-3)
    _, z_free = _fit(JUNEJA_T, np.array(JUNEJA_D) * 60.0)
    assert abs(z_free - 6.0) < 0.1


@pytest.mark.parametrize(
    ("name", "temps", "d_min", "z_pub", "z_tol"),
    [
        ("ecoli_o157_beef_2pct_fat", LINE_T, LINE_D["ecoli_o157_beef_2pct_fat"], 4.6, 0.2),
        ("ecoli_o157_beef_30pct_fat", LINE_T, LINE_D["ecoli_o157_beef_30pct_fat"], 4.6, 0.2),
        ("salmonella_ground_beef", GOODFELLOW_T, GOODFELLOW_D, 5.6, 0.1),
    ],
)
def test_fitted_presets_are_the_fits_they_state(name, temps, d_min, z_pub, z_tol):
    """LINE_1991 (z "about 4.6": 0.2 degC) and GOODFELLOW_1978 (z about 5.6 derived, project
    references: 0.1 degC): the least-squares fit redone here matches the preset to its printed
    digits and the quoted z."""
    d60, z = _fit(temps, np.array(d_min) * 60.0)
    p = preset(name)
    assert p.d_ref_s == pytest.approx(d60, rel=1e-3)
    assert p.z_k == pytest.approx(z, abs=6e-3)
    assert abs(z - z_pub) < z_tol
    assert "derived fit" in p.source.lower()


def test_two_salmonella_data_sets_agree():
    """FSIS_1999 (7-log column fit) and GOODFELLOW_1978 (D values) are independent published
    Salmonella-in-beef data; their kinetics agree within the D_FACTOR band and 0.5 degC in z."""
    a, b = preset("salmonella_beef_7log"), preset("salmonella_ground_beef")
    assert 1.0 / D_FACTOR < a.d_ref_s / b.d_ref_s < D_FACTOR
    assert abs(a.z_k - b.z_k) < 0.5


def test_every_preset_cites_its_source():
    """Every preset names its published source (an author-year or agency-year citation)."""
    for p in PRESETS.values():
        assert any(str(y) in p.source for y in (1978, 1991, 1997, 1999)), p.source
        assert p.d_ref_s > 0.0 and p.z_k > 0.0 and p.target_log_reduction > 0.0


def test_log_reduction_of_a_ramp_matches_quadrature(salmonella):
    """Trapezoid log_reduction of a sampled come-up (20 -> 72 degC in 240 s, then 30 s hold)
    vs scipy.integrate.quad of the rate along the exact profile, and vs the closed form of
    the exponential ramp integral (textbook): within 0.1 %."""

    def temp(t: float) -> float:
        return 20.0 + 52.0 * min(t, 240.0) / 240.0

    times = np.linspace(0.0, 270.0, 2701)
    lr = log_reduction(salmonella, times, [temp(t) for t in times])
    ref = quad(lambda t: float(salmonella.rate(temp(t))), 0.0, 270.0, points=[240.0])[0]
    z, d = salmonella.z_k, salmonella.d_ref_s
    rate_at = [10.0 ** ((x - 60.0) / z) / d for x in (20.0, 72.0)]
    ramp = (rate_at[1] - rate_at[0]) * 240.0 / 52.0 * z / math.log(10.0)
    closed = ramp + 30.0 * rate_at[1]
    assert lr == pytest.approx(ref, rel=1e-3) and ref == pytest.approx(closed, rel=1e-6)
