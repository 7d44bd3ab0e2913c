"""Continuation between grid nodes: the predictor, the hand-over object, and the optimum.

The optimum of a node must not depend on where IPOPT started beyond its tolerance: a start
from a neighbouring node's solution is checked against the cold start of the same node
(the cold start is the planner's own earlier behaviour, the check is self-consistency).
The predictor's thickness rule is the Fourier number of conduction, ``t ~ L**2 / alpha``
(any heat-transfer text; e.g. Carslaw and Jaeger, Conduction of Heat in Solids, 1959,
chapter I, from memory).
"""

from __future__ import annotations

import pickle

import numpy as np
import pytest

from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.plan.collocation import Grid
from obvert.plan.ocp import Planner, Requirement, Solution
from obvert.plan.problem import predict
from obvert.plan.schedule import Surroundings
from obvert.thermal.boundary import FaceBC
from obvert.thermal.spectral import SpectralModel, SpectralSettings


def _sol(thick: float, t0: float, primal: list[float], kinds=("flip",)) -> Solution:
    p = np.array(primal, dtype=float)
    return Solution(kinds, thick, t0, p[:2] * 100.0, p, np.ones((1, 3)), p * 0.5, p * 0.25)


def test_predict_extrapolates_along_start_temperature() -> None:
    a = _sol(0.01, -6.0, [1.0, 2.0, 3.0, 4.0])
    b = _sol(0.01, -2.0, [1.2, 2.2, 3.0, 5.0])
    p = predict([a, b], ("flip",), 0.01, 2.0, 2, [slice(2, 3)])
    # linear through (-2, b) with the slope from a to b, one step further
    assert np.allclose(p.primal, [1.4, 2.4, 3.0, 6.0])
    assert np.allclose(p.lam_x, 0.5 * np.array([1.4, 2.4, 3.0, 6.0]))


def test_predict_scales_times_with_thickness_squared() -> None:
    a = _sol(0.01, 4.0, [1.0, 2.0, 3.0, 4.0])
    p = predict([a], ("flip",), 0.02, 4.0, 2, [slice(2, 3)])
    assert np.allclose(p.primal, [4.0, 8.0, 12.0, 4.0])  # dwells, element time x4; state kept


def test_predict_refuses_another_sequence_or_size() -> None:
    a = _sol(0.01, 4.0, [1.0, 2.0, 3.0, 4.0])
    with pytest.raises(ValueError, match="kinds"):
        predict([a], ("flip", "flip"), 0.01, 4.0, 2, [])
    with pytest.raises(ValueError, match="shape"):
        predict([a, _sol(0.01, 2.0, [1.0, 2.0])], ("flip",), 0.01, 4.0, 2, [])
    with pytest.raises(ValueError, match="empty"):
        predict([], ("flip",), 0.01, 4.0, 2, [])


def test_start_from_a_neighbour_reaches_the_cold_optimum() -> None:
    table = composition_table(Composition(water=0.68, protein=0.19, fat=0.11, ash=0.02), "lean")
    model = SpectralModel(table, 0.006, LethalityModel(103.6, 60.0, 5.586), SpectralSettings(8))
    env = Surroundings(FaceBC(450.0, 190.0), FaceBC(12.0, 30.0, 0.9), None, 1.5)
    planner = Planner(model, env, Requirement(7.0), 10.0, Grid(4))
    nb = planner.solve(("flip",), 1.0, (np.array([40.0, 30.0]),))
    cold = planner.solve(("flip",), 4.0, (np.array([40.0, 30.0]),))
    handed = pickle.loads(pickle.dumps(nb.solution))  # as from another process
    warm = Planner(model, env, Requirement(7.0), 10.0, Grid(4)).solve(
        ("flip",), 4.0, neighbours=(handed,)
    )
    assert warm.solver_status == "Solve_Succeeded"
    assert warm.iterations < cold.iterations
    # IPOPT's tolerance (1e-7 on the scaled problem) bounds the spread of the optimum
    assert warm.cook_time_s == pytest.approx(cold.cook_time_s, rel=1e-6)
    assert np.allclose(warm.dwell_s, cold.dwell_s, rtol=1e-5)


def test_start_from_a_thinner_neighbour_reaches_the_cold_optimum() -> None:
    table = composition_table(Composition(water=0.68, protein=0.19, fat=0.11, ash=0.02), "lean")
    env = Surroundings(FaceBC(450.0, 190.0), FaceBC(12.0, 30.0, 0.9), None, 1.5)
    req = Requirement(7.0, 71.0)

    def planner(thick_m: float) -> Planner:
        model = SpectralModel(
            table, thick_m, LethalityModel(103.6, 60.0, 5.586), SpectralSettings(8)
        )
        return Planner(model, env, req, 10.0, Grid(4))

    nb = planner(0.006).solve(("flip",), 4.0, (np.array([40.0, 30.0]),))
    cold = planner(0.008).solve(("flip",), 4.0, (np.array([70.0, 55.0]),))
    warm = planner(0.008).solve(("flip",), 4.0, neighbours=(nb.solution,))
    assert warm.iterations < cold.iterations
    assert warm.cook_time_s == pytest.approx(cold.cook_time_s, rel=1e-6)
