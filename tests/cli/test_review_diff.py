"""``obvert diff``: nodes, cells and spec keys between two JSON tables, and the exit status."""

from __future__ import annotations

import copy
import json
from pathlib import Path

from click.testing import CliRunner

from obvert.cli import main
from obvert.firmware import canonical_json
from obvert.review import diff, read_manifest

from .helpers import SPEC

TABLE = Path(__file__).parents[1] / "golden" / "input" / "test_patty.json"


def _write(tmp_path: Path, name: str, m: dict) -> Path:
    p = tmp_path / name
    p.write_bytes(canonical_json(m))
    return p


def _run(*args: str) -> tuple[int, str, str]:
    res = CliRunner().invoke(main, ["diff", *map(str, args)])
    return res.exit_code, res.stdout, res.stderr


def test_identical_tables_need_no_review() -> None:
    code, out, _ = _run(TABLE, TABLE)
    assert code == 0
    assert "nothing needs review" in out and "0 changed" in out


def test_a_shorter_node_is_flagged(tmp_path: Path) -> None:
    m = read_manifest(TABLE)
    new = copy.deepcopy(m)
    node = new["nodes"][1]
    node["cook_time_s"] -= 1.0
    d = diff(m, new)
    assert [(n.thickness_m, n.start_temp_c) for n in d.flagged_nodes] == [(0.006, 4.0)]
    assert d.nodes_changed[0].cook_time_change_s == -1.0 and d.needs_review
    code, out, _ = _run(TABLE, _write(tmp_path, "new.json", new))
    assert code == 1
    assert "! node changed 6.00 mm, 4.0 degC: cook time -1.0 s" in out


def test_a_longer_node_with_no_smaller_margin_needs_no_review(tmp_path: Path) -> None:
    m = read_manifest(TABLE)
    new = copy.deepcopy(m)
    new["nodes"][3]["cook_time_s"] += 2.5
    new["nodes"][3]["margin_log"] += 0.01
    d = diff(m, new)
    assert len(d.nodes_changed) == 1 and not d.flagged_nodes and not d.needs_review
    code, out, _ = _run(TABLE, _write(tmp_path, "new.json", new))
    assert code == 0
    assert "largest change in cook time +2.5 s at 10.00 mm, 4.0 degC" in out


def test_a_fallen_margin_and_a_spec_key_are_flagged_with_dotted_paths() -> None:
    m = read_manifest(TABLE)
    new = copy.deepcopy(m)
    new["nodes"][0]["margin_log"] -= 0.05
    new["spec"]["appliance"]["plate_temp_c"] = 195.0
    d = diff(m, new)
    assert [n.margin_change_log < 0 for n in d.flagged_nodes] == [True]
    assert d.spec_changes == (("spec.appliance.plate_temp_c", 190.0, 195.0),)


def test_added_and_removed_nodes_and_cells(tmp_path: Path) -> None:
    m = read_manifest(TABLE)
    new = copy.deepcopy(m)
    new["axes"]["thickness_m"][1] = 0.011
    for n in new["nodes"]:
        if n["thickness_m"] == 0.01:
            n["thickness_m"] = 0.011
    d = diff(m, new)
    assert d.nodes_added == ((0.011, -18.0), (0.011, 4.0))
    assert d.nodes_removed == ((0.01, -18.0), (0.01, 4.0))
    assert len(d.cells_added) == len(d.cells_removed) == 2  # one per rule
    assert ("axes.thickness_m", [0.006, 0.01], [0.006, 0.011]) in d.other_changes
    assert d.needs_review


def test_bad_file_exits_2_naming_it(tmp_path: Path) -> None:
    bad = tmp_path / "half.json"
    bad.write_text(json.dumps({"format_version": 2}))
    code, _, err = _run(TABLE, bad)
    assert code == 2 and "half.json" in err and "not a valid table" in err
    code, _, err = _run(TABLE, tmp_path / "missing.json")
    assert code == 2 and "missing.json" in err and "cannot read" in err


def test_diff_help() -> None:
    res = CliRunner().invoke(main, ["diff", "--help"])
    assert res.exit_code == 0 and "Exit 0 when nothing needs review" in res.stdout


def test_two_real_builds_one_setting_apart(built, tmp_path: Path) -> None:
    """A hotter plate: the diff lists exactly the nodes whose bytes changed, and flags them."""
    text = SPEC.read_text().replace(
        'plate_temperature = "190 degC"', 'plate_temperature = "200 degC"'
    )
    assert "200 degC" in text
    spec = tmp_path / "hotter.toml"
    spec.write_text(text)
    out = tmp_path / "out"
    res = CliRunner().invoke(
        main, ["build", str(spec), "--out", str(out), "--target", "json", "--quiet"]
    )
    assert res.exit_code == 0, res.stderr
    old, new = built.manifest, json.loads((out / "test_patty.json").read_text())
    d = diff(old, new)
    byte_changed = {
        (a["thickness_m"], a["start_temp_c"])
        for a, b in zip(old["nodes"], new["nodes"], strict=True)
        if canonical_json(a) != canonical_json(b)
    }
    assert byte_changed  # a hotter plate changes the schedules
    assert {(n.thickness_m, n.start_temp_c) for n in d.nodes_changed} == byte_changed
    # a hotter plate cooks faster: every node whose cook time fell is flagged
    shorter = {(n.thickness_m, n.start_temp_c) for n in d.nodes_changed if n.cook_time_change_s < 0}
    assert shorter and shorter <= {(n.thickness_m, n.start_temp_c) for n in d.flagged_nodes}
    assert ("spec.appliance.plate_temp_c", 190.0, 200.0) in d.spec_changes
    assert all(k.startswith("spec.appliance.plate_temp_c") for k, _, _ in d.spec_changes)
    code, stdout, _ = _run(built.out / "test_patty.json", out / "test_patty.json")
    assert code == 1 and "needs review" in stdout
