"""Food thermal properties from composition (Choi-Okos) and from measurements vs published data.

Sources
-------
HANDBOOK_T3
    ASHRAE Handbook - Refrigeration (2006), chapter 9 "Thermal properties of foods", Table 3
    (unfrozen composition data, initial freezing point and specific heats of foods), row
    "Beef, sirloin, lean": initial freezing point 28.9 degF (-1.7 degC), specific heat above
    freezing 0.84 and below freezing 0.50 Btu/(lb degF) (3.52 and 2.09 kJ/(kg K)), latent
    heat 103 Btu/lb (240 kJ/kg). Read from a secondary reproduction of the table in Btu units
    and converted here; not checked against a copy of the handbook itself.
CONDUCTIVITY_ERROR
    Baghe-Khandan, M. S. and Okos, M. R. (1981), "Effect of cooking on the thermal
    conductivity of whole and ground lean beef", J. Food Sci.: composition- and
    temperature-based models predicted the conductivity of beef with an average standard
    error of 7 %. Used as the tolerance band of every conductivity check below.
PAN_SINGH_2001
    Pan, Z. and Singh, R. P. (2001), "Physical and thermal properties of ground beef during
    cooking", LWT 34:437: patties of 23.8 % fat, raw (room temperature) and cooked in water
    baths at 40-75 degC; density 1006-1033 kg/m^3, conductivity 0.35-0.41 W/(m K).

The lean-beef composition is from memory (USDA-type proximate analysis of raw lean sirloin);
its water fraction 0.718 is the one for which the tabulated latent heat equals
x_w * 333.6 kJ/kg, which is how the handbook computes that column.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from obvert.food.choi_okos import (
    LATENT_HEAT_FUSION_J_PER_KG,
    Composition,
    composition_table,
    initial_freezing_point_c,
    properties_at,
)
from obvert.food.measured import latent_release_fraction, measured_table

LEAN_BEEF = Composition(water=0.718, protein=0.212, fat=0.058, ash=0.012)
# About 80 % lean ground beef: protein 17.2 %, fat 20 % (USDA composition data, as listed in
# the project references); water 62 % from memory; ash the remainder.
PATTY_20_FAT = Composition(water=0.62, protein=0.172, fat=0.20, ash=0.008)

HANDBOOK_TF_C = (28.9 - 32.0) / 1.8
HANDBOOK_CP_ABOVE = 0.84 * 4186.8
HANDBOOK_CP_BELOW = 0.50 * 4186.8
HANDBOOK_LATENT = 103.0 * 2326.0
K_ERR = 0.07  # CONDUCTIVITY_ERROR


@pytest.fixture(scope="module")
def lean_table():
    return composition_table(LEAN_BEEF, "lean beef", freezing_point_c=HANDBOOK_TF_C)


def _mass_enthalpy_change(table, t_lo: float, t_hi: float) -> float:
    """Specific enthalpy change (J/kg) from the table's cp_apparent by trapezoid."""
    mid = 0.5 * (table.cp_apparent[1:] + table.cp_apparent[:-1]) * np.diff(table.temp_c)
    cum = np.concatenate([[0.0], np.cumsum(mid)])
    lo, hi = np.interp([t_lo, t_hi], table.temp_c, cum)
    return float(hi - lo)


def test_unfrozen_specific_heat_vs_handbook(lean_table):
    """HANDBOOK_T3 cp above freezing 3.52 kJ/(kg K). The handbook column is itself computed
    from composition with the Choi-Okos component correlations (from memory), so only the
    composition (from memory) and rounding separate the two: 3 % tolerance."""
    cp = lean_table.cp_apparent[(lean_table.temp_c >= 0.0) & (lean_table.temp_c <= 20.0)]
    assert np.all(np.abs(cp / HANDBOOK_CP_ABOVE - 1.0) < 0.03), cp / HANDBOOK_CP_ABOVE


def test_frozen_specific_heat_vs_handbook(lean_table):
    """HANDBOOK_T3 cp below freezing 2.09 kJ/(kg K): sensible heat of the frozen food. At
    -40..-25 degC all freezable water is frozen in the model, so cp_apparent is sensible.
    The handbook uses a different frozen-food model (from memory) and our composition is from
    memory: 10 % tolerance."""
    sel = (lean_table.temp_c >= -40.0) & (lean_table.temp_c <= -25.0)
    cp = lean_table.cp_apparent[sel]
    assert np.all(np.abs(cp / HANDBOOK_CP_BELOW - 1.0) < 0.10), cp / HANDBOOK_CP_BELOW


def test_unfrozen_conductivity_vs_handbook_range():
    """Unfrozen lean beef 0.40-0.50 W/(m K) at chill to room temperature (ASHRAE Handbook -
    Refrigeration, thermal-conductivity table of foods, beef rows; range from memory),
    widened by the 7 % standard error of composition models (CONDUCTIVITY_ERROR)."""
    k = properties_at(LEAN_BEEF, np.array([0.0, 5.0, 10.0, 20.0]), HANDBOOK_TF_C).conductivity
    assert np.all((k >= 0.40 * (1 - K_ERR)) & (k <= 0.50 * (1 + K_ERR))), k


def test_frozen_conductivity_vs_handbook_range():
    """Frozen lean beef 1.2-1.4 W/(m K) at -10..-20 degC (ASHRAE Handbook - Refrigeration,
    thermal-conductivity table of foods, beef rows; range from memory), widened by 7 %
    (CONDUCTIVITY_ERROR), with the default conductivity model (parallel over the non-ice
    components, then Levy's model for ice: Carson et al. 2016, J. Food Eng. 175:65). The
    parallel model over every component gives about 1.7 W/(m K) here, above the range: it
    is an upper bound, and is checked to be one."""
    t = np.array([-20.0, -18.0, -15.0])
    k = properties_at(LEAN_BEEF, t, HANDBOOK_TF_C).conductivity
    assert np.all((k >= 1.2 * (1 - K_ERR)) & (k <= 1.4 * (1 + K_ERR))), k
    k_par = properties_at(LEAN_BEEF, t, HANDBOOK_TF_C, conductivity_model="parallel").conductivity
    assert np.all(k_par > 1.4 * (1 + K_ERR)), k_par


@pytest.mark.parametrize("water", [0.55, 0.62, 0.70, 0.718, 0.75, 0.80, 0.85])
def test_freezing_point_correlation_matches_a_second_print(water):
    """The same meat correlation as printed in a second form, depression 1.9 - 1.4*x_wo K
    (Handbook of Frozen Food Processing and Packaging, Taylor and Francis, 2006, as quoted
    in a secondary source; not checked against the book): the two prints agree within 0.05 K
    over x_w = 0.55-0.85 (their rounded coefficients differ by 0.07 and 0.07 x_w), so the
    -0.9 degC for lean beef is the published correlation's value, not a slip in the code."""
    comp = Composition(water=water, protein=0.8 * (1.0 - water), fat=0.2 * (1.0 - water))
    assert abs(initial_freezing_point_c(comp) + (1.9 - 1.4 * water)) <= 0.05


@pytest.mark.xfail(
    strict=True,
    reason="271.18 + 1.47*x_w K gives -0.9 degC for x_w = 0.718, 0.8 K above the tabulated "
    "-1.7 degC; not met (pass a measured freezing point instead).",
)
def test_freezing_point_correlation_vs_handbook():
    """HANDBOOK_T3 initial freezing point -1.7 degC (printed to 0.1 K). Tolerance 0.3 K, the
    order of the scatter of measured initial freezing points of one meat (from memory)."""
    assert abs(initial_freezing_point_c(LEAN_BEEF) - HANDBOOK_TF_C) <= 0.3


def test_freezing_point_correlation_is_a_meat_depression():
    """The meat correlation (ASHRAE Handbook summary) must give a depression within the
    -0.3..-2.8 degC band of typical initial freezing points of meats, fish, fruit and
    vegetables (Handbook of Frozen Food Processing and Packaging, Taylor and Francis, 2006,
    as quoted in a secondary source; not checked against the book)."""
    t_f = initial_freezing_point_c(LEAN_BEEF)
    assert -2.8 <= t_f <= -0.3


@pytest.mark.xfail(
    strict=True,
    reason="Model gives about 269 kJ/kg for -18 -> 4 degC: the bound-water cap freezes all "
    "freezable water above -17 degC; outside the 230-260 kJ/kg recalled range; not met.",
)
def test_enthalpy_change_vs_recalled_range(lean_table):
    """Enthalpy change of lean beef from -18 to 4 degC roughly 230-260 kJ/kg (ASHRAE Handbook -
    Refrigeration, enthalpy table of frozen foods, beef; range from memory)."""
    dh = _mass_enthalpy_change(lean_table, -18.0, 4.0)
    assert 230e3 <= dh <= 260e3, dh


def test_enthalpy_change_below_handbook_upper_bound(lean_table):
    """HANDBOOK_T3 row gives an upper bound on the -18 -> 4 degC enthalpy change: all water
    frozen at -18 degC (full tabulated latent heat 240 kJ/kg) plus the tabulated sensible
    heats below and above the freezing point. The model keeps bound water unfrozen, so it
    must lie below this bound but above the sensible heat plus the latent heat of the
    freezable water it does freeze."""
    dh = _mass_enthalpy_change(lean_table, -18.0, 4.0)
    upper = (
        HANDBOOK_CP_BELOW * (HANDBOOK_TF_C + 18.0)
        + HANDBOOK_LATENT
        + HANDBOOK_CP_ABOVE * (4.0 - HANDBOOK_TF_C)
    )
    freezable = LEAN_BEEF.water - 0.4 * LEAN_BEEF.protein
    lower = freezable * LATENT_HEAT_FUSION_J_PER_KG + 2.0e3 * 22.0
    assert lower < dh < upper, (lower, dh, upper)


def _quad_enthalpy(table, comp: Composition, t_end: float) -> float:
    """Reference volumetric enthalpy from the table start to ``t_end``: scipy.integrate.quad
    of rho*cp_apparent, split at the freezing point and at the bound-water kink."""
    t_f = table.freezing_point_c
    ratio = 1.105 * comp.water / (comp.water - 0.4 * comp.protein)
    t_cap = t_f + 1.0 - np.exp(0.7138 / (ratio - 1.0))

    def rho_cp(t: float) -> float:
        p = properties_at(comp, t, t_f)
        return float(p.density[0] * p.cp_apparent[0])

    inner = [b for b in (t_cap, t_f) if table.temp_c[0] < b < t_end]
    edges = [float(table.temp_c[0]), *sorted(inner), t_end]
    return sum(quad(rho_cp, a, b, limit=200)[0] for a, b in zip(edges[:-1], edges[1:], strict=True))


@pytest.mark.parametrize("step_c", [0.05, 0.1])
@pytest.mark.parametrize("t_end", [-20.0, -5.0, -1.75, -1.7, 0.0, 20.0, 70.0, 150.0])
def test_enthalpy_matches_adaptive_quadrature(t_end, step_c):
    """Table enthalpy (trapezoid) at the grid node nearest ``t_end`` vs scipy.integrate.quad
    (general-purpose reference integrator), at the default and at the largest allowed step.
    Tolerance 0.5 % of the volumetric latent heat of the freezable water: the accuracy the
    project asks of latent heat (same figure as for measured-property tables)."""
    table = composition_table(LEAN_BEEF, "lean beef", HANDBOOK_TF_C, step_c=step_c)
    i = int(np.argmin(np.abs(table.temp_c - t_end)))
    ref = _quad_enthalpy(table, LEAN_BEEF, float(table.temp_c[i]))
    x = LEAN_BEEF
    latent_vol = 1050.0 * (x.water - 0.4 * x.protein) * LATENT_HEAT_FUSION_J_PER_KG
    assert abs(float(table.vol_enthalpy[i]) - ref) < 5e-3 * latent_vol


def test_temperature_from_enthalpy_near_freezing_point(lean_table):
    """Inverting the table near the freezing point, where the apparent specific heat peaks,
    returns the temperature of the quadrature enthalpy (scipy.integrate.quad) to within one
    grid step: the table's linear interpolation cannot place the kink more finely."""
    step = float(lean_table.temp_c[1] - lean_table.temp_c[0])
    for t in np.linspace(lean_table.freezing_point_c - 0.5, lean_table.freezing_point_c + 0.5, 11):
        e_ref = _quad_enthalpy(lean_table, LEAN_BEEF, float(t))
        assert abs(float(lean_table.temperature(e_ref)) - t) <= step


def test_ice_fraction_tchigeov_and_bound_water(lean_table):
    """Ice fraction follows Tchigeov's equation just below the freezing point and is capped at
    x_w - 0.4 x_protein (Schwartzberg 1976) far below it (ASHRAE Handbook summary)."""
    x = LEAN_BEEF
    t = np.array([-3.0, -6.0])
    expected = 1.105 * x.water / (1.0 + 0.7138 / np.log(HANDBOOK_TF_C - t + 1.0))
    got = properties_at(x, t, HANDBOOK_TF_C).ice_fraction
    assert np.allclose(got, expected, rtol=1e-9)
    frozen_out = lean_table.ice_fraction[lean_table.temp_c <= -30.0]
    assert np.allclose(frozen_out, x.water - 0.4 * x.protein, rtol=1e-9)
    assert np.all(lean_table.ice_fraction[lean_table.temp_c > HANDBOOK_TF_C] == 0.0)


def test_patty_density_vs_pan_singh():
    """PAN_SINGH_2001 density 1006-1033 kg/m^3 over raw and cooked patties; the raw patty at
    room temperature (20-25 degC) is one of the measured states, so the model must fall in
    the published range there."""
    rho = properties_at(PATTY_20_FAT, np.array([20.0, 25.0])).density
    assert np.all((rho >= 1006.0) & (rho <= 1033.0)), rho


@pytest.mark.xfail(
    strict=True,
    reason="Parallel model gives 0.45 W/(m K) for the raw 20 % fat patty at 20-25 degC, above "
    "the measured 0.35-0.41 (+7 % band); not met.",
)
def test_patty_conductivity_vs_pan_singh():
    """PAN_SINGH_2001 conductivity 0.35-0.41 W/(m K), widened by 7 % (CONDUCTIVITY_ERROR), for
    the raw patty at room temperature."""
    k = properties_at(PATTY_20_FAT, np.array([20.0, 25.0])).conductivity
    assert np.all((k >= 0.35 * (1 - K_ERR)) & (k <= 0.41 * (1 + K_ERR))), k


def test_extrapolated_range_stays_physical():
    """Above the published 150 degC limit the correlations are extrapolated to 300 degC: the
    table must stay positive, finite and have strictly increasing enthalpy (Choi and Okos
    1986 validity range -40..150 degC; extrapolation documented in the module)."""
    table = composition_table(PATTY_20_FAT, "patty")
    for arr in (table.conductivity, table.density, table.cp_apparent):
        assert np.all(np.isfinite(arr)) and np.all(arr > 0.0)
    assert np.all(np.diff(table.vol_enthalpy) > 0.0)
    assert table.temp_c[0] == -40.0 and table.temp_c[-1] >= 300.0
    steps = np.diff(table.temp_c)
    assert np.allclose(steps, steps[0], rtol=0, atol=1e-9) and steps[0] <= 0.05


def test_measured_table_releases_the_given_latent_heat():
    """A measured-property food built from the HANDBOOK_T3 sirloin row must release the given
    latent heat (240 kJ/kg) between its freezing point and -40 degC to within 0.5 %: checked
    on the table by trapezoid, and on the release shape itself by scipy.integrate.quad."""
    cp = [(-40.0, HANDBOOK_CP_BELOW), (-1.8, HANDBOOK_CP_BELOW), (0.0, HANDBOOK_CP_ABOVE)]
    table = measured_table("sirloin", 0.48, 1050.0, cp, HANDBOOK_TF_C, HANDBOOK_LATENT)
    cp_sens = np.interp(table.temp_c, [c[0] for c in cp], [c[1] for c in cp])
    excess = table.cp_apparent - cp_sens
    released = float(np.sum(0.5 * (excess[1:] + excess[:-1]) * np.diff(table.temp_c)))
    assert abs(released / HANDBOOK_LATENT - 1.0) < 0.005, released

    def rate(t: float) -> float:
        return float(latent_release_fraction(np.array([t]), HANDBOOK_TF_C, -40.0)[1][0])

    assert abs(quad(rate, -40.0, HANDBOOK_TF_C, limit=400)[0] - 1.0) < 1e-6
    assert np.max(table.ice_fraction) == pytest.approx(HANDBOOK_LATENT / 333.6e3, rel=1e-9)
    assert np.all(np.diff(table.vol_enthalpy) > 0.0)
