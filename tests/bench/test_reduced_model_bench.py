"""The issue's accuracy targets for the reduced model, on the quick benchmark subset.

Run: ``python -m pytest tests/bench -m bench -q`` from the repository root (a few minutes). The
measurements come from tests/bench/reduced_model.py (method in docs/reduced-model.md):
a 6 mm chilled (4 degC) and a 10 mm frozen (-18 degC) demo patty, one flip.

Ground truth is the finite-volume reference at 400 cells and 0.02 s, itself checked
against the plane-wall series solution (Cengel, Heat and Mass Transfer, one-term
coefficients table), manufactured solutions (Roache 1998; Salari and Knupp 2000, SAND2000-
1444) and scikit-fem (Gustafsson and McBain 2020, JOSS 5:2369) in tests/physics.

Targets (the issue "measure the reduced model against the reference"): cook-time error at
most 0.1 % and cold-spot temperature error at most 0.3 K with at most 24 states (enthalpy
nodes; the lethality points are quadrature outputs, not states), frozen starts included.
The planner at the build's default configuration, and at the other configurations of the
quick run, is held to them as it is; a failure here is a measured shortfall (see
docs/reduced-model.md), not something to loosen; the known shortfalls are marked as strict
expected failures with the measured figure as the reason.
"""

from __future__ import annotations

import importlib.util
import math
import sys
from pathlib import Path

import numpy as np
import pytest
import spectral_lab as lab  # tests/bench is on sys.path

from obvert.thermal.spectral import SpectralModel, SpectralSettings

pytestmark = pytest.mark.bench

_SPEC = importlib.util.spec_from_file_location(
    "obvert_bench_reduced_model", Path(__file__).with_name("reduced_model.py")
)
bench = importlib.util.module_from_spec(_SPEC)
sys.modules[_SPEC.name] = bench  # dataclasses look their module up here
_SPEC.loader.exec_module(bench)

CASES = bench.CASES_QUICK
SETUP = bench.demo_setup()
PLANS = [SETUP.default, *[v for v in bench.QUICK.plans if v != SETUP.default]]
FROZEN = [c for c in CASES if c[1] < 0.0]
# Measured shortfalls (docs/reduced-model.md), kept so that a change that mends or worsens
# them shows: strict, so an unexpected pass fails the run and the mark has to go.
SHORT_PLAN = "the reduced model's plan alone (no correction) at 21 points: -0.22 to -0.25 %"
SHORT_COLD = "cold spot from frozen at the end of the thaw plateau: about 5 K at 16 nodes"
SHORT_TRUST = "the 400-cell reference is 0.19 K from 800 cells at the thaw jump, over 0.03 K"


def _case_marks(case: tuple[float, float], reason: str) -> object:
    marks = [pytest.mark.xfail(strict=True, reason=reason)] if case in FROZEN else []
    return pytest.param(case, marks=marks, id=f"{case[0]:g}mm{case[1]:+g}")


def _plan_marks(variant: bench.Variant) -> object:
    short = variant.rounds == 0 and variant.points == 21
    marks = [pytest.mark.xfail(strict=True, reason=SHORT_PLAN)] if short else []
    return pytest.param(variant, marks=marks, id=variant.label)


@pytest.fixture(scope="module")
def results() -> dict:
    return {(r["mm"], r["t0"]): r for r in bench.run(quick=True)}


def _plan(r: dict, v: bench.Variant) -> dict:
    (p,) = [p for p in r["plans"] if p["v"] == v]
    return p


def _fields(r: dict, nodes: int) -> dict:
    (e,) = [e for label, _n, e in r["fields"] if label == f"chebyshev {nodes}"]
    return e


def _trust(r: dict) -> dict:
    """Estimated error of the trusted run (400 cells, 0.02 s).

    Where the run also has 800 cells / 0.01 s (the frozen case), its error is taken as the
    gap to that run (in the asymptotic range this overstates it by a third); elsewhere it
    is estimated from the gap to 200 cells / 0.05 s by Richardson's estimate for a
    second-order scheme refined by 2 in space, ``gap / (2**2 - 1)`` (Roache, P. J. (1998),
    Verification and Validation in Computational Science and Engineering, Hermosa, on the
    grid convergence index).
    """
    if "trust_fine" in r:
        return r["trust_fine"]
    return {k: v / 3.0 for k, v in r["trust"].items() if k in ("cold", "time")}


@pytest.mark.parametrize("case", CASES)
def test_reference_time_to_target_is_converged(results, case):
    """The trusted run's time-to-target is accurate to a tenth of the cook-time target."""
    assert abs(_trust(results[case])["time"]) <= 0.1 * bench.TARGET_COOK


@pytest.mark.parametrize("case", [_case_marks(c, SHORT_TRUST) for c in CASES])
def test_reference_cold_spot_is_converged(results, case):
    """The trusted run's cold spot is accurate to a tenth of the cold-spot target."""
    assert _trust(results[case])["cold"] <= 0.1 * bench.TARGET_COLD_K


@pytest.mark.parametrize("variant", [_plan_marks(v) for v in PLANS])
@pytest.mark.parametrize("case", CASES)
def test_planned_cook_time(results, case, variant):
    """Issue target on the planner: planned done vs the reference's exact done for the
    planned flip, at most 0.1 %, with at most 24 states."""
    p = _plan(results[case], variant)
    assert variant.nodes <= bench.MAX_STATES
    assert abs(p["done"] / p["exact"] - 1.0) <= bench.TARGET_COOK


@pytest.mark.parametrize("case", CASES)
def test_fine_rule_cook_time(results, case):
    """Issue target for the done time of the default model and flip, found by CVODES with
    the log reduction checked on 801 points across the slab (lab ``done_on_model``): the
    model's temperature field, without the error of its lethality points."""
    p = _plan(results[case], SETUP.default)
    assert abs(p["fine"] / p["exact"] - 1.0) <= bench.TARGET_COOK


@pytest.mark.parametrize("case", [_case_marks(c, SHORT_COLD) for c in CASES])
def test_cold_spot(results, case):
    """Issue target (a): cold spot of the interpolated field at the default node count."""
    assert _fields(results[case], SETUP.default.nodes)["cold_slab"] <= bench.TARGET_COLD_K


@pytest.mark.parametrize("case", CASES)
def test_cold_spot_while_lethal(results, case):
    """Issue target (a) restricted to where lethality counts: the same error while the
    reference cold spot is at or above 40 degC, at the default node count."""
    assert _fields(results[case], SETUP.default.nodes)["cold_hot"] <= bench.TARGET_COLD_K


@pytest.mark.parametrize("case", CASES)
def test_done_time_from_default_reference(results, case):
    """The done time read off one 200-cell / 0.05 s reference run meets the cook-time target."""
    err, _ = results[case]["redo"]["reference 200/0.05"]
    assert abs(err) <= bench.TARGET_COOK


def _model(thickness_m: float, n: int, mapped: bool) -> SpectralModel:
    kind = lab.MappedSpectralModel if mapped else SpectralModel
    return kind(SETUP.table, thickness_m, SETUP.lethality, SpectralSettings(n))


@pytest.mark.parametrize("mapped", [False, True])
def test_interpolation_is_exact_for_polynomials(mapped):
    """Barycentric interpolation reproduces any polynomial of degree n-1 in the model's
    Chebyshev coordinate (Berrut and Trefethen 2004, SIAM Review 46:501, sec. 5)."""
    m = _model(0.01, 13, mapped)
    x = np.linspace(0.0, m.thickness_m, 57)
    xi_nodes = np.cos(np.pi * np.arange(m.n) / (m.n - 1))
    g = 1.0 - 2.0 * x / m.thickness_m
    xi = np.sin(g * np.arcsin(m.alpha)) / m.alpha if mapped else g
    coef = np.linspace(-1.0, 1.0, m.n)
    exact = np.polynomial.chebyshev.chebval(xi, coef)
    nodal = np.polynomial.chebyshev.chebval(xi_nodes, coef)
    assert np.abs(lab.interpolation_matrix(m, x) @ nodal - exact).max() < 1e-11
    # at its own nodes the matrix is the identity (the inverse map matches the forward one)
    assert np.abs(lab.interpolation_matrix(m, m.x_m) - np.eye(m.n)).max() < 1e-12


@pytest.mark.parametrize("kind", ["mapped", "clustered"])
def test_lethality_points_interpolate_cubics_exactly(kind):
    """Each lethality point of the lab models interpolates from its 4 nearest nodes, so a
    cubic in x is reproduced to rounding (uniqueness of the interpolating polynomial of
    degree < 4 on 4 points: Berrut and Trefethen 2004, SIAM Review 46:501, sec. 1)."""
    args = (SETUP.table, 0.01, SETUP.lethality, SpectralSettings(16))
    m = lab.MappedSpectralModel(*args) if kind == "mapped" else lab.ClusteredSpectralModel(*args)
    s = m.x_m / m.thickness_m
    cubic = 1.0 - 3.0 * s + 5.0 * s**2 - 2.0 * s**3
    sx = m.x_lr / m.thickness_m
    assert np.abs(m.p_lr @ cubic - (1.0 - 3.0 * sx + 5.0 * sx**2 - 2.0 * sx**3)).max() < 1e-12
    assert m.m == 21 and np.count_nonzero(m.p_lr, axis=1).max() <= 4


def test_clustered_layout_spacing():
    """``lethality_layout`` keeps the faces, is symmetric under a flip, and its spacing ratio
    face / mid-slab tends to ``1 / sqrt(1 - alpha**2)``, the ratio of the map's derivative
    d/du arcsin(alpha u) at u = 1 and u = 0 (analytical)."""
    alpha, count = 0.9, 401
    x = lab.lethality_layout(1.0, count, alpha)
    assert x[0] == 0.0 and x[-1] == 1.0
    assert np.abs(x + x[::-1] - 1.0).max() < 1e-15
    dx = np.diff(x)
    ratio = dx[0] / dx[count // 2]
    assert abs(ratio * math.sqrt(1.0 - alpha**2) - 1.0) < 0.05
    assert np.allclose(lab.lethality_layout(1.0, 21), np.linspace(0.0, 1.0, 21))


def test_mapped_derivative_converges_at_the_predicted_rate():
    """The mapped-grid derivative of sin(pi x / L) converges geometrically at the rate set
    by the map's branch point xi = 1/alpha: error ~ rho**-(n-1) with
    rho = 1/alpha + sqrt(1/alpha**2 - 1), the Bernstein ellipse through that point
    (Trefethen, L. N. (2013), Approximation Theory and Approximation Practice, SIAM, ch. 8,
    chapter from memory; the map is Kosloff and Tal-Ezer 1993, J. Comput. Phys. 104:457).
    """
    nodes = np.array([12, 16, 20, 24, 28])
    errs = []
    for n in nodes:
        m = _model(0.01, int(n), True)
        k = np.pi / m.thickness_m
        errs.append(np.abs(m.d @ np.sin(k * m.x_m) - k * np.cos(k * m.x_m)).max() / k)
    a = _model(0.01, 12, True).alpha
    rho = 1.0 / a + np.sqrt(1.0 / a**2 - 1.0)
    slope = -np.polyfit(nodes - 1, np.log(errs), 1)[0]
    assert abs(slope / np.log(rho) - 1.0) < 0.1
    assert np.all(np.asarray(errs) <= rho ** -(nodes - 1.0))
