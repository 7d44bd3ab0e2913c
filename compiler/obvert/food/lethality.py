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
    z_k : float
        Temperature change giving a tenfold change of D, K.
    cap_c : float
        Temperature above which the rate is no longer increased, degC.
    """

    d_ref_s: float
    t_ref_c: float
    z_k: float
    cap_c: float = 90.0

    def rate(self, temp_c: ArrayLike) -> NDArray[np.float64]:
        """Lethality rate at ``temp_c`` (degC), log reductions per second."""
        t = np.minimum(np.asarray(temp_c, dtype=float), self.cap_c)
        return np.power(10.0, (t - self.t_ref_c) / self.z_k) / self.d_ref_s


def log_reduction(model: LethalityModel, time_s: ArrayLike, temp_c: ArrayLike) -> float:
    """Log reduction accumulated over a sampled temperature history (trapezoid rule).

    Parameters
    ----------
    model : LethalityModel
        Kinetics of the target organism.
    time_s : array_like
        Strictly increasing sample times, s (at least two).
    temp_c : array_like
        Temperature at each sample time, degC.

    Returns
    -------
    float
        Accumulated log10 reduction, -.
    """
    t = np.asarray(time_s, dtype=float)
    temp = np.asarray(temp_c, dtype=float)
    if t.ndim != 1 or t.size < 2:
        raise ValueError(f"time_s has shape {t.shape}: allowed a 1-D array of at least 2 times")
    if temp.shape != t.shape:
        raise ValueError(f"temp_c has shape {temp.shape}: allowed the shape of time_s {t.shape}")
    for label, arr in (("time_s", t), ("temp_c", temp)):
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            j = int(bad[0])
            raise ValueError(f"{label}[{j}] = {float(arr[j])!r}: allowed finite values only")
    steps = np.diff(t)
    if np.any(steps <= 0.0):
        i = int(np.flatnonzero(steps <= 0.0)[0]) + 1
        raise ValueError(
            f"time_s[{i}] = {float(t[i])!r} s is not after time_s[{i - 1}] = "
            f"{float(t[i - 1])!r} s; times must be strictly increasing"
        )
    rate = model.rate(temp)
    return float(np.sum(0.5 * (rate[1:] + rate[:-1]) * steps))
