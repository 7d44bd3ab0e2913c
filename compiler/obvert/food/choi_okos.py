"""Thermal properties of a food from its proximate composition.

Component correlations are those of Choi, Y. and Okos, M. R. (1986), "Effects of temperature
and composition on the thermal properties of foods", in Le Maguer and Jelen (eds.), Food
Engineering and Process Applications, vol. 1, pp. 93-101. Each property of each component is
``a + b*t + c*t**2`` with ``t`` in degC; the published range is -40 to 150 degC.

Mixing rules (as summarised in the ASHRAE Handbook, Refrigeration, chapter on thermal
properties of foods):

* density by volume additivity, ``1/rho = sum(x_i/rho_i)``;
* specific heat mass-weighted, ``cp = sum(x_i*cp_i)``;
* conductivity: by default (``conductivity_model="levy_ice"``) volume-fraction weighted
  (parallel model) over the non-ice components, then Levy's model to add ice (Carson et al.
  2016; Levy's model fitted measured food conductivities best in Fricke and Becker 2001;
  see :mod:`obvert.food.conductivity`); with ``"parallel"`` the parallel model over every
  component, ``k = sum(v_i*k_i)`` with ``v_i = x_i*rho/rho_i`` (an upper bound, about 30 %
  high for frozen lean beef). Above the freezing point the two are the same.

Freezing: the initial freezing point is given or estimated for meats as
``T_f = 271.18 + 1.47*x_w`` (K). Below it the ice mass fraction follows Tchigeov's equation
``x_ice = 1.105*x_w/(1 + 0.7138/ln(t_f - t + 1))``, capped so that the unfrozen water never
falls below the bound water ``x_b = 0.4*x_protein`` (Schwartzberg 1976). The latent heat of
fusion of water at 0 degC, 333.6 kJ/kg, is the value used in the same handbook chapter; the
apparent specific heat adds ``L_f*(-d x_ice/dT)``, computed analytically.

Scope and extrapolation:

* Above 150 degC the correlations are evaluated beyond their published range (plate
  temperatures reach 230 degC). Nothing is clamped: if a property became non-positive the
  table builder raises instead.
* Water does not boil in this model above 100 degC; surface evaporation and cook loss are out
  of scope for now, so the liquid-water correlations are simply extrapolated.
* The liquid-water specific heat uses the published below-0 degC coefficients for
  ``t < 0`` and the above-0 coefficients otherwise; the two differ by about 2 % at 0 degC, a
  step the enthalpy integral absorbs.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, fields

import numpy as np
from numpy.typing import ArrayLike, NDArray

from obvert.food.conductivity import ice_step_mixture
from obvert.food.table import TABLE_MAX_C, TABLE_MIN_C, PropertyTable

#: Latent heat of fusion of water at 0 degC, J/kg (ASHRAE Handbook, Refrigeration, chapter on
#: thermal properties of foods, value used with the Choi-Okos model).
LATENT_HEAT_FUSION_J_PER_KG = 333.6e3

#: Bound (non-freezable) water per unit protein mass, - (Schwartzberg 1976).
BOUND_WATER_PER_PROTEIN = 0.4

#: Largest grid step allowed, degC. Just below the freezing point the apparent specific heat
#: varies on a scale of about 0.7 K (the Tchigeov constant). For lean beef the trapezoid
#: enthalpy error, largest one node below the freezing point, is about 0.12 % of the latent
#: heat at the default 0.05 K step and 0.42 % at 0.1 K, within the 0.5 % the project asks of
#: latent heat (checked against adaptive quadrature in tests/physics/test_properties.py).
MAX_STEP_C = 0.1

#: Constants of Tchigeov's ice-fraction equation, - and K (ASHRAE Handbook summary).
TCHIGEOV_A = 1.105
TCHIGEOV_B = 0.7138

# (a, b, c) of a + b*t + c*t^2, t in degC. Conductivity W/(m K), density kg/m^3,
# specific heat kJ/(kg K).
_K = {
    "protein": (0.17881, 1.1958e-3, -2.7178e-6),
    # Some printed copies give the fat slope as -2.7604e-3, which makes fat conduct almost
    # nothing at 50 degC; -2.7604e-4 is the physically plausible value and is the one used
    # by reference implementations of the model, so it is used here.
    "fat": (0.18071, -2.7604e-4, -1.7749e-7),
    "carbohydrate": (0.20141, 1.3874e-3, -4.3312e-6),
    "fibre": (0.18331, 1.2497e-3, -3.1683e-6),
    "ash": (0.32962, 1.4011e-3, -2.9069e-6),
    "water": (0.57109, 1.7625e-3, -6.7036e-6),
    "ice": (2.2196, -6.2489e-3, 1.0154e-4),
}
_RHO = {
    "protein": (1329.9, -0.5184, 0.0),
    "fat": (925.59, -0.41757, 0.0),
    "carbohydrate": (1599.1, -0.31046, 0.0),
    "fibre": (1311.5, -0.36589, 0.0),
    "ash": (2423.8, -0.28063, 0.0),
    "water": (997.18, 3.1439e-3, -3.7574e-3),
    "ice": (916.89, -0.13071, 0.0),
}
_CP = {
    "protein": (2.0082, 1.2089e-3, -1.3129e-6),
    "fat": (1.9842, 1.4733e-3, -4.8008e-6),
    "carbohydrate": (1.5488, 1.9625e-3, -5.9399e-6),
    "fibre": (1.8459, 1.8306e-3, -4.6509e-6),
    "ash": (1.0926, 1.8896e-3, -3.6817e-6),
    "ice": (2.0623, 6.0769e-3, 0.0),
}
_CP_WATER_ABOVE_0 = (4.1762, -9.0864e-5, 5.4731e-6)
_CP_WATER_BELOW_0 = (4.0817, -5.3062e-3, 9.9516e-4)

_SOLIDS = ("protein", "fat", "carbohydrate", "fibre", "ash")

#: Allowed values of ``conductivity_model``.
CONDUCTIVITY_MODELS = ("parallel", "levy_ice")


@dataclass(frozen=True)
class Composition:
    """Proximate composition of a food, mass fractions (-).

    Each fraction must lie in [0, 1] and the six must sum to 1 within 0.01; they are divided
    by their sum before use.

    Attributes
    ----------
    water, protein, fat, carbohydrate, fibre, ash : float
        Mass fractions, -.
    """

    water: float
    protein: float
    fat: float
    carbohydrate: float = 0.0
    fibre: float = 0.0
    ash: float = 0.0

    def __post_init__(self) -> None:
        total = 0.0
        for f in fields(self):
            value = getattr(self, f.name)
            if (
                not isinstance(value, numbers.Real)
                or isinstance(value, bool)
                or not math.isfinite(value)
            ):
                raise ValueError(
                    f"Composition.{f.name} = {value!r}: must be a finite number in [0, 1]"
                )
            if not 0.0 <= value <= 1.0:
                raise ValueError(
                    f"Composition.{f.name} = {value!r}: mass fraction outside the allowed "
                    "range [0, 1]"
                )
            total += value
        if abs(total - 1.0) > 0.01:
            raise ValueError(
                f"Composition mass fractions sum to {total:.4f}; allowed: 1 within 0.01"
            )

    def normalised(self) -> dict[str, float]:
        """Mass fractions divided by their sum, keyed by component name."""
        values = {f.name: float(getattr(self, f.name)) for f in fields(self)}
        total = sum(values.values())
        return {name: v / total for name, v in values.items()}


@dataclass(frozen=True, eq=False)
class PointProperties:
    """Mixture properties at given temperatures (arrays matching the input).

    Attributes
    ----------
    conductivity : ndarray
        W/(m K).
    density : ndarray
        kg/m^3.
    cp_sensible : ndarray
        Specific heat of the phase mixture without latent heat, J/(kg K).
    cp_apparent : ndarray
        ``cp_sensible`` plus the latent heat released per kelvin, J/(kg K).
    ice_fraction : ndarray
        Ice mass fraction, -.
    """

    conductivity: NDArray[np.float64]
    density: NDArray[np.float64]
    cp_sensible: NDArray[np.float64]
    cp_apparent: NDArray[np.float64]
    ice_fraction: NDArray[np.float64]


def _poly(coef: tuple[float, float, float], t: NDArray[np.float64]) -> NDArray[np.float64]:
    a, b, c = coef
    return a + b * t + c * t * t


def initial_freezing_point_c(comp: Composition) -> float:
    """Estimate the initial freezing point of a meat, degC: ``271.18 + 1.47*x_w`` K.

    Correlation for meats as summarised in the ASHRAE Handbook, Refrigeration, chapter on
    thermal properties of foods.
    """
    x_w = comp.normalised()["water"]
    return 271.18 + 1.47 * x_w - 273.15


def ice_fraction(
    comp: Composition, temp_c: ArrayLike, freezing_point_c: float
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Ice mass fraction and its rate of growth on cooling.

    Parameters
    ----------
    comp : Composition
        Food composition.
    temp_c : array_like
        Temperatures, degC.
    freezing_point_c : float
        Initial freezing point, degC.

    Returns
    -------
    x_ice : ndarray
        Ice mass fraction (Tchigeov, capped at ``x_w - x_b``), -.
    dx_ice_dcool : ndarray
        ``-d x_ice / dT``, 1/K (zero above the freezing point and where the cap applies).
    """
    x = comp.normalised()
    t = np.asarray(temp_c, dtype=float)
    freezable = max(x["water"] - BOUND_WATER_PER_PROTEIN * x["protein"], 0.0)
    depression = np.maximum(freezing_point_c - t, 0.0)
    log_term = np.log1p(depression)
    amp = TCHIGEOV_A * x["water"]
    x_ice = amp * log_term / (log_term + TCHIGEOV_B)
    slope = amp * TCHIGEOV_B / ((log_term + TCHIGEOV_B) ** 2 * (1.0 + depression))
    frozen = t < freezing_point_c
    capped = x_ice >= freezable
    x_ice = np.where(frozen, np.minimum(x_ice, freezable), 0.0)
    slope = np.where(frozen & ~capped, slope, 0.0)
    return x_ice, slope


def properties_at(
    comp: Composition,
    temp_c: ArrayLike,
    freezing_point_c: float | None = None,
    conductivity_model: str = "levy_ice",
) -> PointProperties:
    """Evaluate the Choi-Okos mixture at ``temp_c`` (degC).

    Parameters
    ----------
    comp : Composition
        Food composition.
    temp_c : array_like
        Temperatures, degC.
    freezing_point_c : float, optional
        Initial freezing point, degC; estimated with :func:`initial_freezing_point_c` if None.
    conductivity_model : {"parallel", "levy_ice"}
        Conductivity mixing rule (module docstring); "levy_ice" by default.
    """
    if not isinstance(conductivity_model, str) or conductivity_model not in CONDUCTIVITY_MODELS:
        raise ValueError(
            f"conductivity_model = {conductivity_model!r}: allowed one of {CONDUCTIVITY_MODELS}"
        )
    t = np.atleast_1d(np.asarray(temp_c, dtype=float))
    t_f = initial_freezing_point_c(comp) if freezing_point_c is None else freezing_point_c
    x = comp.normalised()
    x_ice, dx_cool = ice_fraction(comp, t, t_f)
    mass = {name: np.full_like(t, x[name]) for name in _SOLIDS}
    mass["water"] = x["water"] - x_ice
    mass["ice"] = x_ice
    rho_i = {name: _poly(_RHO[name], t) for name in mass}
    specific_volume = sum(mass[n] / rho_i[n] for n in mass)
    rho = 1.0 / specific_volume
    vol = {n: mass[n] * rho / rho_i[n] for n in mass}
    k_i = {n: _poly(_K[n], t) for n in mass}
    if conductivity_model == "parallel":
        k = sum(vol[n] * k_i[n] for n in mass)
    else:
        k = ice_step_mixture(k_i, vol)
    cp_water = np.where(t < 0.0, _poly(_CP_WATER_BELOW_0, t), _poly(_CP_WATER_ABOVE_0, t))
    cp_kj = mass["water"] * cp_water + sum(mass[n] * _poly(_CP[n], t) for n in (*_SOLIDS, "ice"))
    cp_sensible = 1e3 * cp_kj
    cp_apparent = cp_sensible + LATENT_HEAT_FUSION_J_PER_KG * dx_cool
    return PointProperties(
        conductivity=k,
        density=rho,
        cp_sensible=cp_sensible,
        cp_apparent=cp_apparent,
        ice_fraction=x_ice,
    )


def anchored_grid(lo_c: float, hi_c: float, step_c: float, anchor_c: float) -> NDArray[np.float64]:
    """Uniform ascending grid from ``lo_c`` to at least ``hi_c``, ``anchor_c`` mid-cell.

    The apparent specific heat jumps at the freezing point (from the latent peak below it to
    the sensible value above). A trapezoid rule over a cell that contains such a jump is
    exact to first order only if the jump sits at the cell midpoint, so the step is reduced
    (never enlarged) until ``anchor_c`` is the midpoint of a cell. If ``anchor_c`` is not
    inside ``(lo_c, hi_c)`` the grid uses ``step_c`` unchanged.
    """
    if lo_c < anchor_c < hi_c:
        n_lo = max(math.ceil((anchor_c - lo_c) / step_c - 0.5 - 1e-9), 0)
        step = (anchor_c - lo_c) / (n_lo + 0.5)
    else:
        step = step_c
    n = math.ceil((hi_c - lo_c) / step - 1e-9)
    return lo_c + step * np.arange(n + 1, dtype=float)


def cumulative_vol_enthalpy(
    temp_c: NDArray[np.float64], rho_cp: NDArray[np.float64]
) -> NDArray[np.float64]:
    """Trapezoid cumulative integral of ``rho_cp`` (J/(m^3 K)) over ``temp_c`` (degC), J/m^3."""
    mid = 0.5 * (rho_cp[1:] + rho_cp[:-1]) * np.diff(temp_c)
    return np.concatenate([[0.0], np.cumsum(mid)])


def check_grid_args(step_c: float, lo_c: float, hi_c: float) -> None:
    """Raise ValueError unless ``0 < step_c <= MAX_STEP_C`` and ``lo_c < hi_c`` (finite)."""
    for label, value in (("step_c", step_c), ("lo_c", lo_c), ("hi_c", hi_c)):
        if not isinstance(value, numbers.Real) or not math.isfinite(value):
            raise ValueError(f"{label} = {value!r}: allowed a finite number (degC)")
    if not 0.0 < step_c <= MAX_STEP_C:
        raise ValueError(f"step_c = {step_c!r}: allowed 0 < step_c <= {MAX_STEP_C} degC")
    if not lo_c < hi_c:
        raise ValueError(f"lo_c = {lo_c!r}, hi_c = {hi_c!r}: lo_c must be below hi_c")


def _check_positive(name: str, label: str, t: NDArray[np.float64], v: NDArray[np.float64]) -> None:
    bad = np.flatnonzero(~(v > 0.0))
    if bad.size:
        raise ValueError(
            f"{name}: {label} = {v[bad[0]]!r} at {t[bad[0]]:.2f} degC is not positive; the "
            "correlations are extrapolated too far, narrow lo_c/hi_c"
        )


def composition_table(
    comp: Composition,
    name: str,
    freezing_point_c: float | None = None,
    step_c: float = 0.05,
    lo_c: float = TABLE_MIN_C,
    hi_c: float = TABLE_MAX_C,
    conductivity_model: str = "levy_ice",
) -> PropertyTable:
    """Build a :class:`PropertyTable` from a composition with the Choi-Okos model.

    Parameters
    ----------
    comp : Composition
        Food composition (mass fractions).
    name : str
        Name of the food.
    freezing_point_c : float, optional
        Initial freezing point, degC, at most 0; estimated for meats if None.
    step_c : float
        Requested grid step, degC, in (0, :data:`MAX_STEP_C`]; reduced slightly so the
        freezing point is a grid node.
    lo_c, hi_c : float
        Temperature range, degC. The grid starts at ``lo_c`` and ends at the first node at or
        above ``hi_c``. Above 150 degC the correlations are extrapolated.
    conductivity_model : {"parallel", "levy_ice"}
        Passed to :func:`properties_at`.

    Returns
    -------
    PropertyTable
        Properties in SI units; ``vol_enthalpy`` is the trapezoid integral of
        ``rho*cp_apparent`` from ``lo_c``.
    """
    check_grid_args(step_c, lo_c, hi_c)
    if freezing_point_c is None:
        t_f = initial_freezing_point_c(comp)
    elif not isinstance(freezing_point_c, numbers.Real) or not freezing_point_c <= 0.0:
        raise ValueError(
            f"freezing_point_c = {freezing_point_c!r}: allowed a number <= 0 degC or None"
        )
    else:
        t_f = float(freezing_point_c)
    t = anchored_grid(lo_c, hi_c, step_c, t_f)
    p = properties_at(comp, t, t_f, conductivity_model)
    for label, values in (
        ("conductivity", p.conductivity),
        ("density", p.density),
        ("cp_apparent", p.cp_apparent),
    ):
        _check_positive(name, label, t, values)
    return PropertyTable(
        name=name,
        temp_c=t,
        conductivity=p.conductivity,
        density=p.density,
        cp_apparent=p.cp_apparent,
        vol_enthalpy=cumulative_vol_enthalpy(t, p.density * p.cp_apparent),
        freezing_point_c=t_f,
        ice_fraction=p.ice_fraction,
    )
