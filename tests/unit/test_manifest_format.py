"""The manifest format version: older tables are converted by an explicit step or refused."""

from __future__ import annotations

import copy
import importlib.util
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from obvert.cli import main
from obvert.emitter import emit, load_target
from obvert.firmware import FORMAT_VERSION, ManifestError, check_manifest, upgrade_manifest

_SPEC = importlib.util.spec_from_file_location(
    "obvert_tests_manifest_format", Path(__file__).resolve().parents[1] / "conftest_manifest.py"
)
_MOD = importlib.util.module_from_spec(_SPEC)
_SPEC.loader.exec_module(_MOD)


def _as_version_1(m: dict) -> dict:
    """The same table as format version 1 wrote it (the names that changed in 2)."""
    old = copy.deepcopy(m)
    old["format_version"] = 1
    for node in old["nodes"]:
        node["correction_s"] = node.pop("extension_s")
        for key in ("reference_error_log", "reference_error_k", "required_margin_log"):
            del node[key]
        for c in node.get("candidates", []):
            if "calibrated_cook_time_s" in c:
                c["corrected_cook_time_s"] = c.pop("calibrated_cook_time_s")
    old["safety"]["z_c"] = old["safety"].pop("z_k")
    if "nodes_extended" in old.get("summary", {}):
        old["summary"]["nodes_corrected"] = old["summary"].pop("nodes_extended")
    return old


def test_version_1_is_refused_without_the_upgrade_step() -> None:
    with pytest.raises(ManifestError, match="format_version = 1: an older format"):
        emit(_as_version_1(_MOD.synthetic_manifest()), load_target("c99"))


def _without_budget(m: dict) -> dict:
    """The current table as an upgraded format-1 table holds it: no error budget recorded."""
    out = copy.deepcopy(m)
    for node in out["nodes"]:
        for key in ("reference_error_log", "reference_error_k", "required_margin_log"):
            node[key] = None
    return out


def test_upgrade_restores_the_current_table_exactly() -> None:
    m = _MOD.synthetic_manifest()
    assert FORMAT_VERSION == 2
    up = upgrade_manifest(_as_version_1(m))
    assert up == _without_budget(m)
    check_manifest(up)
    assert emit(up, load_target("json")) == emit(_without_budget(m), load_target("json"))


def test_upgrade_keeps_refusing_an_uncertified_table() -> None:
    old = _as_version_1(_MOD.synthetic_manifest())
    old["nodes"][3]["margin_log"] = -0.0625
    with pytest.raises(ManifestError, match=r"nodes\[3\].margin_log = -0.0625: not certified"):
        check_manifest(upgrade_manifest(old))


@pytest.mark.parametrize("version", [0, 3, "2", True, None])
def test_unknown_versions_are_refused(version: object) -> None:
    m = _MOD.synthetic_manifest()
    m["format_version"] = version
    with pytest.raises(ManifestError, match="format_version"):
        upgrade_manifest(m)


def test_upgrade_command(tmp_path: Path) -> None:
    old = tmp_path / "old.json"
    old.write_text(json.dumps(_as_version_1(_MOD.synthetic_manifest())), "utf-8")
    res = CliRunner().invoke(main, ["upgrade", str(old), "--out", str(tmp_path / "new.json")])
    assert res.exit_code == 0, res.output
    new = json.loads((tmp_path / "new.json").read_text("utf-8"))
    assert new == _without_budget(_MOD.synthetic_manifest())
    bad = tmp_path / "bad.json"
    bad.write_text("{not json", "utf-8")
    res = CliRunner().invoke(main, ["upgrade", str(bad), "--out", str(tmp_path / "x.json")])
    assert res.exit_code == 2 and "cannot read a JSON table" in res.stderr
    assert not (tmp_path / "x.json").exists()


def test_cell_margin_cannot_exceed_its_corner_nodes() -> None:
    """A cell's margin covers everything its lookup returns, its corner nodes included."""
    from obvert.certify.cells import cell_dict, corner_cells

    m = _MOD.synthetic_manifest()
    cells = [cell_dict(c) for c in corner_cells(m)]
    m["cells"] = {"corner": cells, "bilinear": copy.deepcopy(cells)}
    check_manifest(m)
    m["cells"]["bilinear"][2]["rule"] = "bilinear"
    m["cells"]["bilinear"][2]["min_margin_log"] = 8.5
    with pytest.raises(ManifestError, match=r"cells.bilinear\[2\].min_margin_log = 8.5: more than"):
        check_manifest(m)
