"""Verdicts on the reference model: nodes, the reference-calibrated plan, and the cells.

Everything here simulates schedules on the high-fidelity reference model
(:mod:`obvert.thermal`) and judges them against the food-safety requirement.
"""

from obvert.certify.batch import judge_many
from obvert.certify.calibrate import Calibrated, calibrate
from obvert.certify.cells import CellError, CellResult, bilinear_cell, cell_dict, corner_cells
from obvert.certify.node import Certificate, CertificationError, Verdict, certify, judge

__all__ = [
    "Calibrated",
    "CellError",
    "CellResult",
    "Certificate",
    "CertificationError",
    "Verdict",
    "bilinear_cell",
    "calibrate",
    "cell_dict",
    "certify",
    "corner_cells",
    "judge",
    "judge_many",
]
