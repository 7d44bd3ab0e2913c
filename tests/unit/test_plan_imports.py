"""The planner's modules import downwards only (no cycle between transcription and planner).

Checked in a fresh interpreter, so that modules loaded by other tests do not hide a cycle.
"""

from __future__ import annotations

import ast
import subprocess
import sys


def test_transcription_does_not_load_the_planner() -> None:
    code = (
        "import sys, obvert.plan._nlp, obvert.plan.collocation, obvert.plan.problem\n"
        "print(sorted(m for m in sys.modules if m.startswith('obvert.plan.')))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    loaded = ast.literal_eval(out.stdout)  # a printed list of module names
    assert "obvert.plan.ocp" not in loaded, loaded


def test_public_names_stay_importable_from_ocp() -> None:
    from obvert.plan import ocp, problem

    for name in ("Planner", "PlanResult", "Member", "Requirement", "PlanError", "Solution"):
        assert hasattr(ocp, name), name
    assert ocp.Requirement is problem.Requirement and ocp.PlanError is problem.PlanError
