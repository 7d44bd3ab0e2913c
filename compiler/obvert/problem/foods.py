"""The property table of a food spec: composition (Choi-Okos) or measured values."""

from __future__ import annotations

from obvert.food.choi_okos import composition_table
from obvert.food.measured import measured_table
from obvert.food.table import PropertyTable
from obvert.spec.model import FoodSpec


def food_table(food: FoodSpec) -> PropertyTable:
    """Build the :class:`PropertyTable` that every heat model of this food reads."""
    if food.composition is not None:
        return composition_table(
            food.composition,
            food.name,
            freezing_point_c=food.freezing_point_c,
            conductivity_model=food.conductivity_model,
        )
    m = food.measured
    if m is None:
        raise ValueError(f"food {food.name!r}: neither a composition nor measured properties")
    return measured_table(
        food.name,
        conductivity=m.conductivity,
        density=m.density,
        cp=m.specific_heat,
        freezing_point_c=m.freezing_point_c,
        latent_heat_j_per_kg=m.latent_heat_j_per_kg,
    )
