"""A clamshell build end to end: sear, platen down, platen up at done; certified."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from obvert.cli import main

SPEC = Path(__file__).with_name("clamshell_spec.toml")


@pytest.mark.slow
def test_clamshell_schedule_closes_then_releases_at_done(tmp_path: Path) -> None:
    res = CliRunner().invoke(main, ["build", str(SPEC), "--out", str(tmp_path), "--quiet"])
    assert res.exit_code == 0, res.stderr
    m = json.loads((tmp_path / "test_press.json").read_text())
    header = (tmp_path / "test_press.h").read_text()
    assert "TEST_PRESS_EVENT_PLATEN_CLOSE" in header
    assert "fast-flip" in header and "two-sided" in header  # limits in the header metadata
    gap = m["spec"]["appliance"]["min_event_gap_s"]
    for node in m["nodes"]:
        kinds = [e["kind"] for e in node["events"]]
        assert kinds == ["platen_close", "platen_open", "done"]
        close, release, done = node["events"]
        assert release["at_ticks"] == done["at_ticks"]  # the platen rises when food is done
        assert close["at_s"] >= gap - 1e-9  # sear at least the minimum gap
        assert node["margin_log"] >= 0.0 and node["min_temp_at_removal_c"] >= 71.0
        # Closing with a hot platen is faster than any flipping could be on this plate.
        assert node["planned_cook_time_s"] < node["bounds_s"]["fast_flip_limit"]
    frozen, chilled = m["nodes"]
    assert frozen["cook_time_s"] > 1.2 * chilled["cook_time_s"]
