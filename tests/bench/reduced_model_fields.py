"""Benchmark part (a)/(b): one reduced-model run measured against the trusted reference.

Loaded by tests/bench/reduced_model.py (method and notation in its docstring and in
docs/reduced-model.md). Plain functions of a model, a schedule and a reference run; the
configuration (a ``Variant``) is read through its ``points``, ``stencil``, ``alpha`` and
``rule`` attributes only.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import spectral_lab as lab  # tests/bench is on sys.path

from obvert.food.lethality import LethalityModel
from obvert.plan.schedule import Schedule, Surroundings, phases_for
from obvert.thermal.reference import ReferenceResult
from obvert.thermal.spectral import SpectralModel

SETTLE_S, HOT_C, STRIDE, X_FINE = 2.0, 40.0, 2, 201
THAW_LEVEL_C = 0.0  # the cold spot's thaw is timed where it crosses this temperature


@dataclass(frozen=True)
class History:
    """Reduced-model outputs at the reference's (strided) rows, t = 0 first."""

    t_s: np.ndarray
    temps: np.ndarray  # node temperatures, degC, lab frame, (rows, n)
    mirrored: np.ndarray
    cold_slab: np.ndarray
    lr_own: float  # smallest of the model's own LR states at removal


def reduced_history(
    model: SpectralModel, env: Surroundings, t0: float, sch: Schedule, ref: ReferenceResult
) -> History:
    """Simulate ``sch`` on the reduced model (CVODES) at the reference's rows."""
    n = model.n
    interp = lab.interpolation_matrix(model, np.linspace(0.0, model.thickness_m, X_FINE))
    x, start, rows_t, temps, mir = model.initial_state(t0), 0.0, [[0.0]], [], [[False]]
    temps.append(np.full((1, n), t0))
    for k, ph in enumerate(phases_for(sch, env)):
        if ph.flip_before:
            x = np.array(model.flip(x)).ravel()
        t_rows = ref.t_s[ref.phase_index == k]
        t_rows = t_rows[t_rows > start][::-1][::STRIDE][::-1]  # keep the phase end
        traj = np.array(
            model.trajectory(ph.face0, ph.face1, (t_rows - start) / ph.duration_s)(
                x, ph.duration_s, start
            )
        )
        temps.append(np.array(model.temp_of(traj[:n].T.reshape(1, -1))).reshape(-1, n))
        rows_t.append(t_rows)
        mir.append(np.full(t_rows.size, bool(ref.mirrored[ref.phase_index == k][-1])))
        x, start = traj[:, -1], start + ph.duration_s
    t_nodes = np.vstack(temps)
    return History(
        np.concatenate(rows_t),
        t_nodes,
        np.concatenate(mir),
        (t_nodes @ interp.T).min(axis=1),
        float(x[n:].min()),
    )


def rule_lr(
    h: History, model: SpectralModel, points: int, stencil: int, alpha: float, lm: LethalityModel
) -> float:
    """Smallest LR at removal at a rule's points (trapezoid on the rows), log10.

    ``points`` lethality points (0: the nodes) in ``lethality_layout`` with ``alpha``, each
    interpolated from ``stencil`` nodes (0: the global polynomial).
    """
    if points:
        x = lab.lethality_layout(model.thickness_m, points, alpha)
        tp = h.temps @ lab.point_matrix(model, x, stencil).T
    else:
        tp = h.temps.copy()
    tp[h.mirrored] = tp[h.mirrored, ::-1]  # food frame (layouts are symmetric)
    rate = lm.rate(tp)
    return float(np.sum(0.5 * (rate[1:] + rate[:-1]) * np.diff(h.t_s)[:, None], axis=0).min())


def first_crossing(t_s: np.ndarray, temp_c: np.ndarray, level_c: float) -> float:
    """First time ``temp_c`` rises through ``level_c``, s (linear between rows; NaN if never)."""
    above = np.flatnonzero(temp_c >= level_c)
    if above.size == 0 or above[0] == 0:
        return float("nan")
    i = int(above[0])
    return float(np.interp(level_c, temp_c[i - 1 : i + 1], t_s[i - 1 : i + 1]))


def thaw_timing(h: History, ref: ReferenceResult, t0: float) -> dict:
    """When the cold spot thaws, model against reference (frozen starts; NaN otherwise).

    ``shift_s``: the model's crossing of THAW_LEVEL_C less the reference's, s (negative:
    thawed early). ``rise_k_per_s``: the reference cold spot's steepest rise in the 1 s
    after its crossing, K/s, so ``0.3 K / rise`` is the timing a 0.3 K error allows.
    """
    nan = {"shift_s": float("nan"), "rise_k_per_s": float("nan")}
    if t0 >= THAW_LEVEL_C:
        return nan
    cold_ref = ref.temp_c.min(axis=1)
    t_ref = first_crossing(ref.t_s, cold_ref, THAW_LEVEL_C)
    t_mod = first_crossing(h.t_s, h.cold_slab, THAW_LEVEL_C)
    if not np.isfinite(t_ref):
        return nan
    sel = (ref.t_s >= t_ref - 1.0) & (ref.t_s <= t_ref + 1.0)
    rise = np.diff(cold_ref[sel]) / np.diff(ref.t_s[sel])
    return {"shift_s": t_mod - t_ref, "rise_k_per_s": float(rise.max())}


def field_errors(
    h: History,
    model: SpectralModel,
    ref: ReferenceResult,
    t0: float,
    flip_air_s: float,
    rules: tuple[Any, ...],
    lm: LethalityModel,
) -> dict:
    """(a) and (b) of one reduced run against the trusted reference."""
    t = h.t_s[1:]
    cold_ref = np.interp(t, ref.t_s, ref.temp_c.min(axis=1))
    keep = np.ones(t.size, dtype=bool)
    flip = ref.t_s[np.argmax(ref.phase_index == 1)]
    for e in (0.0, flip, flip + flip_air_s):
        keep &= ~((t > e - 1e-9) & (t < e + SETTLE_S))
    hot = keep & (cold_ref >= HOT_C)
    lr_ref = float(ref.log_reduction[-1].min())
    slab = np.abs(h.cold_slab[1:] - cold_ref)
    worst = int(np.argmax(np.where(keep, slab, -1.0)))
    lr = {v.rule: rule_lr(h, model, v.points, v.stencil, v.alpha, lm) - lr_ref for v in rules}
    lr["slab"] = rule_lr(h, model, X_FINE, 0, 0.0, lm) - lr_ref
    return {
        "cold_nodes": float(np.abs(h.temps[1:].min(axis=1) - cold_ref)[keep].max()),
        "cold_slab": float(slab[keep].max()),
        "cold_hot": float(slab[hot].max()) if hot.any() else np.nan,
        "worst": (float(t[worst]), float(cold_ref[worst])),
        "thaw": thaw_timing(h, ref, t0),
        "lr_own": h.lr_own - lr_ref,
        "lr": lr,
    }


def ref_gap(
    coarse: ReferenceResult, fine: ReferenceResult, sch: Schedule, flip_air_s: float
) -> dict:
    """Discretisation gap of the reference: cold spot (K), time-to-target (relative) and
    the time the cold spot thaws (coarse less fine, s)."""
    t = fine.t_s
    keep = np.ones(t.size, dtype=bool)
    for e in (0.0, sch.events[0].at_s, sch.events[0].at_s + flip_air_s):
        keep &= ~((t > e - 1e-9) & (t < e + SETTLE_S))
    cold = np.interp(t, coarse.t_s, coarse.temp_c.min(axis=1)) - fine.temp_c.min(axis=1)

    def ttt(res: ReferenceResult) -> float:
        lr = res.log_reduction.min(axis=1)
        slope = (lr[-1] - lr[-11]) / (res.t_s[-1] - res.t_s[-11])
        return float(res.t_s[-1] - (lr[-1] - 7.0) / slope)

    thaw = [first_crossing(r.t_s, r.temp_c.min(axis=1), THAW_LEVEL_C) for r in (coarse, fine)]
    return {
        "cold": float(np.abs(cold[keep]).max()),
        "time": ttt(coarse) / ttt(fine) - 1.0,
        "thaw_s": thaw[0] - thaw[1],  # NaN for a start above THAW_LEVEL_C
    }
