"""The cook table: the grid sweep, the cells, and the canonical manifest of the result."""

from obvert.table.compile import CellCertificationError, compile_table
from obvert.table.manifest import manifest
from obvert.table.model import Candidate, CookTable, Node
from obvert.table.sweep import BuildError, Progress, ProgressEvent

__all__ = [
    "BuildError",
    "Candidate",
    "CellCertificationError",
    "CookTable",
    "Node",
    "Progress",
    "ProgressEvent",
    "compile_table",
    "manifest",
]
