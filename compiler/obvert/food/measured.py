"""Property table of a food whose thermal properties were measured.

Conductivity, density and sensible specific heat are each a constant or a table of
``(temp_c, value)`` pairs, linearly interpolated and held constant beyond the first and last
temperature. Latent heat of freezing is released below the freezing point with the shape of
Tchigeov's ice-fraction equation (ASHRAE Handbook, Refrigeration, chapter on thermal
properties of foods)::

    phi(T) = g(t_f - T) / g(t_f - t_end),   g(d) = ln(1 + d) / (ln(1 + d) + 0.7138)

so that the fraction ``phi`` of the latent heat released rises from 0 at the freezing point
``t_f`` to exactly 1 at ``t_end`` (default -40 degC), steeply at first as in real foods. Below
``t_end`` no more latent heat is released. The ice mass fraction reported is the released
latent heat divided by the latent heat of fusion of water (333.6 kJ/kg).

Plausibility ranges (conductivity 0.01-5 W/(m K), density 100-3000 kg/m^3, specific heat
200-6000 J/(kg K)) reject values given in the wrong unit, e.g. cp in kJ/(kg K).
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from obvert.food.choi_okos import (
    LATENT_HEAT_FUSION_J_PER_KG,
    TCHIGEOV_B,
    anchored_grid,
    check_grid_args,
    cumulative_vol_enthalpy,
)
from obvert.food.table import TABLE_MAX_C, TABLE_MIN_C, PropertyTable

#: A measured property: a constant, or ``(temp_c, value)`` pairs with rising temperatures.
PropertySpec = float | Sequence[tuple[float, float]]

_PLAUSIBLE = {
    "conductivity": (0.01, 5.0, "W/(m K)"),
    "density": (100.0, 3000.0, "kg/m^3"),
    "cp": (200.0, 6000.0, "J/(kg K)"),
}


def _is_number(value: object) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool)


def _check_value(field: str, where: str, value: object) -> float:
    lo, hi, unit = _PLAUSIBLE[field]
    if not _is_number(value) or not math.isfinite(value):
        raise ValueError(f"{field}{where}: value {value!r} is not a finite number")
    if not lo <= value <= hi:
        raise ValueError(
            f"{field}{where}: value {value!r} {unit} is outside the allowed range {lo}-{hi} "
            f"{unit} (positive, and in SI units)"
        )
    return float(value)


def property_points(field: str, spec: PropertySpec) -> tuple[NDArray, NDArray]:
    """Validate a property given as a constant or as ``(temp_c, value)`` pairs.

    Parameters
    ----------
    field : str
        ``"conductivity"``, ``"density"`` or ``"cp"`` (names the field in errors).
    spec : float or sequence of (float, float)
        The property, SI units, temperatures in degC.

    Returns
    -------
    temps, values : ndarray
        Knots for linear interpolation (a constant gives one knot at 0 degC).
    """
    if _is_number(spec):
        return np.array([0.0]), np.array([_check_value(field, "", spec)])
    if isinstance(spec, (str, bytes)) or not isinstance(spec, Sequence):
        raise ValueError(
            f"{field} = {spec!r}: expected a number or a sequence of (temp_c, value) pairs"
        )
    if len(spec) == 0:
        raise ValueError(f"{field}: table is empty; give at least one (temp_c, value) pair")
    temps: list[float] = []
    values: list[float] = []
    for i, pair in enumerate(spec):
        if isinstance(pair, (str, bytes)) or not isinstance(pair, Sequence) or len(pair) != 2:
            raise ValueError(f"{field}[{i}] = {pair!r}: expected a (temp_c, value) pair")
        t, v = pair
        if not _is_number(t) or not math.isfinite(t):
            raise ValueError(f"{field}[{i}]: temperature {t!r} is not a finite number (degC)")
        if temps and not t > temps[-1]:
            raise ValueError(
                f"{field}[{i}]: temperature {t!r} degC is not above the previous "
                f"{temps[-1]!r} degC; temperatures must be strictly increasing"
            )
        temps.append(float(t))
        values.append(_check_value(field, f"[{i}] at {t!r} degC", v))
    return np.array(temps), np.array(values)


def latent_release_fraction(
    temp_c: NDArray[np.float64], freezing_point_c: float, end_c: float
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Fraction of the latent heat released at ``temp_c`` and its rate on cooling.

    Parameters
    ----------
    temp_c : ndarray
        Temperatures, degC.
    freezing_point_c : float
        Initial freezing point, degC.
    end_c : float
        Temperature at which all latent heat has been released, degC.

    Returns
    -------
    phi : ndarray
        Released fraction, 0 above the freezing point, 1 at and below ``end_c``, -.
    dphi_dcool : ndarray
        ``-d phi / dT``, 1/K.
    """
    depth = np.clip(freezing_point_c - np.asarray(temp_c, dtype=float), 0.0, None)
    full = freezing_point_c - end_c
    log_full = math.log1p(full)
    norm = log_full / (log_full + TCHIGEOV_B)
    log_d = np.log1p(np.minimum(depth, full))
    phi = log_d / (log_d + TCHIGEOV_B) / norm
    rate = TCHIGEOV_B / ((log_d + TCHIGEOV_B) ** 2 * (1.0 + depth)) / norm
    inside = (depth > 0.0) & (depth < full)
    return phi, np.where(inside, rate, 0.0)


def _check_freezing(
    freezing_point_c: float | None, latent_heat_j_per_kg: float, end_c: float, lo_c: float
) -> None:
    if not _is_number(latent_heat_j_per_kg) or not math.isfinite(latent_heat_j_per_kg):
        raise ValueError(f"latent_heat_j_per_kg = {latent_heat_j_per_kg!r}: not a finite number")
    if not 0.0 <= latent_heat_j_per_kg <= LATENT_HEAT_FUSION_J_PER_KG:
        raise ValueError(
            f"latent_heat_j_per_kg = {latent_heat_j_per_kg!r}: allowed 0 to "
            f"{LATENT_HEAT_FUSION_J_PER_KG:.0f} J/kg (that of pure water)"
        )
    if latent_heat_j_per_kg == 0.0 and freezing_point_c is None:
        return
    if not _is_number(freezing_point_c) or not end_c < freezing_point_c <= 0.0:
        raise ValueError(
            f"freezing_point_c = {freezing_point_c!r}: allowed a number in ({end_c}, 0] degC "
            "(None only when latent_heat_j_per_kg is 0)"
        )
    if not _is_number(end_c) or not lo_c <= end_c:
        raise ValueError(f"latent_end_c = {end_c!r}: allowed lo_c ({lo_c}) or above")


def measured_table(
    name: str,
    conductivity: PropertySpec,
    density: PropertySpec,
    cp: PropertySpec,
    freezing_point_c: float | None,
    latent_heat_j_per_kg: float,
    step_c: float = 0.05,
    lo_c: float = TABLE_MIN_C,
    hi_c: float = TABLE_MAX_C,
    latent_end_c: float = -40.0,
) -> PropertyTable:
    """Build a :class:`PropertyTable` from measured properties.

    Parameters
    ----------
    name : str
        Name of the food.
    conductivity : float or sequence of (temp_c, value)
        Thermal conductivity, W/(m K).
    density : float or sequence of (temp_c, value)
        Density, kg/m^3.
    cp : float or sequence of (temp_c, value)
        Sensible specific heat (without latent heat), J/(kg K).
    freezing_point_c : float or None
        Initial freezing point, degC, in ``(latent_end_c, 0]``; None only without latent heat.
    latent_heat_j_per_kg : float
        Total latent heat released between the freezing point and ``latent_end_c``, J/kg.
    step_c : float
        Requested grid step, degC (see :func:`obvert.food.choi_okos.anchored_grid`).
    lo_c, hi_c : float
        Temperature range, degC.
    latent_end_c : float
        Temperature by which all latent heat has been released, degC.
    """
    check_grid_args(step_c, lo_c, hi_c)
    _check_freezing(freezing_point_c, latent_heat_j_per_kg, latent_end_c, lo_c)
    knots = {
        label: property_points(label, spec)
        for label, spec in (("conductivity", conductivity), ("density", density), ("cp", cp))
    }
    has_latent = latent_heat_j_per_kg > 0.0
    t_f = float("-inf") if freezing_point_c is None else float(freezing_point_c)
    t = anchored_grid(lo_c, hi_c, step_c, t_f if has_latent else lo_c)
    k, rho, cp_s = (np.interp(t, *knots[label]) for label in ("conductivity", "density", "cp"))
    if has_latent:
        phi, dphi = latent_release_fraction(t, t_f, latent_end_c)
    else:
        phi, dphi = np.zeros_like(t), np.zeros_like(t)
    cp_app = cp_s + latent_heat_j_per_kg * dphi
    return PropertyTable(
        name=name,
        temp_c=t,
        conductivity=k,
        density=rho,
        cp_apparent=cp_app,
        vol_enthalpy=cumulative_vol_enthalpy(t, rho * cp_app),
        freezing_point_c=t_f,
        ice_fraction=phi * latent_heat_j_per_kg / LATENT_HEAT_FUSION_J_PER_KG,
    )
