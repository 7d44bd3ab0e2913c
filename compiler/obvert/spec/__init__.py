"""Cook-program specs: dataclasses in SI units and TOML loading with unit parsing."""

from obvert.spec.errors import SpecError
from obvert.spec.load import load_spec, loads_spec, spec_from_dict
from obvert.spec.model import (
    ApplianceSpec,
    FoodSpec,
    GridSpec,
    MeasuredProperties,
    PlanningSpec,
    SafetySpec,
    Spec,
)

__all__ = [
    "ApplianceSpec",
    "FoodSpec",
    "GridSpec",
    "MeasuredProperties",
    "PlanningSpec",
    "SafetySpec",
    "Spec",
    "SpecError",
    "load_spec",
    "loads_spec",
    "spec_from_dict",
]
