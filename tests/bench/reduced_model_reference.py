"""Benchmark part: the reference side (fixed schedule, exact done times).

Loaded by tests/bench/reduced_model.py (method in its docstring and docs/reduced-model.md).
``su`` is that script's ``Setup`` (food table, surroundings, lethality model).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from obvert.plan.schedule import Event, Schedule, phases_for
from obvert.thermal.reference import ReferenceResult, ReferenceSettings, simulate

TRUSTED = ReferenceSettings(n_cells=400, dt_max_s=0.02)
DEFAULT_REF = ReferenceSettings()  # 200 cells, 0.05 s: what certification uses
FINE = ReferenceSettings(n_cells=800, dt_max_s=0.01)
FLIP_FRACTION = 0.45


def one_flip(flip_s: float, done_s: float) -> Schedule:
    """Schedule with one flip and removal, s."""
    return Schedule((Event("flip", flip_s), Event("done", done_s)))


def reference(su: Any, mm: float, t0: float, sch: Schedule, rs: ReferenceSettings):
    """Reference run of a schedule."""
    return simulate(su.table, mm * 1e-3, t0, phases_for(sch, su.env), su.lethality, rs)


def crossing(res: ReferenceResult, target: float) -> float | None:
    """First time in the last phase at which the min LR reaches ``target``, s (interpolated)."""
    sel = res.phase_index == res.phase_index[-1]
    t, lr = res.t_s[sel], res.log_reduction[sel].min(axis=1)
    i = int(np.argmax(lr >= target))
    if lr[i] < target or i == 0:
        return None
    return float(np.interp(target, lr[i - 1 : i + 1], t[i - 1 : i + 1]))


def exact_done(
    su: Any, mm: float, t0: float, flip_s: float, guess_s: float, rs: ReferenceSettings = TRUSTED
) -> float:
    """Reference's minimum done time for a flip at ``flip_s``, s."""
    horizon = max(guess_s * 1.04 + 2.0, flip_s + su.env.flip_air_s + 5.0)
    while True:
        done = crossing(reference(su, mm, t0, one_flip(flip_s, horizon), rs), 7.0)
        if done is not None:
            return done
        horizon *= 1.4


def fixed_schedule(su: Any, mm: float, t0: float) -> tuple[Schedule, ReferenceResult]:
    """Flip at 45 % of the cook, done at the reference's time-to-target (secant, 200 cells)."""
    guess = 1.1e6 * (mm * 1e-3) ** 2 * (2.0 if t0 < su.table.freezing_point_c else 1.0) + 30.0

    def gap(total: float) -> float:
        return exact_done(su, mm, t0, FLIP_FRACTION * total, 1.5 * total, DEFAULT_REF) - total

    a, ga = guess, gap(guess)
    b = a + ga
    gb = gap(b)
    while abs(gb) > 1e-3:
        a, ga, b = b, gb, b - gb * (b - a) / (gb - ga)
        gb = gap(b)
    sch = one_flip(FLIP_FRACTION * b, b)
    return sch, reference(su, mm, t0, sch, DEFAULT_REF)
