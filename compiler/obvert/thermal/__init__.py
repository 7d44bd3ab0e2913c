"""Heat models of the food slab: the reference finite-volume solver and the reduced model.

The reference (:func:`simulate`, many runs at once with :func:`simulate_many`) is the ground
truth every schedule is certified on; the spectral reduced model (:class:`SpectralModel`,
CasADi expressions) is what the planner optimises on.
"""

from obvert.thermal.batch import CookCase, ReferenceSummary, simulate_many
from obvert.thermal.boundary import FaceBC, Phase, Surroundings
from obvert.thermal.reference import (
    EarlyEnd,
    ReferenceResult,
    ReferenceSettings,
    food_frame,
    simulate,
)
from obvert.thermal.spectral import SpectralModel, SpectralSettings

__all__ = [
    "EarlyEnd",
    "CookCase",
    "FaceBC",
    "Phase",
    "ReferenceResult",
    "ReferenceSettings",
    "ReferenceSummary",
    "SpectralModel",
    "SpectralSettings",
    "Surroundings",
    "food_frame",
    "simulate",
    "simulate_many",
]
