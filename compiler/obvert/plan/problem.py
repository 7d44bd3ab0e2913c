"""What a minimum-time problem is made of: the requirement, the scenarios, the error.

The lowest module of :mod:`obvert.plan`'s planner: the transcription
(:mod:`obvert.plan._nlp`) and the planner (:mod:`obvert.plan.ocp`) both import from here, and
nothing here imports from either.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from obvert.food.criteria import Requirement
from obvert.plan.schedule import Surroundings

__all__ = ["Member", "PlanError", "Requirement", "Solution", "predict"]
from obvert.thermal.spectral import SpectralModel


class PlanError(RuntimeError):
    """A minimum-time problem could not be solved."""


@dataclass(frozen=True)
class Member:
    """One scenario a plan must satisfy: a slab model on an appliance, start offset.

    Attributes
    ----------
    model : SpectralModel
        Reduced model of the slab (its thickness and food properties).
    env : Surroundings
        Plate, air and platen conditions.
    start_offset_k : float
        Added to the requested start temperature, K (e.g. minus the measurement error).
    """

    model: SpectralModel
    env: Surroundings
    start_offset_k: float = 0.0


@dataclass(frozen=True, eq=False)
class Solution:
    """A solved node's primal-dual point, to start a neighbouring node from (picklable).

    Attributes
    ----------
    kinds : tuple of str
        Event sequence before done.
    thickness_m : float
        Slab thickness of the main scenario, m.
    start_temp_c : float
        Start temperature the problem was solved for, degC.
    dwell_s : ndarray (dwells,)
        Optimal dwell before each event, s.
    primal : ndarray
        The NLP's decision variables at the optimum (scaled as in the transcription).
    lr_scale : ndarray (scenarios, points)
        Scale of each scenario's log-reduction variables (NLP parameters), log10 units.
    lam_x : ndarray
        Bound multipliers at the optimum.
    lam_g : ndarray
        Constraint multipliers at the optimum.
    """

    kinds: tuple[str, ...]
    thickness_m: float
    start_temp_c: float
    dwell_s: NDArray[np.float64]
    primal: NDArray[np.float64]
    lr_scale: NDArray[np.float64]
    lam_x: NDArray[np.float64]
    lam_g: NDArray[np.float64]


def predict(
    neighbours: Sequence[Solution],
    kinds: tuple[str, ...],
    thickness_m: float,
    start_temp_c: float,
    n_dwell_vars: int,
    dwell_var_blocks: Sequence[slice],
) -> Solution:
    """Predicted primal-dual point of a node from solved neighbours of the same sequence.

    Along the start temperature the point is extrapolated (or interpolated) linearly from
    the two neighbours of the nearest thickness closest in start temperature; with one
    neighbour it is taken as it is. Across thickness the dwells and element lengths scale
    with the thickness squared (conduction time ``L**2 / alpha``); states and scaled log
    reductions are kept.

    Parameters
    ----------
    neighbours : sequence of Solution
        Solved neighbouring nodes with the same event sequence and problem size.
    kinds : tuple of str
        Event sequence of the node to solve.
    thickness_m : float
        Thickness of the node to solve, m.
    start_temp_c : float
        Start temperature of the node to solve, degC.
    n_dwell_vars : int
        Number of leading primal entries that are the scaled dwells.
    dwell_var_blocks : sequence of slice
        Further primal entries that are times (element lengths), scaled like the dwells.

    Raises
    ------
    ValueError
        No neighbour, or a neighbour of another sequence or size.
    """
    if not neighbours:
        raise ValueError("neighbours: empty; allowed one or more solutions of the same sequence")
    for k, nb in enumerate(neighbours):
        if nb.kinds != kinds:
            raise ValueError(f"neighbours[{k}].kinds = {nb.kinds!r}: allowed {kinds!r}")
        if nb.primal.shape != neighbours[0].primal.shape:
            raise ValueError(
                f"neighbours[{k}].primal has shape {nb.primal.shape}: allowed "
                f"{neighbours[0].primal.shape} (same scenarios and grid)"
            )
    near_l = min(abs(nb.thickness_m - thickness_m) for nb in neighbours)
    row = [nb for nb in neighbours if abs(abs(nb.thickness_m - thickness_m) - near_l) <= 1e-12]
    row.sort(key=lambda nb: (abs(nb.start_temp_c - start_temp_c), nb.start_temp_c))
    a = row[0]
    primal, lam_x, lam_g = a.primal.copy(), a.lam_x.copy(), a.lam_g.copy()
    b = next((nb for nb in row[1:] if abs(nb.start_temp_c - a.start_temp_c) > 1e-9), None)
    if b is not None:
        w = (start_temp_c - a.start_temp_c) / (b.start_temp_c - a.start_temp_c)
        primal += w * (b.primal - a.primal)
        lam_x += w * (b.lam_x - a.lam_x)
        lam_g += w * (b.lam_g - a.lam_g)
    ratio = (thickness_m / a.thickness_m) ** 2
    if ratio != 1.0:
        primal[:n_dwell_vars] *= ratio
        for blk in dwell_var_blocks:
            primal[blk] *= ratio
    return Solution(
        kinds,
        thickness_m,
        start_temp_c,
        primal[:n_dwell_vars].copy(),
        primal,
        a.lr_scale.copy(),
        lam_x,
        lam_g,
    )
