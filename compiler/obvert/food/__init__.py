"""Food physics: thermal properties (composition or measured), lethality kinetics, criteria."""

from obvert.food.choi_okos import Composition, composition_table
from obvert.food.criteria import Requirement
from obvert.food.lethality import LethalityModel, log_reduction
from obvert.food.measured import measured_table
from obvert.food.presets import PRESETS, OrganismPreset, preset
from obvert.food.table import PropertyTable, constant_table

__all__ = [
    "PRESETS",
    "Composition",
    "LethalityModel",
    "OrganismPreset",
    "PropertyTable",
    "Requirement",
    "composition_table",
    "constant_table",
    "log_reduction",
    "measured_table",
    "preset",
]
