"""Many-case reference simulation against the scalar reference solver.

The independent check is the scalar solver itself (obvert.thermal.reference.simulate, verified
in tests/physics against analytical series, manufactured solutions and a scikit-fem solution):
both run the one compiled kernel (obvert.thermal.kernel), so what is checked here is the
many-case bookkeeping (last row, removal row, mirroring, cases without steps), which may differ
from the scalar run by no more than the Newton tolerance (1e-8 K). Tolerances of the task: max
|T| difference < 1e-3 K, smallest log reduction within 1e-4 log10.
"""

from __future__ import annotations

import numpy as np
import pytest

import obvert.thermal.batch as batch
from obvert.certify.batch import judge_many
from obvert.certify.node import judge
from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.food.table import constant_table
from obvert.plan.ocp import Requirement
from obvert.plan.schedule import Event, Schedule, Surroundings, phases_for
from obvert.problem import Case
from obvert.thermal.batch import CookCase, ReferenceSummary, simulate_many, simulate_one
from obvert.thermal.boundary import FaceBC, Phase
from obvert.thermal.kernel import PropertyLookup
from obvert.thermal.reference import ReferenceSettings, simulate

TOL_K, TOL_LOG = 1e-3, 1e-4
# Ground beef about 80 % lean (USDA composition as summarised in REFERENCES.md; water from
# memory), Choi and Okos (1986) properties: a frozen start thaws with its latent heat.
BEEF = composition_table(Composition(water=0.62, protein=0.172, fat=0.20, ash=0.008), "beef")
# Illustrative kinetics (D = 30 s at 60 degC, z = 5.6 K; of the order of the USDA FSIS
# Appendix A fits, not a certified value).
KINETICS = LethalityModel(d_ref_s=30.0, t_ref_c=60.0, z_k=5.6)
PLATE = FaceBC(h=420.0, t_inf_c=190.0)
DROOP = FaceBC(h=450.0, t_inf_c=200.0, droop_k=35.0, droop_tau_s=20.0)
PLATEN = FaceBC(h=300.0, t_inf_c=175.0, droop_k=15.0, droop_tau_s=10.0)
AIR = FaceBC(h=15.0, t_inf_c=25.0, emissivity=0.9)


def scalar_summary(case: CookCase, settings: ReferenceSettings) -> ReferenceSummary:
    res = simulate(BEEF, case.thickness_m, case.start_temp_c, case.phases, KINETICS, settings)
    last = len(case.phases) - 1
    return batch.summarize(res, last if case.removal_phase is None else case.removal_phase)


def assert_agree(a: ReferenceSummary, b: ReferenceSummary) -> None:
    assert np.max(np.abs(a.final_temp_c - b.final_temp_c)) < TOL_K
    assert abs(a.min_log_reduction - b.min_log_reduction) < TOL_LOG
    assert abs(a.min_temp_at_removal_c - b.min_temp_at_removal_c) < TOL_K
    np.testing.assert_allclose(a.final_log_reduction, b.final_log_reduction, rtol=1e-6, atol=1e-9)
    assert a.mirrored == b.mirrored


FLIP, TURN, REST = Phase(2.0, AIR, AIR, True), Phase(0.0, AIR, AIR, True), Phase(10.0, AIR, AIR)
VARIED = [
    # frozen start, one flip with 2 s in the air (Choi-Okos thawing)
    CookCase(0.008, -18.0, [Phase(45.0, PLATE, AIR), FLIP, Phase(50.0, PLATE, AIR)]),
    # drooping plate and platen, a flip without air time, removal before a rest phase
    CookCase(0.006, 4.0, [Phase(30.0, DROOP, AIR), TURN, Phase(25.0, DROOP, PLATEN), REST], 2),
    # phase lengths that are no multiple of the step, two flips, thicker slab
    CookCase(
        0.014,
        -5.0,
        [Phase(20.03, DROOP, AIR), FLIP, Phase(33.37, DROOP, AIR), FLIP, Phase(15.0, PLATE, AIR)],
    ),
    # a start profile per cell, mirrored before the first phase
    CookCase(0.005, np.linspace(-10.0, 8.0, 200), [TURN, Phase(35.0, PLATE, PLATEN)]),
]


def test_varied_cases_agree_with_scalar_solver() -> None:
    settings = ReferenceSettings()  # the defaults certification uses: 200 cells, 0.05 s
    got = simulate_many(BEEF, VARIED, KINETICS, settings)
    assert len(got) == len(VARIED)
    for case, summary in zip(VARIED, got, strict=True):
        assert_agree(summary, scalar_summary(case, settings))
    assert got[0].min_temp_at_removal_c > 0.0 > VARIED[0].start_temp_c  # really thawed
    assert got[1].min_log_reduction > 0.1  # lethality accumulates where compared
    assert got[1].mirrored and not got[2].mirrored and got[3].mirrored


COARSE = ReferenceSettings(n_cells=60, dt_max_s=0.1)


def test_results_do_not_depend_on_the_batch() -> None:
    many = simulate_many(BEEF, VARIED[:3], KINETICS, COARSE)
    alone = simulate_many(BEEF, [VARIED[2]], KINETICS, COARSE)[0]
    np.testing.assert_array_equal(many[2].final_temp_c, alone.final_temp_c)
    np.testing.assert_array_equal(many[2].final_log_reduction, alone.final_log_reduction)


def test_case_without_steps_and_no_lethality() -> None:
    cases = [
        CookCase(0.01, 5.0, [Phase(0.0, PLATE, AIR, True)]),
        CookCase(0.01, 5.0, [Phase(3.0, PLATE, AIR)]),
    ]
    got = simulate_many(BEEF, cases, None, COARSE)
    assert got[0].mirrored and np.allclose(got[0].final_temp_c, 5.0, atol=1e-9)
    assert got[1].min_log_reduction == 0.0 and np.all(got[1].final_log_reduction == 0.0)
    ref = simulate(BEEF, 0.01, 5.0, cases[1].phases, None, COARSE)
    assert np.max(np.abs(ref.temp_c[-1] - got[1].final_temp_c)) < TOL_K


def test_case_needing_step_halving_matches_scalar_solver() -> None:
    # 10 s steps on 1000 cells across 4 mm of frozen beef make Newton cycle at the thawing
    # front: the kernel halves the step, in a batch exactly as in a scalar run.
    settings = ReferenceSettings(n_cells=1000, dt_max_s=10.0)
    hot = FaceBC(h=650.0, t_inf_c=230.0)
    case = CookCase(
        0.004, -18.0, [Phase(60.0, hot, AIR), Phase(3.0, AIR, AIR, True), Phase(60.0, hot, hot)]
    )
    got = simulate_many(BEEF, [case], KINETICS, settings)[0]
    want = scalar_summary(case, settings)
    np.testing.assert_array_equal(got.final_temp_c, want.final_temp_c)
    assert got.min_log_reduction == want.min_log_reduction


def test_bucket_lookup_matches_binary_search() -> None:
    props = PropertyLookup(BEEF)
    e = np.random.default_rng(3).uniform(props.e_lo, props.e_hi, 200_000)
    e = np.concatenate([e, props.e_in, [props.e_lo, props.e_hi]])  # breakpoints themselves
    np.testing.assert_array_equal(props.segment(e), np.searchsorted(props.e_in, e, side="right"))


@pytest.mark.parametrize(
    ("case", "pattern"),
    [
        (CookCase(-0.01, 5.0, [Phase(1.0, PLATE, AIR)]), r"cases\[1\]\.thickness_m = -0\.01"),
        (CookCase(0.01, 5.0, [Phase(-1.0, PLATE, AIR)]), r"cases\[1\]\.phases\[0\]\.duration_s"),
        (CookCase(0.01, 5.0, [Phase(1.0, PLATE, AIR)], 1), r"removal_phase = 1 .*\[0, 0\]"),
        (
            CookCase(0.01, 5.0, [Phase(1.0, FaceBC(400.0, 20.0, droop_k=70.0), AIR)]),
            r"cases\[1\]\.phases\[0\]\.face0\.droop_k = 70\.0",
        ),
    ],
)
def test_bad_case_is_rejected_with_index_and_field(case: CookCase, pattern: str) -> None:
    good = CookCase(0.01, 5.0, [Phase(1.0, PLATE, AIR)])
    with pytest.raises(ValueError, match=pattern):
        simulate_many(BEEF, [good, case], KINETICS, COARSE)


def test_non_case_is_rejected() -> None:
    with pytest.raises(TypeError, match=r"cases\[0\] = .* must be a CookCase"):
        simulate_many(BEEF, [(0.01, 5.0, [])], KINETICS, COARSE)  # type: ignore[list-item]


# ------------------------------------------------------------------------------ judge_many


def _case(table, thickness, start, requirement, platen=None) -> Case:
    env = Surroundings(plate=PLATE, air=AIR, platen=platen, flip_air_s=2.0)
    return Case(table, thickness, start, env, KINETICS, requirement, COARSE)


def test_judge_many_matches_judge() -> None:
    lean = constant_table("lean-meat-like solid", 0.45, 1050.0, 3500.0)
    flip = Schedule((Event("flip", 40.0), Event("done", 85.0)))
    clam = Schedule((Event("platen_close", 0.0), Event("platen_open", 45.0), Event("done", 45.0)))
    pairs = [
        (_case(BEEF, 0.008, -18.0, Requirement(5.0)), flip),  # fails: frozen, short
        (_case(BEEF, 0.006, 4.0, Requirement(5.0, min_temp_c=80.0)), flip),  # fails on temp
        (_case(BEEF, 0.006, 4.0, Requirement(6.5, min_temp_c=71.0, rest_s=20.0)), flip),
        (_case(BEEF, 0.007, 2.0, Requirement(3.0, rest_s=30.0), PLATEN), clam),
        (_case(lean, 0.006, 4.0, Requirement(5.0, min_temp_c=60.0)), flip),
        (_case(lean, 0.010, 4.0, Requirement(1.0, rest_s=10.0)), flip.with_done(120.0)),
    ]
    got = judge_many([c for c, _ in pairs], [s for _, s in pairs])
    want = [judge(c, s) for c, s in pairs]
    assert [v.passed for v in got] == [v.passed for v in want]
    assert True in [v.passed for v in want] and False in [v.passed for v in want]
    for a, b in zip(got, want, strict=True):
        assert abs(a.min_log_reduction - b.min_log_reduction) < TOL_LOG
        assert abs(a.min_temp_at_removal_c - b.min_temp_at_removal_c) < TOL_K
    # the temperature rule alone decides case 1 (its log reduction is far above target), and
    # with a rest the coldest point is read at removal, before the rest (same as case 1)
    assert got[1].min_log_reduction > 5.0 and not got[1].passed and got[2].passed
    assert got[2].min_temp_at_removal_c == pytest.approx(got[1].min_temp_at_removal_c, abs=1e-9)


def test_judge_many_rejects_mismatched_lengths_and_names_the_case() -> None:
    flip = Schedule((Event("flip", 40.0), Event("done", 85.0)))
    good = _case(BEEF, 0.008, 4.0, Requirement(5.0))
    with pytest.raises(ValueError, match=r"len\(schedules\) = 1 .* len\(cases\) = 2"):
        judge_many([good, good], [flip])
    bad = _case(constant_table("x", 0.45, 1050.0, 3500.0), -0.01, 4.0, Requirement(5.0))
    with pytest.raises(ValueError, match=r"cases\[1\] \(with schedules\[1\]\)\.thickness_m"):
        judge_many([good, bad], [flip, flip])


def test_one_summary_is_the_batch_s_and_names_the_field_plainly() -> None:
    case = VARIED[2]
    one = simulate_one(BEEF, case, KINETICS, COARSE)
    many = simulate_many(BEEF, [case], KINETICS, COARSE)[0]
    np.testing.assert_array_equal(one.final_temp_c, many.final_temp_c)
    assert one.min_temp_at_removal_c == many.min_temp_at_removal_c
    assert one.min_log_reduction == many.min_log_reduction
    with pytest.raises(ValueError, match=r"^thickness_m = 0\.0 "):
        simulate_one(BEEF, CookCase(0.0, 5.0, [Phase(3.0, PLATE, AIR)]), KINETICS, COARSE)
    with pytest.raises(ValueError, match=r"^removal_phase = 1 is invalid"):
        simulate_one(BEEF, CookCase(0.01, 5.0, [Phase(3.0, PLATE, AIR)], 1), KINETICS, COARSE)


def test_judge_without_a_hold_rule_reads_the_full_history_s_numbers() -> None:
    # judge keeps no history when no time-at-temperature rule needs it: its numbers must be
    # those of the full run, read at the last row and at removal (before a rest)
    flip = Schedule((Event("flip", 40.0), Event("done", 85.0)))
    for req in (Requirement(5.0, min_temp_c=71.0), Requirement(6.5, min_temp_c=71.0, rest_s=20.0)):
        case = _case(BEEF, 0.006, 4.0, req)
        phases = phases_for(flip, case.env, rest_s=req.rest_s)
        full = simulate(BEEF, 0.006, 4.0, phases, KINETICS, COARSE)
        removal = len(phases) - 2 if req.rest_s > 0.0 else len(phases) - 1
        row = int(np.flatnonzero(full.phase_index <= removal)[-1])
        got = judge(case, flip)
        assert got.min_log_reduction == float(np.min(full.log_reduction[-1]))
        assert got.min_temp_at_removal_c == float(np.min(full.temp_c[row]))
        assert got.hold_margin_s is None
