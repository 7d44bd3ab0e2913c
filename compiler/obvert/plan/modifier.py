"""Affine corrections of the planner's targets (modifiers), one per scenario.

A modifier shifts what the reduced model must reach at removal by an amount that is affine in
the dwell times (Marchetti, A., Chachuat, B. and Bonvin, D. (2009), "Modifier-adaptation
methodology for real-time optimization", Ind. Eng. Chem. Res. 48:6022-6033):

``shift(d) = offset + slope @ (d - at_dwell_s)``

per scenario and per rule: column 0 in log10 of the log reduction, column 1 in kelvin on
the removal temperature. The model's log reduction must reach ``target * 10**shift[0]``
and its coldest point ``floor + shift[1]``. With ``slope = 0`` it is a constant
(zero-order) correction. :mod:`obvert.certify.calibrate` fits it against the reference.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray


@dataclass(frozen=True)
class Modifier:
    """Affine target corrections of every scenario.

    Attributes
    ----------
    offset : ndarray (scenarios, 2)
        Shift at ``at_dwell_s``: log10 units, K.
    slope : ndarray (scenarios, 2, dwells)
        Change of the shift per second of each dwell: log10/s, K/s.
    at_dwell_s : ndarray (dwells,)
        Dwell times where the shift equals ``offset``, s.
    """

    offset: NDArray[np.float64]
    slope: NDArray[np.float64]
    at_dwell_s: NDArray[np.float64]

    def __post_init__(self) -> None:
        off, slope, at = (np.asarray(v, dtype=float) for v in self.astuple())
        if off.ndim != 2 or off.shape[1] != 2:
            raise ValueError(f"offset shape {off.shape}: allowed (scenarios, 2)")
        if at.ndim != 1 or slope.shape != (off.shape[0], 2, at.size):
            raise ValueError(
                f"slope shape {slope.shape}: allowed {(off.shape[0], 2, at.size)} for "
                f"{off.shape[0]} scenarios and {at.size} dwells"
            )
        if not all(np.all(np.isfinite(v)) for v in (off, slope, at)):
            raise ValueError("modifier: offset, slope and at_dwell_s must be finite")

    def astuple(self) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        """(offset, slope, at_dwell_s)."""
        return self.offset, self.slope, self.at_dwell_s

    @classmethod
    def zero(cls, scenarios: int, dwells: int) -> Modifier:
        """No correction."""
        return cls(np.zeros((scenarios, 2)), np.zeros((scenarios, 2, dwells)), np.zeros(dwells))

    def shift(self, dwell_s: NDArray[np.float64]) -> NDArray[np.float64]:
        """Shift at ``dwell_s`` (s), shape (scenarios, 2)."""
        d = np.asarray(dwell_s, dtype=float) - np.asarray(self.at_dwell_s, dtype=float)
        return np.asarray(self.offset, dtype=float) + np.asarray(self.slope, dtype=float) @ d

    def parameters(self, k: int) -> NDArray[np.float64]:
        """NLP parameters of scenario ``k``: offset (2), slope rows (2 x dwells), at (dwells)."""
        off, slope, at = (np.asarray(v, dtype=float) for v in self.astuple())
        return np.concatenate([off[k], slope[k].ravel(), at])
