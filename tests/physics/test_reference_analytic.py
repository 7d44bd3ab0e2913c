"""Reference solver against the analytical plane-wall solution with constant properties.

Sources
-------
* Cengel, Y. A., Heat and Mass Transfer (McGraw-Hill), table of one-term approximation
  coefficients of transient conduction in a plane wall (values copied in
  the project's shared references file, section "Conduction: plane wall, one-term coefficients").
* Full Fourier series of the same problem (separation of variables, same chapter); for
  unequal coefficients on the two faces, the Sturm-Liouville eigenfunctions
  ``X = mu cos(mu x/L) + Bi0 sin(mu x/L)`` with ``tan mu = mu (Bi0 + Bi1)/(mu^2 - Bi0 Bi1)``
  (Bi on the full thickness L), as in REFERENCES.md; the same separation of variables is
  in Carslaw and Jaeger, Conduction of Heat in Solids, 2nd ed., 1959, chapter III (chapter
  from memory). The two series are cross-checked against each other below.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from obvert.food.table import constant_table
from obvert.thermal.boundary import FaceBC, Phase
from obvert.thermal.reference import simulate

K, RHO, CP = 0.5, 1000.0, 4000.0  # W/m/K, kg/m^3, J/kg/K (a water-like solid)
ALPHA = K / (RHO * CP)
HALF = 0.005  # half-thickness of the wall, m
T_INF, T_I = 100.0, 0.0
FOURIER = (0.05, 0.2, 0.5, 1.0)
N_TERMS = 80
TOL = 0.005  # 0.5 % relative error in dimensionless temperature (task requirement)

#: Cengel, Heat and Mass Transfer, one-term coefficients, plane wall (Bi -> zeta_1, C_1).
CENGEL_ONE_TERM = {
    0.01: (0.0998, 1.0017),
    0.1: (0.3111, 1.0161),
    0.5: (0.6533, 1.0701),
    1.0: (0.8603, 1.1191),
    2.0: (1.0769, 1.1785),
    5.0: (1.3138, 1.2403),
    10.0: (1.4289, 1.2620),
}


def symmetric_eigenvalues(bi: float, n: int) -> np.ndarray:
    """Roots of zeta tan zeta = Bi, one in each ((i) pi, (i + 1/2) pi)."""

    def f(z: float) -> float:
        return z * np.sin(z) - bi * np.cos(z)

    return np.array([brentq(f, i * np.pi, i * np.pi + 0.5 * np.pi, xtol=1e-14) for i in range(n)])


def symmetric_theta(bi: float, fo: float, xi: np.ndarray) -> np.ndarray:
    """theta/theta_i = sum C_n exp(-zeta_n^2 Fo) cos(zeta_n xi), xi from the centre (Cengel)."""
    z = symmetric_eigenvalues(bi, N_TERMS)
    c = 4.0 * np.sin(z) / (2.0 * z + np.sin(2.0 * z))
    return np.sum(c[:, None] * np.exp(-(z[:, None] ** 2) * fo) * np.cos(z[:, None] * xi), axis=0)


def asymmetric_eigenvalues(bi0: float, bi1: float, n: int) -> np.ndarray:
    """Roots of (mu^2 - Bi0 Bi1) sin mu - mu (Bi0 + Bi1) cos mu, one in each (i pi, (i+1) pi)."""

    def f(m: float) -> float:
        return (m * m - bi0 * bi1) * np.sin(m) - m * (bi0 + bi1) * np.cos(m)

    lo = [1e-9] + [i * np.pi for i in range(1, n)]
    return np.array([brentq(f, a, (i + 1) * np.pi, xtol=1e-14) for i, a in enumerate(lo)])


def asymmetric_theta(bi0: float, bi1: float, fo: float, xi: np.ndarray) -> np.ndarray:
    """Series with orthogonal eigenfunctions; xi = x/L from face 0, Fo on the full thickness."""
    theta = np.zeros_like(xi)
    for m in asymmetric_eigenvalues(bi0, bi1, N_TERMS):

        def x_n(s: float, m: float = m) -> float:
            return m * np.cos(m * s) + bi0 * np.sin(m * s)

        coef = quad(x_n, 0.0, 1.0)[0] / quad(lambda s, f=x_n: f(s) ** 2, 0.0, 1.0, limit=200)[0]
        theta += coef * np.exp(-m * m * fo) * x_n(xi)
    return theta


@pytest.mark.parametrize("bi", sorted(CENGEL_ONE_TERM))
def test_one_term_coefficients_match_cengel_table(bi: float) -> None:
    # Cengel, Heat and Mass Transfer, one-term coefficients table (4 decimals printed).
    zeta1 = symmetric_eigenvalues(bi, 1)[0]
    c1 = 4.0 * np.sin(zeta1) / (2.0 * zeta1 + np.sin(2.0 * zeta1))
    zeta_tab, c_tab = CENGEL_ONE_TERM[bi]
    assert zeta1 == pytest.approx(zeta_tab, abs=6e-5)
    assert c1 == pytest.approx(c_tab, abs=6e-5)


def test_limit_of_large_biot_matches_cengel_table() -> None:
    # Cengel table, Bi -> infinity column: zeta_1 = pi/2 = 1.5708, C_1 = 4/pi = 1.2732.
    zeta1 = symmetric_eigenvalues(1e9, 1)[0]
    assert zeta1 == pytest.approx(1.5708, abs=6e-5)
    assert 4.0 * np.sin(zeta1) / (2.0 * zeta1 + np.sin(2.0 * zeta1)) == pytest.approx(
        1.2732, abs=6e-5
    )


def _run(h0: float, h1: float, fo_end: float, length_fo: float):
    table = constant_table("water-like solid", K, RHO, CP)
    t_end = fo_end * length_fo**2 / ALPHA
    phase = Phase(t_end, FaceBC(h0, T_INF), FaceBC(h1, T_INF))
    return simulate(table, 2.0 * HALF, T_I, [phase])


def _row(result, t: float) -> np.ndarray:
    i = int(np.argmin(np.abs(result.t_s - t)))
    assert result.t_s[i] == pytest.approx(t, abs=1e-9)  # steps fall on the sampling times
    return (result.temp_c[i] - T_INF) / (T_I - T_INF)


@pytest.mark.parametrize("bi", [0.1, 1.0, 10.0])
def test_symmetric_wall_matches_series_solution(bi: float) -> None:
    # Cengel, plane wall, both faces convective, Bi = h L/k on the half-thickness L;
    # exact many-term series. Relative error in theta at every cell below 0.5 %.
    h = bi * K / HALF
    result = _run(h, h, max(FOURIER), HALF)
    xi = (result.x_m - HALF) / HALF
    for fo in FOURIER:
        exact = symmetric_theta(bi, fo, xi)
        rel = np.abs(_row(result, fo * HALF**2 / ALPHA) - exact) / exact
        assert rel.max() < TOL, f"Bi={bi}, Fo={fo}: max relative error {rel.max():.2e}"


def test_asymmetric_wall_matches_series_solution() -> None:
    # Unequal coefficients (plate-like and air-like faces), Bi on the full thickness 2*HALF;
    # eigenvalues from tan mu = mu (Bi0 + Bi1)/(mu^2 - Bi0 Bi1) (REFERENCES.md; Carslaw and
    # Jaeger 1959, chapter III). Relative error in theta at every cell below 0.5 %.
    length = 2.0 * HALF
    h0, h1 = 400.0, 15.0
    bi0, bi1 = h0 * length / K, h1 * length / K
    result = _run(h0, h1, 0.5, length)
    xi = result.x_m / length
    for fo in (0.05, 0.1, 0.25, 0.5):
        exact = asymmetric_theta(bi0, bi1, fo, xi)
        rel = np.abs(_row(result, fo * length**2 / ALPHA) - exact) / exact
        assert rel.max() < TOL, f"Fo={fo}: max relative error {rel.max():.2e}"


def test_asymmetric_series_reduces_to_symmetric_series() -> None:
    # Consistency of the two exact solutions used above (independent formulas): equal Biot
    # numbers on both faces must give the Cengel series (Bi_full = 2 Bi_half, Fo_full = Fo/4).
    xi = np.linspace(0.0, 1.0, 11)
    for bi_half in (0.1, 1.0, 10.0):
        a = asymmetric_theta(2.0 * bi_half, 2.0 * bi_half, 0.2 / 4.0, xi)
        s = symmetric_theta(bi_half, 0.2, 2.0 * xi - 1.0)
        np.testing.assert_allclose(a, s, rtol=1e-9, atol=1e-12)
