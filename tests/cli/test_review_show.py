"""``obvert show``: the firmware's lookup for one measurement and its reference prediction.

Runs on the committed real table tests/golden/input/test_patty.json (built from
tests/cli/small_spec.toml), so no table is compiled here.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner

from obvert import CAUTION
from obvert.cli import main
from obvert.firmware import canonical_sha256, lookup
from obvert.review import ReviewError, measured_point, read_manifest, show, spec_of_manifest
from obvert.spec import load_spec

TABLE = Path(__file__).parents[1] / "golden" / "input" / "test_patty.json"
SPEC = Path(__file__).with_name("small_spec.toml")


def test_spec_read_back_from_the_table_is_the_built_spec() -> None:
    m = read_manifest(TABLE)
    spec = spec_of_manifest(m, str(TABLE))
    assert canonical_sha256(spec.to_dict()) == m["spec_hash"]
    assert spec == load_spec(SPEC)


def test_spec_read_back_refuses_a_tampered_spec() -> None:
    m = read_manifest(TABLE)
    m["spec"]["appliance"]["plate_temp_c"] = 191.0
    with pytest.raises(ReviewError, match="spec_hash"):
        spec_of_manifest(m, "t.json")


# 1 in = 25.4 mm exactly; degF to degC is (F - 32) * 5 / 9 (both common practice)
@pytest.mark.parametrize(
    ("thick", "start", "want"),
    [
        ("12 mm", "-18 degC", (0.012, -18.0)),
        ("12mm", "-18C", (0.012, -18.0)),
        ("0.5 in", "32 degF", (0.0127, 0.0)),
        ("6.5 mm", "-18 \u00b0C", (0.0065, -18.0)),
        ("6.5 mm", "41 F", (0.0065, 5.0)),
    ],
)
def test_measured_point_reads_the_spec_units(thick: str, start: str, want: tuple) -> None:
    x, t = measured_point(thick, start)
    assert math.isclose(x, want[0], rel_tol=1e-12)
    assert math.isclose(t, want[1], abs_tol=1e-9)


def test_measured_point_names_the_option() -> None:
    with pytest.raises(ReviewError, match="--thickness"):
        measured_point("12 kg", "4 degC")
    with pytest.raises(ReviewError, match="--start"):
        measured_point("12 mm", "warm")


def test_show_at_a_node_reproduces_the_certified_margin() -> None:
    """At a node (no tolerances, pad 0) the worst scenario's run is the certification run."""
    m = read_manifest(TABLE)
    spec = spec_of_manifest(m)
    node = m["nodes"][2]  # 10 mm, -18 degC: the binding node of this table
    shown = show(m, spec, node["thickness_m"], node["start_temp_c"], "corner")
    assert shown.status == 0 and shown.node == 2
    assert [(e.kind, e.at_s) for e in shown.events] == [
        (e["kind"], e["at_s"]) for e in node["events"]
    ]
    assert shown.final_log_reduction == pytest.approx(node["min_log_reduction"], abs=2e-6)
    assert shown.passed
    # the cold spot only warms on a 190 degC plate, and reaches the 71 degC floor at done
    temps = [e.cold_spot_c for e in shown.events]
    assert temps == sorted(temps) and temps[-1] >= 71.0


def test_show_cli_prints_the_lookup_and_caution() -> None:
    res = CliRunner().invoke(main, ["show", str(TABLE), "--thickness", "8mm", "--start", "-10C"])
    assert res.exit_code == 0, res.output
    m = json.loads(TABLE.read_text())
    want = lookup(m, 0.008, -10.0)
    rows = [ln.split() for ln in res.stdout.splitlines() if ln.strip().startswith(("flip", "done"))]
    assert [(r[0], float(r[1])) for r in rows] == [
        ({0: "done", 1: "flip"}[k], round(at * m["tick_s"], 1)) for k, at in want.events
    ]
    assert "worst tolerance scenario: nominal" in res.stdout
    assert f"caution: {CAUTION}" in res.stdout


def test_show_outside_the_envelope_exits_1_with_the_status_in_words() -> None:
    res = CliRunner().invoke(main, ["show", str(TABLE), "--thickness", "12 mm", "--start", "0C"])
    assert res.exit_code == 1
    assert "thickness above the table's envelope" in res.stdout
    assert "status -4" in res.stdout


def test_show_bad_file_exits_2_naming_it(tmp_path: Path) -> None:
    bad = tmp_path / "broken.json"
    bad.write_text("{ not json")
    res = CliRunner().invoke(main, ["show", str(bad), "--thickness", "8mm", "--start", "0C"])
    assert res.exit_code == 2
    assert "broken.json" in res.stderr and "not JSON" in res.stderr
    assert "Traceback" not in res.output
    res = CliRunner().invoke(main, ["show", str(TABLE), "--thickness", "8 kg", "--start", "0C"])
    assert res.exit_code == 2 and "--thickness" in res.stderr


def test_show_help() -> None:
    res = CliRunner().invoke(main, ["show", "--help"])
    assert res.exit_code == 0 and "--thickness" in res.stdout and "--rule" in res.stdout


def test_show_under_tolerances_runs_the_worst_scenario(built_tolerances) -> None:
    """At the binding node of a table certified under tolerances, the prediction is the
    certification's: the worst scenario, the node's own smallest log reduction."""
    m = built_tolerances.manifest
    k = min(range(len(m["nodes"])), key=lambda i: m["nodes"][i]["margin_log"])
    node = m["nodes"][k]
    shown = show(m, built_tolerances.spec, node["thickness_m"], node["start_temp_c"], "corner")
    assert shown.status == 0 and shown.scenario == "worst" and shown.passed
    pad = m["cells"]["corner"][shown.cell]["done_pad_ticks"]
    if pad == 0:  # the schedule run is exactly the certified one
        assert shown.final_log_reduction == pytest.approx(node["min_log_reduction"], abs=2e-6)
    else:  # a padded done only cooks longer
        assert shown.final_log_reduction >= node["min_log_reduction"] - 2e-6


def test_show_refuses_a_spec_the_table_was_not_built_from() -> None:
    other = Path(__file__).with_name("tolerance_spec.toml")
    args = ["show", str(TABLE), "--thickness", "8mm", "--start", "0C", "--spec", str(other)]
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 2
    assert "test_patty.json" in res.stderr and "not built from this spec" in res.stderr


def test_every_demo_and_a_measured_food_spec_read_back_from_their_json() -> None:
    """The spec stored in a manifest (its JSON form) rebuilds to the same spec and hash,
    for composition and measured (constant and tabulated) foods, platens and tolerances."""
    from obvert.api import demo_spec
    from obvert.cli import DEMOS
    from obvert.spec import loads_spec

    corpus = Path(__file__).parents[1] / "spec_corpus" / "measured_falling_table.toml"
    rising = corpus.read_text().replace(
        '[["20 degC", "0.45 W/(m*K)"], ["-5 degC", "1.2 W/(m*K)"]]',
        '[["-5 degC", "1.2 W/(m*K)"], ["20 degC", "0.45 W/(m*K)"]]',
    )
    measured = loads_spec(rising, "measured")
    assert isinstance(measured.food.measured.conductivity, tuple)
    specs = [demo_spec(d) for d in DEMOS] + [
        measured,
        load_spec(SPEC.with_name("tolerance_spec.toml")),
    ]
    for spec in specs:
        d = json.loads(json.dumps(spec.to_dict()))  # what a manifest holds
        m = {"spec": d, "spec_hash": canonical_sha256(d)}
        assert spec_of_manifest(m, spec.name) == spec
