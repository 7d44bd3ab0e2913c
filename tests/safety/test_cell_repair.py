"""Cell certification is not vacuous: plain interpolation undercooks, the repair fixes it.

On the coarse 2 x 2 tolerance table (one cell spanning 6-12 mm and -18 to 4 degC) the
bilinear rule *without* certification (pad 0) is simulated on the reference model at the
cell's sample points (edge midpoints, centre, seeded random points) at the worst tolerance
corner: some must fall below the target, since cook time is far from bilinear in start
temperature across the freezing point (latent heat) and in thickness (conduction time
grows with the square of thickness: H. S. Carslaw and J. C. Jaeger, "Conduction of Heat in
Solids", 2nd ed., Oxford, 1959, sec. 3.3; from memory). The certified table then runs, in
that cell, either the interpolation with its certified pad or the corner rule, and every
point passes: the certifier's own samples, and points this test draws itself (the four
corners and uniform random points from a seed of its own), which the certifier never saw.
"""

from __future__ import annotations

import numpy as np

from obvert.certify.batch import judge_many
from obvert.certify.cells import lookup_schedules, sample_points, trial_cells, with_cells
from obvert.problem import problem_of


def _judge(spec, manifest, rule, points):
    cases, scheds = [], []
    for p in points:
        for s in lookup_schedules(manifest, rule, *p):
            for c in problem_of(spec).cases_at(*p):
                cases.append(c)
                scheds.append(s)
    return judge_many(cases, scheds)


def test_interpolation_needs_certification(built_tolerances) -> None:
    b = built_tolerances
    m = b.manifest
    ax, at = m["axes"]["thickness_m"], m["axes"]["start_temp_c"]
    points = sample_points((ax[0], ax[1]), (at[0], at[1]), seed=0)
    plain = with_cells(m, "bilinear", trial_cells(m))
    assert plain["cells"]["bilinear"][0]["rule"] == "bilinear"  # corners share a sequence
    naive = _judge(b.spec, plain, "bilinear", points)
    assert not all(v.passed for v in naive), "uncertified interpolation passed everywhere"
    cell = m["cells"]["bilinear"][0]
    repaired = _judge(b.spec, m, "bilinear", points)
    assert all(v.passed for v in repaired), cell
    rng = np.random.default_rng(20261202)  # not a seed the certifier uses
    own = [(x, t) for x in (ax[0], ax[1]) for t in (at[0], at[1])]
    own += [(float(rng.uniform(ax[0], ax[1])), float(rng.uniform(at[0], at[1]))) for _ in range(6)]
    failing = [p for p in own if not all(v.passed for v in _judge(b.spec, m, "bilinear", [p]))]
    assert not failing, f"certified cell {cell} fails at points it never sampled: {failing}"
    if cell["rule"] == "bilinear":
        assert cell["done_pad_ticks"] > 0
    assert cell["min_margin_log"] >= 0.0
