"""Cook-program specs: dataclasses in SI units and TOML loading with unit parsing."""

from obvert.spec.catalogue import CatalogueFile, is_catalogue_file, load_catalogue_file
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
    "CatalogueFile",
    "FoodSpec",
    "GridSpec",
    "MeasuredProperties",
    "PlanningSpec",
    "SafetySpec",
    "Spec",
    "SpecError",
    "is_catalogue_file",
    "load_catalogue_file",
    "load_spec",
    "loads_spec",
    "spec_from_dict",
]
