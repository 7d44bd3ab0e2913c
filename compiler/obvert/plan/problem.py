"""What a minimum-time problem is made of: the requirement, the scenarios, the error.

The lowest module of :mod:`obvert.plan`'s planner: the transcription
(:mod:`obvert.plan._nlp`) and the planner (:mod:`obvert.plan.ocp`) both import from here, and
nothing here imports from either.
"""

from __future__ import annotations

from dataclasses import dataclass

from obvert.plan.schedule import Surroundings
from obvert.thermal.spectral import SpectralModel


class PlanError(RuntimeError):
    """A minimum-time problem could not be solved."""


@dataclass(frozen=True)
class Requirement:
    """What the food must reach by removal.

    Attributes
    ----------
    log_reduction : float
        Log reduction every point must reach, log10 units.
    min_temp_c : float | None
        Temperature every point must be at or above at removal, degC (None: no such rule).
    rest_s : float
        Carry-over time after removal credited to lethality, s (0: no credit).
    """

    log_reduction: float
    min_temp_c: float | None = None
    rest_s: float = 0.0


@dataclass(frozen=True)
class Member:
    """One scenario a plan must satisfy: a slab model on an appliance, start offset.

    Attributes
    ----------
    model : SpectralModel
        Reduced model of the slab (its thickness and food properties).
    env : Surroundings
        Plate, air and platen conditions.
    start_offset_k : float
        Added to the requested start temperature, K (e.g. minus the measurement error).
    """

    model: SpectralModel
    env: Surroundings
    start_offset_k: float = 0.0
