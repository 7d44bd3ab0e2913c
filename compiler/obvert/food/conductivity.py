"""Effective thermal conductivity of two-phase mixtures, W/(m K).

Structural models for an isotropic mixture of two phases with conductivities ``k1``, ``k2``
and volume fraction ``v1`` of phase 1 (``1 - v1`` of phase 2), as reviewed for foods by
Carson, J. K. (2006), "Review of effective thermal conductivity models for foods", Int. J.
Refrig. 29, doi:10.1016/j.ijrefrig.2006.03.016:

* parallel and series: the upper and lower bounds for any structure;
* Maxwell-Eucken, either phase continuous: for an isotropic mixture these are the
  Hashin-Shtrikman bounds (Hashin, Z. and Shtrikman, S. (1962), J. Appl. Phys. 33:3125);
* Levy, L. (1981), "A modified Maxwell-Eucken equation for calculating the thermal
  conductivity of two-component solutions or mixtures", Int. J. Refrig. 4:223 (title and
  volume from memory): the Maxwell-Eucken form with a modified volume fraction.

Frozen foods: Fricke, B. A. and Becker, B. R. (2001), "Evaluation of thermophysical property
models for foods", HVAC&R Research 7(4):311-340, found Levy's model best for conductivity
against a compiled experimental data set. Carson, J. K., Wang, J., North, M. F. and Cleland,
D. J. (2016), "Effective thermal conductivity prediction of foods using composition and
temperature data", J. Food Eng. 175:65-73, recommend the parallel model for the components
other than ice and air, then Levy to add ice (then effective medium theory for air, not
needed for non-porous meat); :func:`two_step_ice` is the ice step.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]


def _as_conductivity(name: str, value: ArrayLike) -> Array:
    arr = np.asarray(value, dtype=float)
    bad = np.flatnonzero(~(np.isfinite(arr) & (arr > 0.0)))
    if bad.size:
        raise ValueError(
            f"{name} = {float(arr.flat[bad[0]])!r}: allowed a finite conductivity > 0 W/(m K)"
        )
    return arr


def _as_fraction(name: str, value: ArrayLike) -> Array:
    arr = np.asarray(value, dtype=float)
    bad = np.flatnonzero(~((arr >= 0.0) & (arr <= 1.0)))
    if bad.size:
        value = float(arr.flat[bad[0]])
        raise ValueError(f"{name} = {value!r}: allowed a volume fraction in [0, 1]")
    return arr


def parallel(k1: ArrayLike, k2: ArrayLike, v1: ArrayLike) -> Array:
    """Parallel (volume-weighted arithmetic) model, the upper bound (Carson 2006).

    Parameters
    ----------
    k1, k2 : array_like
        Phase conductivities, W/(m K), > 0.
    v1 : array_like
        Volume fraction of phase 1, - in [0, 1].

    Returns
    -------
    ndarray
        ``v1*k1 + (1 - v1)*k2``, W/(m K).
    """
    a, b, v = _as_conductivity("k1", k1), _as_conductivity("k2", k2), _as_fraction("v1", v1)
    return v * a + (1.0 - v) * b


def series(k1: ArrayLike, k2: ArrayLike, v1: ArrayLike) -> Array:
    """Series (volume-weighted harmonic) model, the lower bound, W/(m K) (Carson 2006).

    Arguments as for :func:`parallel`; returns ``1/(v1/k1 + (1 - v1)/k2)``.
    """
    a, b, v = _as_conductivity("k1", k1), _as_conductivity("k2", k2), _as_fraction("v1", v1)
    return 1.0 / (v / a + (1.0 - v) / b)


def maxwell_eucken(k_cont: ArrayLike, k_disp: ArrayLike, v_disp: ArrayLike) -> Array:
    """Maxwell-Eucken model: spheres of one phase dispersed in the other, continuous one.

    Parameters
    ----------
    k_cont, k_disp : array_like
        Conductivities of the continuous and the dispersed phase, W/(m K), > 0.
    v_disp : array_like
        Volume fraction of the dispersed phase, - in [0, 1].

    Returns
    -------
    ndarray
        ``k_c (2 k_c + k_d - 2 v_d (k_c - k_d)) / (2 k_c + k_d + v_d (k_c - k_d))``,
        W/(m K) (Carson 2006). With the better conductor continuous this is the upper,
        with the poorer one continuous the lower Hashin-Shtrikman bound (1962).
    """
    kc = _as_conductivity("k_cont", k_cont)
    kd = _as_conductivity("k_disp", k_disp)
    v = _as_fraction("v_disp", v_disp)
    return kc * (2.0 * kc + kd - 2.0 * v * (kc - kd)) / (2.0 * kc + kd + v * (kc - kd))


def levy_fraction(ratio: ArrayLike, v1: ArrayLike) -> Array:
    """Levy's modified volume fraction ``F1`` (-) for ``ratio = k1/k2 > 0``, ``v1`` in [0, 1].

    Levy (1981), as usually printed (from memory): ``sigma = (L-1)**2/((L+1)**2 + L/2)``,
    ``F1 = 0.5*((2/sigma - 1) + 2 R1 - sqrt((2/sigma - 1 + 2 R1)**2 - 8 R1/sigma))``,
    ``L = k1/k2``, ``R1 = v1``. ``F1`` is the smaller root of
    ``F**2 - (2/sigma - 1 + 2 R1) F + 2 R1/sigma = 0``, evaluated here as
    ``4 R1/(b + sqrt(b**2 - 8 R1 sigma))``, ``b = 2 - sigma + 2 R1 sigma`` (the same root
    multiplied through by ``sigma``, so ``L -> 1``, ``sigma -> 0``, ``F1 -> R1`` needs no
    special case). ``F1(0) = 0``, ``F1(1) = 1``; ``sigma`` is unchanged by ``L -> 1/L``.
    """
    lam = _as_conductivity("ratio", ratio)
    r = _as_fraction("v1", v1)
    sigma = (lam - 1.0) ** 2 / ((lam + 1.0) ** 2 + 0.5 * lam)
    b = 2.0 - sigma + 2.0 * r * sigma
    return 4.0 * r / (b + np.sqrt(b * b - 8.0 * r * sigma))


def levy(k1: ArrayLike, k2: ArrayLike, v1: ArrayLike) -> Array:
    """Levy (1981) model: Maxwell-Eucken with Levy's modified volume fraction.

    The form used is the Maxwell-Eucken equation for phase 1 dispersed in continuous
    phase 2, ``k = k2 (2 + L + 2 (L - 1) F1) / (2 + L - (L - 1) F1)`` with ``L = k1/k2``
    and ``F1`` from :func:`levy_fraction`. It returns ``k2`` at ``v1 = 0`` and ``k1`` at
    ``v1 = 1`` and gives the same value when the phase labels are swapped (checked in
    tests/physics/test_conductivity_models.py). The form often quoted from memory,
    ``k1 (2 + L - 2 (L - 1) F1) / (2 + L + (L - 1) F1)``, returns ``k1`` at ``v1 = 0`` and
    so cannot be right as written; it is not used.

    Arguments as for :func:`parallel`; returns the effective conductivity, W/(m K).
    """
    a, b = _as_conductivity("k1", k1), _as_conductivity("k2", k2)
    lam = a / b
    f1 = levy_fraction(lam, v1)
    return b * (2.0 + lam + 2.0 * (lam - 1.0) * f1) / (2.0 + lam - (lam - 1.0) * f1)


def parallel_mixture(conductivities: Sequence[ArrayLike], volumes: Sequence[ArrayLike]) -> Array:
    """Parallel model over components, ``sum(v_i k_i)/sum(v_i)``, W/(m K).

    ``conductivities`` (W/(m K), > 0) and ``volumes`` (volume fractions, - in [0, 1], of
    positive sum) are equal-length sequences; the volumes are renormalised to their sum
    (Carson et al. 2016, first step).
    """
    if len(conductivities) != len(volumes) or not volumes:
        raise ValueError(
            f"{len(conductivities)} conductivities, {len(volumes)} volumes: allowed two "
            "non-empty sequences of equal length"
        )
    ks = [_as_conductivity(f"conductivities[{i}]", k) for i, k in enumerate(conductivities)]
    vs = [_as_fraction(f"volumes[{i}]", v) for i, v in enumerate(volumes)]
    total = np.asarray(sum(vs))
    if np.any(total <= 0.0):
        raise ValueError(f"sum(volumes) = {float(total[total <= 0.0].flat[0])!r}: allowed > 0")
    return sum(v * k for v, k in zip(vs, ks, strict=True)) / total


def two_step_ice(k_nonice: ArrayLike, k_ice: ArrayLike, ice_volume_fraction: ArrayLike) -> Array:
    """Add ice to the non-ice matrix with :func:`levy` (Carson et al. 2016, second step).

    Parameters
    ----------
    k_nonice : array_like
        Conductivity of the non-ice components (unfrozen water and solids, parallel model
        over volumes renormalised to the non-ice volume, :func:`parallel_mixture`), W/(m K).
    k_ice : array_like
        Conductivity of ice, W/(m K), > 0.
    ice_volume_fraction : array_like
        Ice volume over total volume, - in [0, 1].

    Returns
    -------
    ndarray
        Effective conductivity, W/(m K); ``k_nonice`` where there is no ice.
    """
    k_m = _as_conductivity("k_nonice", k_nonice)
    k_i = _as_conductivity("k_ice", k_ice)
    return levy(k_i, k_m, _as_fraction("ice_volume_fraction", ice_volume_fraction))


def ice_step_mixture(
    conductivities: dict[str, ArrayLike], volumes: dict[str, ArrayLike], ice: str = "ice"
) -> Array:
    """Parallel over the non-ice components, then :func:`two_step_ice` (Carson et al. 2016).

    ``conductivities`` (W/(m K)) and ``volumes`` (volume fractions, -) are keyed by
    component, with the same keys including ``ice``; returns W/(m K).
    """
    if ice not in volumes or set(conductivities) != set(volumes):
        raise ValueError(
            f"conductivities keys {sorted(conductivities)}, volumes keys {sorted(volumes)}: "
            f"allowed the same keys, including {ice!r}"
        )
    rest = [n for n in volumes if n != ice]
    k_rest = parallel_mixture([conductivities[n] for n in rest], [volumes[n] for n in rest])
    v_ice = _as_fraction(f"volumes[{ice!r}]", volumes[ice])
    phi = v_ice / (v_ice + sum(np.asarray(volumes[n], dtype=float) for n in rest))
    return two_step_ice(k_rest, conductivities[ice], phi)
