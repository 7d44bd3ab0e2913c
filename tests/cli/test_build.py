"""End to end through the CLI: build the small spec, check outputs, errors and determinism."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from obvert import CAUTION, __version__
from obvert.cli import main

from .helpers import SPEC, run_build


def test_version_and_help() -> None:
    runner = CliRunner()
    res = runner.invoke(main, ["--version"])
    assert res.exit_code == 0 and __version__ in res.stdout
    res = runner.invoke(main, ["--help"])
    assert res.exit_code == 0 and "build" in res.stdout
    res = runner.invoke(main, ["build", "--help"])
    assert res.exit_code == 0 and "--target" in res.stdout


def test_build_writes_header_and_json(built) -> None:
    names = sorted(p.name for p in built.out.iterdir())
    assert names == ["test_patty.c", "test_patty.h", "test_patty.json"]
    header = (built.out / "test_patty.h").read_text()
    assert "#ifndef" in header and "test_patty_lookup" in header
    banner = " ".join(ln.strip(" */") for ln in header.split("*/")[0].splitlines())
    assert " ".join(CAUTION.split()) in " ".join(banner.split())
    assert built.manifest["caution"] == CAUTION


def test_summary_has_one_row_per_node(built) -> None:
    rows = [ln for ln in built.stdout.splitlines() if ln.strip().startswith(("6.00", "10.00"))]
    assert len(rows) == 4
    assert "smallest margin" in built.stdout
    assert "caution:" in built.stdout


def test_every_node_certified_with_nonnegative_margin(built) -> None:
    target = built.manifest["safety"]["target_log_reduction"]
    for node in built.manifest["nodes"]:
        assert node["margin_log"] >= 0.0
        assert node["min_log_reduction"] >= target
        assert node["min_temp_at_removal_c"] >= 71.0
        ticks = [e["at_ticks"] for e in node["events"]]
        assert ticks == sorted(ticks) and node["events"][-1]["kind"] == "done"


def test_frozen_start_takes_longer_than_chilled(built) -> None:
    by = {(n["i"], n["j"]): n for n in built.manifest["nodes"]}
    for i in range(2):
        frozen, chilled = by[(i, 0)], by[(i, 1)]
        assert frozen["start_temp_c"] < chilled["start_temp_c"]
        # A frozen patty must thaw first (latent heat): clearly longer, not marginally.
        assert frozen["cook_time_s"] > 1.2 * chilled["cook_time_s"]


def _searched_times(node) -> list[float | None]:
    """Planned time per candidate; None only where the sequence was left out on purpose."""
    times = [c["planned_cook_time_s"] for c in node["candidates"]]
    for c, t in zip(node["candidates"], times, strict=True):
        assert t is not None or c["note"].startswith("not searched: "), node["candidates"]
    if node["j"] == 0:  # the first node of a row searches every sequence
        assert all(t is not None for t in times), node["candidates"]
    return times


def test_more_flips_never_slower(built) -> None:
    for node in built.manifest["nodes"]:
        times = [t for t in _searched_times(node) if t is not None]
        assert len(times) >= 2
        for fewer, more in zip(times, times[1:], strict=False):
            # The optimiser may place an extra flip anywhere; it must never cost time beyond
            # the solver tolerance (0.1 s).
            assert more <= fewer + 0.1, times


def test_thicker_takes_longer(built) -> None:
    by = {(n["i"], n["j"]): n for n in built.manifest["nodes"]}
    for j in range(2):
        assert by[(1, j)]["cook_time_s"] > by[(0, j)]["cook_time_s"]


def test_building_twice_gives_identical_bytes(built, tmp_path: Path) -> None:
    # The shared build ran with one process per CPU; this one runs in a single process, so
    # the check also shows that the output does not depend on the number of workers.
    code, _, stderr = run_build(
        tmp_path, "--target", "c99", "--target", "json", "--quiet", "--jobs", "1"
    )
    assert code == 0, stderr
    for name in ("test_patty.h", "test_patty.json"):
        assert (tmp_path / name).read_bytes() == (built.out / name).read_bytes()


def _bad_spec(tmp_path: Path, old: str, new: str) -> Path:
    text = SPEC.read_text()
    assert old in text
    p = tmp_path / "bad.toml"
    p.write_text(text.replace(old, new))
    return p


def _invoke(spec: Path, out: Path) -> tuple[int, str]:
    res = CliRunner().invoke(main, ["build", str(spec), "--out", str(out)])
    return res.exit_code, res.stderr


def test_bad_unit_is_exit_2_and_names_field(tmp_path: Path) -> None:
    spec = _bad_spec(tmp_path, 'plate_temperature = "190 degC"', 'plate_temperature = "190 kg"')
    code, err = _invoke(spec, tmp_path / "out")
    assert code == 2
    assert "appliance.plate_temperature" in err and "190 kg" in err
    assert not (tmp_path / "out").exists()


def test_unknown_key_is_exit_2(tmp_path: Path) -> None:
    spec = _bad_spec(tmp_path, "max_flips = 2", "max_flips = 2\nflip_speed = 3")
    code, err = _invoke(spec, tmp_path / "out")
    assert code == 2 and "appliance.flip_speed" in err


def test_bare_number_without_unit_is_refused(tmp_path: Path) -> None:
    spec = _bad_spec(tmp_path, 'tick = "100 ms"', "tick = 0.1")
    code, err = _invoke(spec, tmp_path / "out")
    assert code == 2 and "appliance.tick" in err and "unit" in err


def test_out_of_range_value_names_allowed_range(tmp_path: Path) -> None:
    spec = _bad_spec(tmp_path, "emissivity = 0.9", "emissivity = 1.7")
    code, err = _invoke(spec, tmp_path / "out")
    assert code == 2 and "appliance.emissivity" in err and "0 to 1" in err


def test_unknown_target_is_exit_2(tmp_path: Path) -> None:
    res = CliRunner().invoke(
        main, ["build", str(SPEC), "--out", str(tmp_path / "o"), "--target", "pdp11"]
    )
    assert res.exit_code == 2 and "pdp11" in res.stderr
    assert not (tmp_path / "o").exists()


@pytest.mark.slow
def test_unreachable_target_is_exit_1_and_writes_nothing(tmp_path: Path) -> None:
    # A plate at 100 degC cannot bring the face in air to 99.9 degC: no plan exists.
    text = SPEC.read_text()
    text = text.replace('plate_temperature = "190 degC"', 'plate_temperature = "100 degC"')
    text = text.replace('min_temperature = "71 degC"', 'min_temperature = "99.9 degC"')
    text = text.replace('thickness = ["6 mm", "10 mm"]', 'thickness = ["6 mm"]')
    text = text.replace(
        'start_temperature = ["-18 degC", "4 degC"]', 'start_temperature = ["4 degC"]'
    )
    text = text.replace("max_flips = 2", "max_flips = 0")
    p = tmp_path / "impossible.toml"
    p.write_text(text)
    code, err = _invoke(p, tmp_path / "out")
    assert code == 1
    assert "6 mm" in err and "4 degC" in err and "nothing was written" in err
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())


def test_no_schedule_beats_the_physical_limits(built) -> None:
    for node in built.manifest["nodes"]:
        ff = node["bounds_s"]["fast_flip_limit"]
        two = node["bounds_s"]["two_sided_contact"]
        assert ff is not None and two is not None
        times = [t for t in _searched_times(node) if t is not None]
        # Same reduced model and collocation on both sides, so the only slack needed is the
        # solver tolerance: no flip schedule may be faster than either limit.
        assert min(times) >= ff - 0.1
        assert min(times) >= two - 0.1
        # Two-sided contact at plate temperature beats averaging plate and air on each face.
        assert two <= ff


def test_frequent_flipping_shortens_thin_patty_by_up_to_a_third(built) -> None:
    """Common practice (rule of thumb, no source): frequent flipping cooks a thin patty
    faster than a single flip, by up to roughly a third."""
    # 6 mm from -18 degC: the first node of its row, where every flip count is searched
    node = next(n for n in built.manifest["nodes"] if n["i"] == 0 and n["j"] == 0)
    one_flip = _searched_times(node)[1]
    assert one_flip is not None
    limit = node["bounds_s"]["fast_flip_limit"]
    saving = (one_flip - limit) / one_flip
    assert 0.10 <= saving <= 0.40, saving
