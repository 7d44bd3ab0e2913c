"""Benchmark: batched reference simulation against the scalar reference solver.

Usage: ``python tests/bench/batch_reference.py [--sizes 1 50 500] [--scalar-sample 8]``
(the full run takes some minutes on one core).

Random cooks (fixed seed) of a Choi-Okos ground-beef patty (obvert.food.choi_okos): thickness
6-18 mm, start -18, -5, 2 or 4 degC, plate 160-210 degC (h 300-500 W/m^2/K, some drooping after
loading), one flip with 2 s in the air, total cook 60-240 s, at the default reference settings
(200 cells, 0.05 s). For each batch size the batched run times all the cases; the scalar solver
times up to ``--scalar-sample`` of the same cases in the same run (timing all 500 would take
some 10 minutes). Printed: seconds per case of each, their ratio, and the largest differences
between the two on the sampled cases (K and log10). The target of the task is a ratio of at
least 10 for 500 cases.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.thermal.batch import CookCase, ReferenceSummary, simulate_many
from obvert.thermal.boundary import FaceBC, Phase
from obvert.thermal.reference import ReferenceSettings, simulate

BEEF = composition_table(Composition(water=0.62, protein=0.172, fat=0.20, ash=0.008), "beef")
KINETICS = LethalityModel(d_ref_s=30.0, t_ref_c=60.0, z_k=5.6)  # illustrative
AIR = FaceBC(h=15.0, t_inf_c=25.0, emissivity=0.9)
SETTINGS = ReferenceSettings()


def cases(count: int, seed: int = 1) -> list[CookCase]:
    """Random cooks as described in the module docstring."""
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(count):
        total = rng.uniform(60.0, 240.0)
        flip = rng.uniform(0.3, 0.6) * total
        droop = rng.choice([0.0, 20.0])
        plate = FaceBC(rng.uniform(300.0, 500.0), rng.uniform(160.0, 210.0), 0.0, droop, 25.0)
        phases = [
            Phase(flip, plate, AIR),
            Phase(2.0, AIR, AIR, flip_before=True),
            Phase(total - flip - 2.0, plate, AIR),
        ]
        start = float(rng.choice([-18.0, -5.0, 2.0, 4.0]))
        out.append(CookCase(rng.uniform(0.006, 0.018), start, phases))
    return out


def scalar(case: CookCase) -> ReferenceSummary:
    """The scalar solver's summary of one case."""
    r = simulate(BEEF, case.thickness_m, case.start_temp_c, case.phases, KINETICS, SETTINGS)
    return ReferenceSummary(
        float(r.log_reduction[-1].min()),
        float(r.temp_c[-1].min()),
        r.temp_c[-1],
        r.log_reduction[-1],
        bool(r.mirrored[-1]),
    )


def run(size: int, sample: int) -> None:
    """Time one batch size and print its line."""
    batch = cases(size)
    t0 = time.perf_counter()
    got = simulate_many(BEEF, batch, KINETICS, SETTINGS)
    t_batch = (time.perf_counter() - t0) / size
    picked = batch[: min(size, sample)]
    t0 = time.perf_counter()
    want = [scalar(c) for c in picked]
    t_scalar = (time.perf_counter() - t0) / len(picked)
    pairs = list(zip(got[: len(want)], want, strict=True))
    d_t = max(float(np.abs(g.final_temp_c - w.final_temp_c).max()) for g, w in pairs)
    d_lr = max(abs(g.min_log_reduction - w.min_log_reduction) for g, w in pairs)
    print(
        f"{size:5d} cases: batched {t_batch:7.3f} s/case, scalar {t_scalar:7.3f} s/case "
        f"({len(picked)} sampled), ratio {t_scalar / t_batch:5.1f}; "
        f"max |dT| {d_t:.1e} K, max |d min LR| {d_lr:.1e}",
        flush=True,
    )


def main() -> None:
    """Parse the arguments and run every size."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[1, 50, 500])
    parser.add_argument("--scalar-sample", type=int, default=8)
    args = parser.parse_args()
    for size in args.sizes:
        run(size, args.scalar_sample)


if __name__ == "__main__":
    main()
