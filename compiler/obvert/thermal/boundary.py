"""Boundary conditions of the food slab and the phases of a cook.

The slab lies on the lower plate with its face 0 (x = 0); face 1 (x = L) faces the air or
the upper platen. A flip mirrors the slab, so the face that was up touches the plate.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: Stefan-Boltzmann constant, W/(m^2 K^4) (CODATA 2018, exact in SI since 2019).
STEFAN_BOLTZMANN = 5.670374419e-8


@dataclass(frozen=True)
class FaceBC:
    """Heat exchange of one face with its surroundings.

    Heat flux into the food is ``h*(t_inf - t_s) + emissivity*sigma*(T_inf^4 - T_s^4)``.
    A heated surface may droop after a cold load and recover exponentially: at time ``t``
    from loading the surface is at ``t_inf_c - droop_k * exp(-t / droop_tau_s)``.

    Attributes
    ----------
    h : float
        Convective or contact heat-transfer coefficient, W/(m^2 K).
    t_inf_c : float
        Temperature of the plate, platen or air seen by the face, degC.
    emissivity : float
        Surface emissivity for radiation exchange with surroundings at ``t_inf_c``, -.
        Zero for plate contact (contact coefficient already covers it).
    droop_k : float
        Drop of the surface temperature at loading, K (0: none).
    droop_tau_s : float
        Time constant of the recovery from the drop, s (used only when ``droop_k > 0``).
    """

    h: float
    t_inf_c: float
    emissivity: float = 0.0
    droop_k: float = 0.0
    droop_tau_s: float = 1.0

    def __post_init__(self) -> None:
        if not self.droop_k >= 0.0:
            raise ValueError(f"droop_k = {self.droop_k!r}: allowed >= 0 K")
        if not self.droop_tau_s > 0.0:
            raise ValueError(f"droop_tau_s = {self.droop_tau_s!r}: allowed > 0 s")

    def t_inf_at(self, t_s: float) -> float:
        """Surface temperature seen by the face at ``t_s`` seconds from loading, degC."""
        if self.droop_k == 0.0:
            return self.t_inf_c
        return self.t_inf_c - self.droop_k * math.exp(-t_s / self.droop_tau_s)

    def steady(self) -> FaceBC:
        """The same face with the droop held at its worst for the whole cook (a lower bound)."""
        return FaceBC(self.h, self.t_inf_c - self.droop_k, self.emissivity)


@dataclass(frozen=True)
class Phase:
    """A stretch of the cook with fixed boundary conditions.

    Attributes
    ----------
    duration_s : float
        Length of the phase, s.
    face0 : FaceBC
        Boundary condition at x = 0 (the face down on the plate).
    face1 : FaceBC
        Boundary condition at x = L (the face up).
    flip_before : bool
        Mirror the temperature and lethality profiles at the start of the phase.
    """

    duration_s: float
    face0: FaceBC
    face1: FaceBC
    flip_before: bool = False


@dataclass(frozen=True)
class Surroundings:
    """What each face of the food sees on a given appliance.

    Attributes
    ----------
    plate : FaceBC
        The lower plate in contact.
    air : FaceBC
        Room air with radiation.
    platen : FaceBC | None
        The upper platen when closed, if the appliance has one.
    flip_air_s : float
        Time the food spends in the air during a flip, s.
    """

    plate: FaceBC
    air: FaceBC
    platen: FaceBC | None
    flip_air_s: float
