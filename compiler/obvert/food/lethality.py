"""Log-linear thermal death kinetics (D value at a reference temperature, z value).

The log reduction accumulated at a point is ``LR = integral of 10**((T - T_ref)/z) / D_ref dt``.
Above ``cap_c`` the rate is held at its value at ``cap_c``: this only ever under-counts
lethality (conservative) and keeps the integrand bounded at plate temperatures.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray


@dataclass(frozen=True)
class LethalityModel:
    """D/z kinetics of the target organism.

    Attributes
    ----------
    d_ref_s : float
        Decimal reduction time at ``t_ref_c``, s.
    t_ref_c : float
        Reference temperature of ``d_ref_s``, degC.
    z_c : float
        Temperature change giving a tenfold change of D, K.
    cap_c : float
        Temperature above which the rate is no longer increased, degC.
    """

    d_ref_s: float
    t_ref_c: float
    z_c: float
    cap_c: float = 90.0

    def rate(self, temp_c: ArrayLike) -> NDArray[np.float64]:
        """Lethality rate at ``temp_c`` (degC), log reductions per second."""
        t = np.minimum(np.asarray(temp_c, dtype=float), self.cap_c)
        return np.power(10.0, (t - self.t_ref_c) / self.z_c) / self.d_ref_s

    def hold_time_s(self, temp_c: float, log_reduction: float) -> float:
        """Time at constant ``temp_c`` (degC) that gives ``log_reduction``, s."""
        return float(log_reduction / self.rate(temp_c))
