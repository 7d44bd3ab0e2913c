"""Benchmark: cost per time step of the compiled reference kernel, single and many cases.

Usage: ``python tests/bench/batch_reference.py [--sample 8] [--against-tree DIR]``
(about a minute, most of it the cold compile).

Random cooks (fixed seed) of a Choi-Okos ground-beef patty (obvert.food.choi_okos): thickness
6-18 mm, start -18, -5, 2 or 4 degC, plate 160-210 degC (h 300-500 W/m^2/K, some drooping after
loading), one flip with 2 s in the air, total cook 60-240 s, at the default reference settings
(200 cells, 0.05 s). Printed, all in one run:

* the baseline: seconds per time step of single runs (:func:`simulate`, full history) over the
  first ``--sample`` cases;
* the cost per time step of :func:`simulate_many` on 8 and on 32 cases, as a ratio to that
  baseline, and the largest differences between its summaries and the single runs (both run
  the same kernel, so they are expected to be exactly 0);
* the first-call time of a fresh process (import, compile or cache load, and a 1 s cook) with
  an empty compilation cache and with a warm one, as a ratio to the baseline step;
* with ``--against-tree DIR`` (a source tree holding ``compiler/obvert``, e.g. an older commit
  unpacked with ``git archive``), the same single runs timed in a process that imports that
  tree, and the ratio of its cost per step to this tree's.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.thermal.batch import CookCase, simulate_many
from obvert.thermal.boundary import FaceBC, Phase
from obvert.thermal.reference import ReferenceSettings, simulate

BEEF = composition_table(Composition(water=0.62, protein=0.172, fat=0.20, ash=0.008), "beef")
KINETICS = LethalityModel(d_ref_s=30.0, t_ref_c=60.0, z_k=5.6)  # illustrative
AIR = FaceBC(h=15.0, t_inf_c=25.0, emissivity=0.9)
SETTINGS = ReferenceSettings()

#: A fresh process: import, first call (compile or cache load) of a 1 s cook, wall time.
FIRST_CALL = """
import time
t0 = time.perf_counter()
from obvert.food.table import constant_table
from obvert.thermal.boundary import FaceBC, Phase
from obvert.thermal.reference import simulate
table = constant_table("solid", 0.45, 1050.0, 3500.0)
simulate(table, 0.01, 5.0, [Phase(1.0, FaceBC(400.0, 180.0), FaceBC(15.0, 25.0, 0.9))])
print(time.perf_counter() - t0)
"""


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


def single_runs(count: int) -> tuple[float, list[np.ndarray], list[float]]:
    """Seconds per step of single runs of the first ``count`` cases; final rows and min LR."""
    picked = cases(count)
    simulate(BEEF, 0.01, 4.0, [Phase(0.1, AIR, AIR)], KINETICS, SETTINGS)  # first call
    steps, temps, lrs = 0, [], []
    t0 = time.perf_counter()
    for c in picked:
        r = simulate(BEEF, c.thickness_m, c.start_temp_c, c.phases, KINETICS, SETTINGS)
        steps += r.t_s.size - 1
        temps.append(r.temp_c[-1])
        lrs.append(float(r.log_reduction[-1].min()))
    return (time.perf_counter() - t0) / steps, temps, lrs


def step_total(batch: list[CookCase]) -> int:
    """Number of time steps of all cases at the default settings."""
    dt = SETTINGS.dt_max_s
    return sum(
        max(1, int(np.ceil(p.duration_s / dt - 1e-9))) if p.duration_s else 0
        for c in batch
        for p in c.phases
    )


def first_call_s(cache_dir: str, pythonpath: str | None = None) -> float:
    """Wall time of :data:`FIRST_CALL` in a fresh process using ``cache_dir`` as the cache."""
    env = dict(os.environ, NUMBA_CACHE_DIR=cache_dir)
    if pythonpath is not None:
        env["PYTHONPATH"] = pythonpath
    out = subprocess.run(
        [sys.executable, "-c", FIRST_CALL], env=env, capture_output=True, text=True, check=True
    )
    return float(out.stdout.split()[-1])


def main() -> None:
    """Parse the arguments, time everything and print the ratios."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sample", type=int, default=8, help="cases of the single-run baseline")
    parser.add_argument("--against-tree", type=Path, default=None)
    parser.add_argument("--single-only", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.single_only:  # child process of --against-tree: print the baseline as JSON
        print(json.dumps({"s_per_step": single_runs(args.sample)[0]}))
        return

    with tempfile.TemporaryDirectory() as cache:
        cold = first_call_s(cache)
        warm = first_call_s(cache)
    base, temps, lrs = single_runs(args.sample)
    print(f"baseline: single run, {args.sample} cases: {1e6 * base:.1f} us per step (= 1)")
    for size in (8, 32):
        batch = cases(size)
        t0 = time.perf_counter()
        got = simulate_many(BEEF, batch, KINETICS, SETTINGS)
        per_step = (time.perf_counter() - t0) / step_total(batch)
        k = min(size, args.sample)
        pairs = list(zip(got[:k], temps[:k], lrs[:k], strict=True))
        d_t = max(float(np.abs(g.final_temp_c - t).max()) for g, t, _ in pairs)
        d_lr = max(abs(g.min_log_reduction - lr) for g, _, lr in pairs)
        print(
            f"simulate_many, {size:2d} cases: {per_step / base:5.2f} x baseline per step "
            f"({1e6 * per_step:.1f} us); vs single runs max |dT| {d_t:.1e} K, "
            f"max |d min LR| {d_lr:.1e}",
            flush=True,
        )
    print(
        f"first call in a fresh process (import + compile or cache load + 1 s cook): "
        f"cold cache {cold:.1f} s = {cold / base:,.0f} steps, "
        f"warm cache {warm:.2f} s = {warm / base:,.0f} steps; cold/warm {cold / warm:.0f}"
    )
    if args.against_tree is not None:
        tree = args.against_tree.resolve()
        env = dict(os.environ, PYTHONPATH=str(tree / "compiler"))
        cmd = [sys.executable, __file__, "--single-only", "--sample", str(args.sample)]
        out = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True)
        other = json.loads(out.stdout.splitlines()[-1])["s_per_step"]
        print(
            f"single run of {tree}: {1e6 * other:.1f} us per step = {other / base:.1f} x "
            "this tree's"
        )


if __name__ == "__main__":
    main()
