"""Random points and tolerance draws over the envelope meet the target on the reference.

The table is the tolerance test spec (tests/cli/tolerance_spec.toml: the demo envelope,
6-12 mm and -18 to 4 degC, with declared plate offset and droop, weak contact and
measurement errors) built through the command line with the bilinear float target. Each
draw takes a measured thickness and start temperature uniformly over the envelope, asks
the *compiled C lookup* for its schedule, draws the real conditions uniformly inside the
declared tolerances (thickness and start within the measurement errors, plate anywhere
from setpoint down to the offset, a droop up to the declared size with a recovery no
slower than declared, contact between nominal and the declared low fraction), and
simulates the schedule on the reference model. None may fall below the spec's target: the
7-log Salmonella reduction of the preset (fitted to USDA FSIS 1999, Appendix A) and the
spec's 71 degC at removal.
The longer run (10,000 draws) is in tests/bench/random_draws.py.
"""

from __future__ import annotations

import struct
from dataclasses import replace

import numpy as np
import pytest

from obvert.certify.batch import judge_many
from obvert.certify.cells import schedule_of
from obvert.problem import problem_of

from .conftest import build_program

DRAWS = 2000


def _hex64(v: float) -> str:
    return struct.pack(">d", v).hex()


def draw_cases(spec, manifest, toolchain, tmp_path, harness, out_dir, n: int, seed: int):
    """``n`` random (measured point, real conditions) cases and their C-lookup schedules."""
    name = manifest["table"]["name"]
    files = {p.name: p.read_bytes() for p in out_dir.iterdir() if p.suffix in (".c", ".h")}
    source = harness(f"{name}.h", name, False, bilinear=True)
    proc, exe = build_program(toolchain, tmp_path, files, source)
    assert proc.returncode == 0, proc.stderr
    rng = np.random.default_rng(seed)
    env = manifest["envelope"]
    x = rng.uniform(*env["thickness_m"], n)
    t = rng.uniform(*env["start_temp_c"], n)
    stdin = "".join(f"{_hex64(a)} {_hex64(b)}\n" for a, b in zip(x, t, strict=True))
    lines = toolchain.run(exe, ["f64"], stdin).splitlines()
    assert len(lines) == n
    tick = float(manifest["tick_s"])
    tol = spec.tolerances
    cases, schedules = [], []
    nominal = problem_of(replace(spec, tolerances=type(tol)())).cases_at(0.01, 0.0)[0]
    for a, b, line in zip(x, t, lines, strict=True):
        fields = line.split()
        assert fields[0] == "0", f"lookup refused ({a * 1e3:.3f} mm, {b:.2f} degC): {line}"
        events = [tuple(int(v) for v in f.split(":")) for f in fields if ":" in f]
        schedules.append(schedule_of(events, tick))
        plate = nominal.env.plate
        real_plate = replace(
            plate,
            h=plate.h * (1.0 - rng.uniform(0.0, tol.contact_low_fraction)),
            t_inf_c=plate.t_inf_c - rng.uniform(0.0, tol.plate_offset_k),
            droop_k=rng.uniform(0.0, tol.plate_droop_k),
            droop_tau_s=tol.plate_recovery_s * rng.uniform(0.25, 1.0),
        )
        cases.append(
            replace(
                nominal,
                thickness_m=float(a) + rng.uniform(-1, 1) * tol.thickness_error_m,
                start_temp_c=float(b) + rng.uniform(-1, 1) * tol.start_temp_error_k,
                env=replace(nominal.env, plate=real_plate),
            )
        )
    return cases, schedules


@pytest.mark.parametrize("toolchain", ["gcc"], indirect=True)
def test_random_draws_meet_the_target(toolchain, tmp_path, harness, built_tolerances) -> None:
    b = built_tolerances
    cases, schedules = draw_cases(
        b.spec, b.manifest, toolchain, tmp_path, harness, b.out, DRAWS, seed=20261201
    )
    verdicts = judge_many(cases, schedules, jobs=2)
    target = b.spec.safety.log_reduction
    failed = [
        (c.thickness_m, c.start_temp_c, v.min_log_reduction, v.min_temp_at_removal_c)
        for c, v in zip(cases, verdicts, strict=True)
        if not v.passed
    ]
    assert not failed, f"{len(failed)} of {DRAWS} draws below target: {failed[:5]}"
    margin = min(v.min_log_reduction for v in verdicts) - target
    t_margin = min(v.min_temp_at_removal_c for v in verdicts) - b.spec.safety.min_temp_c
    print(  # noqa: T201
        f"{DRAWS} draws: smallest margin {margin:.4f} log, {t_margin:.3f} K at removal"
    )
    assert margin >= 0.0 and t_margin >= 0.0


@pytest.mark.bench
@pytest.mark.parametrize("toolchain", ["gcc"], indirect=True)
def test_ten_thousand_draws_meet_the_target(toolchain, tmp_path, harness, built_tolerances):
    """The longer run of the issue (10,000 draws): ``pytest -m bench tests/c``."""
    b = built_tolerances
    n = 10_000
    cases, schedules = draw_cases(
        b.spec, b.manifest, toolchain, tmp_path, harness, b.out, n, seed=20261202
    )
    verdicts = judge_many(cases, schedules, jobs=2)
    failed = sum(not v.passed for v in verdicts)
    margin = min(v.min_log_reduction for v in verdicts) - b.spec.safety.log_reduction
    print(f"{n} draws: {failed} below target, smallest margin {margin:.4f} log")  # noqa: T201
    assert failed == 0
