"""Checks made before any work: the byte budget of the targets, and the work estimate."""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner

from obvert.cli import main

SPEC = Path(__file__).with_name("small_spec.toml")
TARGET = """
name = "tiny_flash"
description = "a target with a 2 KiB budget (test)"
number_format = "fixed"
time_type = "uint16_t"
flash_budget_bytes = 2048
layout = "header_only"
[[outputs]]
filename = "{table}.h"
template = "c/table.h.j2"
"""


def _grid(n: int) -> str:
    xs = ", ".join(f'"{2.0 + 0.5 * k:g} mm"' for k in range(n))
    ts = ", ".join(f'"{-30.0 + 0.5 * k:g} degC"' for k in range(n))
    text = SPEC.read_text("utf-8")
    text = text.replace('thickness = ["6 mm", "10 mm"]', f"thickness = [{xs}]")
    return text.replace('start_temperature = ["-18 degC", "4 degC"]', f"start_temperature = [{ts}]")


def test_a_grid_past_the_byte_budget_is_refused_before_any_work(tmp_path: Path) -> None:
    spec = tmp_path / "big.toml"
    spec.write_text(_grid(40), "utf-8")  # 1,600 nodes: days of work, and far past 2 KiB
    target = tmp_path / "tiny.toml"
    target.write_text(TARGET, "utf-8")
    res = CliRunner().invoke(
        main, ["build", str(spec), "--target", str(target), "--out", str(tmp_path / "out")]
    )
    assert res.exit_code == 2, res.output
    assert "40 x 40 nodes need at least" in res.stderr and "flash_budget_bytes = 2048" in res.stderr
    assert "nothing was built" in res.stderr
    assert not (tmp_path / "out").exists()


def test_work_estimate_is_printed_before_the_build(tmp_path: Path, monkeypatch) -> None:
    import obvert.api

    def refuse(*_a, **_k):
        raise KeyboardInterrupt  # stop right after the estimate, as Ctrl-C would

    monkeypatch.setattr(obvert.api, "compile_table", refuse)
    res = CliRunner().invoke(main, ["build", str(SPEC), "--out", str(tmp_path / "out")])
    assert "work: 2 x 2 = 4 nodes, up to 3 event sequences each" in res.stderr
    assert res.exit_code == 130 and not (tmp_path / "out").exists()


def test_progress_line_estimates_time_left_from_the_build_start(capsys) -> None:
    """A third of the nodes done after 100 s: about 200 s (3 min) left, not 0."""
    from obvert.cli import _ProgressLine
    from obvert.table import ProgressEvent

    line = _ProgressLine()
    line.start -= 100.0
    line(ProgressEvent("nodes", 3, 9, 1, "6 mm row certified"))
    err = capsys.readouterr().err
    assert "[nodes 3/9, 1 failed solves, about 3 min left] 6 mm row certified" in err
