"""Reference solver against an independent finite-element solution (scikit-fem).

Source: scikit-fem (Gustafsson, T. and McBain, G. D., 2020, "scikit-fem: A Python package
for finite element assembly", Journal of Open Source Software 5(52), 2369; citation details
from memory), a general-purpose finite-element library. The independent solver below
shares nothing with ``obvert.thermal`` except the property table:

* unknown: nodal temperature (the reference solver uses cell enthalpy);
* space: P2 Lagrange elements, Gauss quadrature of the enthalpy and of k(T) grad T at the
  quadrature points (the reference uses finite volumes with Kirchhoff-mean face fluxes);
* boundaries: natural Robin/radiation condition at the end nodes (the reference solves a
  half-cell surface balance);
* time: variable-step BDF2 with a graded start after every change of boundary condition
  (the reference uses TR-BDF2 with equal steps), Newton with backtracking line search.

The food is a frozen ground-beef patty about 80 % lean (protein 17.2 % and fat 20 % from
USDA composition data as summarised in REFERENCES.md; water 62 % from memory; ash makes up
the rest), with the Choi and Okos (1986) property model and Tchigeov's ice fraction
(obvert.food.choi_okos).

Scenario (task brief): a 12 mm slab from -18 degC on a 180 degC plate (h = 400 W/m^2/K)
with air above (h = 15 W/m^2/K, 25 degC, emissivity 0.9), flipped at 90 s with a 2 s air
phase on both faces, cooked to 200 s. The cold spot (minimum temperature across the slab)
must agree within 0.3 K over the whole cook (measured: 0.036 K at 156 s, when the last ice
at the cold spot melts and its temperature rises steeply; at most 0.014 K at other times).
Run time about 10-15 s on one core.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve
from skfem import Basis, BilinearForm, ElementLineP2, LinearForm, MeshLine, asm
from skfem.helpers import dot, grad

from obvert.food.choi_okos import Composition, composition_table
from obvert.food.table import PropertyTable
from obvert.thermal.boundary import STEFAN_BOLTZMANN, FaceBC, Phase
from obvert.thermal.reference import simulate

THICKNESS = 0.012  # m
START_C = -18.0
PLATE = FaceBC(h=400.0, t_inf_c=180.0)
AIR = FaceBC(h=15.0, t_inf_c=25.0, emissivity=0.9)
PHASES = [Phase(90.0, PLATE, AIR), Phase(2.0, AIR, AIR, flip_before=True), Phase(108.0, PLATE, AIR)]
SAMPLE_S = 0.5  # compare every 0.5 s
TOL_K = 0.3  # task requirement on the cold spot

N_ELEMENTS = 160  # P2 elements: 321 nodes, 37.5 um node spacing
DT_S = 0.1  # BDF2 step after the graded start (0.05 s changes the cold spot < 0.06 K)
NEWTON_TOL_K = 1e-5


def patty_table() -> PropertyTable:
    comp = Composition(water=0.62, protein=0.172, fat=0.20, ash=0.008)
    return composition_table(comp, "ground beef, 80 % lean, frozen")


@LinearForm
def _residual(v, w):
    return w["hdot"] * v + w["k"] * dot(w["T"].grad, grad(v))


@BilinearForm
def _jacobian(u, v, w):
    return w["c"] * u * v + w["k"] * dot(grad(u), grad(v)) + w["dk"] * u * dot(w["T"].grad, grad(v))


def _face(bc: FaceBC, ts: float) -> tuple[float, float]:
    """Heat flux into the food and its derivative with respect to the surface temperature."""
    tk, tik = ts + 273.15, bc.t_inf_c + 273.15
    q = bc.h * (bc.t_inf_c - ts) + bc.emissivity * STEFAN_BOLTZMANN * (tik**4 - tk**4)
    return q, -bc.h - 4.0 * bc.emissivity * STEFAN_BOLTZMANN * tk**3


class FemSlab:
    """P2 finite elements in temperature, BDF2 in time (independent of obvert.thermal)."""

    def __init__(self, table: PropertyTable, thickness: float, n_el: int) -> None:
        self.tt, self.ee, self.kk = table.temp_c, table.vol_enthalpy, table.conductivity
        self.c_seg = np.diff(self.ee) / np.diff(self.tt)
        self.dk_seg = np.diff(self.kk) / np.diff(self.tt)
        mesh = MeshLine(np.linspace(0.0, thickness, n_el + 1))
        self.basis = Basis(mesh, ElementLineP2(), intorder=6)
        x = self.basis.doflocs[0]
        self.mirror = np.array([np.argmin(np.abs(x - (thickness - xi))) for xi in x])
        self.ends = (int(np.argmin(np.abs(x))), int(np.argmin(np.abs(x - thickness))))

    def _props(self, tv):
        j = np.clip(np.searchsorted(self.tt, tv, side="right") - 1, 0, self.tt.size - 2)
        return np.interp(tv, self.tt, self.ee), np.interp(tv, self.tt, self.kk), j

    def _residual(self, temp, hist, coef, dt, faces):
        tq = self.basis.interpolate(temp)
        h, k, _ = self._props(np.asarray(tq))
        hdot = (coef[0] * h + coef[1] * hist[0] + coef[2] * hist[1]) / dt
        r = asm(_residual, self.basis, hdot=hdot, k=k, T=tq)
        for dof, bc in zip(self.ends, faces, strict=True):
            r[dof] -= _face(bc, temp[dof])[0]
        return r, tq

    def _newton(self, temp, hist, coef, dt, faces):
        r, tq = self._residual(temp, hist, coef, dt, faces)
        norm = np.linalg.norm(r)
        for _ in range(60):
            _, k, j = self._props(np.asarray(tq))
            jac = asm(
                _jacobian, self.basis, c=coef[0] * self.c_seg[j] / dt, k=k, dk=self.dk_seg[j], T=tq
            )
            d = [-_face(bc, temp[dof])[1] for dof, bc in zip(self.ends, faces, strict=True)]
            jac = jac + sp.csr_matrix((d, (self.ends, self.ends)), shape=jac.shape)
            step = spsolve(jac.tocsc(), -r)
            lam = 1.0
            while True:  # backtracking: the apparent heat capacity jumps at the freezing point
                trial = temp + lam * step
                r_new, tq_new = self._residual(trial, hist, coef, dt, faces)
                n_new = np.linalg.norm(r_new)
                if n_new <= (1.0 - 1e-4 * lam) * norm or lam < 1e-3:
                    break
                lam *= 0.5
            temp, r, tq, norm = trial, r_new, tq_new, n_new
            if lam * np.max(np.abs(step)) < NEWTON_TOL_K:
                return temp
        raise RuntimeError("finite-element Newton did not converge")

    def _enthalpy_q(self, temp):
        return self._props(np.asarray(self.basis.interpolate(temp)))[0]

    def run(self, start_c: float, phases, dt: float, sample: float):
        """Return sample times and the minimum nodal temperature at each."""
        temp = np.full(self.basis.N, start_c)
        times, cold, t_start = [0.0], [temp.min()], 0.0
        for ph in phases:
            if ph.flip_before:
                temp = temp[self.mirror]
            n_rest = round(ph.duration_s / dt) - 1
            steps = [dt / 16, dt / 16, dt / 8, dt / 4, dt / 2] + [dt] * n_rest
            faces = (ph.face0, ph.face1)
            h_old, h_older, prev, prev_dt = self._enthalpy_q(temp), None, None, None
            ends = t_start + np.cumsum(steps)
            ends[-1] = t_start + ph.duration_s
            for h_step, t_now in zip(steps, ends, strict=True):
                if prev is None:  # backward Euler start after a change of boundary condition
                    coef, guess = (1.0, -1.0, 0.0), temp
                    h_older = np.zeros_like(h_old)
                else:  # variable-step BDF2, ratio om = dt_n / dt_{n-1}
                    om = h_step / prev_dt
                    coef = ((1 + 2 * om) / (1 + om), -(1 + om), om * om / (1 + om))
                    guess = temp + om * (temp - prev)
                new = self._newton(guess, (h_old, h_older), coef, h_step, faces)
                prev, prev_dt, temp = temp, h_step, new
                h_older, h_old = h_old, self._enthalpy_q(temp)
                if abs(t_now / sample - round(t_now / sample)) < 1e-9:
                    times.append(t_now)
                    cold.append(temp.min())
            t_start += ph.duration_s
        return np.array(times), np.array(cold)


def test_cold_spot_matches_finite_element_solution() -> None:
    table = patty_table()
    ref = simulate(table, THICKNESS, START_C, PHASES)
    times, fem_cold = FemSlab(table, THICKNESS, N_ELEMENTS).run(START_C, PHASES, DT_S, SAMPLE_S)
    assert times[-1] == 200.0 and times.size == 401
    rows = np.searchsorted(ref.t_s, times - 1e-9)
    np.testing.assert_allclose(ref.t_s[rows], times, atol=1e-9)
    ref_cold = ref.temp_c[rows].min(axis=1)
    diff = np.abs(ref_cold - fem_cold)
    assert diff.max() < TOL_K, (
        f"max cold-spot difference {diff.max():.3f} K at t={times[diff.argmax()]}"
    )
    # The scenario really thaws and cooks: the cold spot starts frozen and ends thawed.
    assert ref_cold[0] == START_C and ref_cold[-1] > table.freezing_point_c + 20.0
