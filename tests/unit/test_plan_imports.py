"""The planner's modules import downwards only (no cycle between transcription and planner).

Checked on the module graph (grimp), package initialisers aside.
"""

from __future__ import annotations

import grimp


def test_transcription_does_not_import_the_planner() -> None:
    """No module the transcription imports (directly or not) is the planner module.

    (Loading the package itself loads the planner for its public names, so the check is on
    the module graph, as in tests/unit/test_architecture.py.)
    """
    graph = grimp.build_graph("obvert", cache_dir=None)
    for low in ("obvert.plan._nlp", "obvert.plan.collocation", "obvert.plan.problem"):
        reached = graph.find_upstream_modules(low)
        assert "obvert.plan.ocp" not in reached, (low, sorted(reached))


def test_public_names_stay_importable_from_ocp() -> None:
    from obvert.plan import ocp, problem

    for name in ("Planner", "PlanResult", "Member", "Requirement", "PlanError", "Solution"):
        assert hasattr(ocp, name), name
    assert ocp.Requirement is problem.Requirement and ocp.PlanError is problem.PlanError
