"""Heat models of the food slab: the reference finite-volume solver and the reduced model.

The reference (:func:`simulate`; summaries with :func:`simulate_one` and
:func:`simulate_many`, per-row minima with :func:`simulate_minima`) is the ground truth
every schedule is certified on; the spectral reduced model (:class:`SpectralModel`, CasADi
expressions) is what the planner optimises on.
"""

from obvert.thermal.batch import CookCase, ReferenceSummary, simulate_many, simulate_one
from obvert.thermal.boundary import FaceBC, Phase, Surroundings
from obvert.thermal.reference import (
    EarlyEnd,
    ReferenceResult,
    ReferenceSettings,
    RowMinima,
    food_frame,
    simulate,
    simulate_minima,
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
    "RowMinima",
    "SpectralModel",
    "SpectralSettings",
    "Surroundings",
    "food_frame",
    "simulate",
    "simulate_many",
    "simulate_minima",
    "simulate_one",
]
