"""Tabulated temperature-dependent thermal properties of a food.

Every heat model in Obvert reads a food through one :class:`PropertyTable`: conductivity
and volumetric enthalpy sampled on a fine, uniform, ascending temperature grid. Latent heat
of freezing is contained in the enthalpy (apparent heat capacity), so a frozen start thaws
with its latent load.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

#: Lowest and highest temperature a table covers, degC. Choi-Okos correlations are
#: published for -40 to 150 degC; plate temperatures above that extrapolate (documented).
TABLE_MIN_C = -40.0
TABLE_MAX_C = 300.0


@dataclass(frozen=True, eq=False)
class PropertyTable:
    """Thermal properties of one food sampled against temperature.

    Attributes
    ----------
    name : str
        Human-readable name of the food.
    temp_c : ndarray
        Ascending, uniformly spaced temperatures, degC.
    conductivity : ndarray
        Thermal conductivity k(T), W/(m K).
    density : ndarray
        Density rho(T), kg/m^3.
    cp_apparent : ndarray
        Apparent specific heat including latent heat of fusion, J/(kg K).
    vol_enthalpy : ndarray
        Volumetric enthalpy E(T) = integral of rho*cp_apparent dT from ``temp_c[0]``, J/m^3.
        Strictly increasing.
    freezing_point_c : float
        Initial freezing point, degC.
    ice_fraction : ndarray
        Mass fraction of ice in the food, -.
    """

    name: str
    temp_c: NDArray[np.float64]
    conductivity: NDArray[np.float64]
    density: NDArray[np.float64]
    cp_apparent: NDArray[np.float64]
    vol_enthalpy: NDArray[np.float64]
    freezing_point_c: float
    ice_fraction: NDArray[np.float64]

    def enthalpy(self, temp_c: ArrayLike) -> NDArray[np.float64]:
        """Volumetric enthalpy at ``temp_c`` (degC), J/m^3 (linear interpolation)."""
        return np.interp(temp_c, self.temp_c, self.vol_enthalpy)

    def temperature(self, vol_enthalpy: ArrayLike) -> NDArray[np.float64]:
        """Temperature (degC) at volumetric enthalpy ``vol_enthalpy`` (J/m^3)."""
        return np.interp(vol_enthalpy, self.vol_enthalpy, self.temp_c)

    def k(self, temp_c: ArrayLike) -> NDArray[np.float64]:
        """Thermal conductivity at ``temp_c`` (degC), W/(m K)."""
        return np.interp(temp_c, self.temp_c, self.conductivity)

    def kirchhoff(self) -> NDArray[np.float64]:
        """Kirchhoff potential u(T) = integral of k dT on ``temp_c``, W/m."""
        dt = np.diff(self.temp_c)
        mid = 0.5 * (self.conductivity[1:] + self.conductivity[:-1])
        return np.concatenate([[0.0], np.cumsum(mid * dt)])


def constant_table(
    name: str,
    conductivity: float,
    density: float,
    cp: float,
    lo_c: float = TABLE_MIN_C,
    hi_c: float = TABLE_MAX_C,
    step_c: float = 0.5,
) -> PropertyTable:
    """Build a table with constant properties and no phase change.

    Parameters
    ----------
    name : str
        Name of the material.
    conductivity : float
        W/(m K).
    density : float
        kg/m^3.
    cp : float
        J/(kg K).
    lo_c, hi_c, step_c : float
        Temperature range and spacing, degC.
    """
    t = np.arange(lo_c, hi_c + 0.5 * step_c, step_c)
    ones = np.ones_like(t)
    return PropertyTable(
        name=name,
        temp_c=t,
        conductivity=conductivity * ones,
        density=density * ones,
        cp_apparent=cp * ones,
        vol_enthalpy=density * cp * (t - t[0]),
        freezing_point_c=float("-inf"),
        ice_fraction=0.0 * ones,
    )
