"""The bad-input corpus (tests/spec_corpus): every file is exit status 2 before any work.

Each corpus file starts with comment lines: ``# wrong:`` what is wrong, ``# field:`` the dotted
path the message must name, optionally ``# value:`` text the message must echo as typed and
``# args:`` further command-line arguments (``--out-under-file`` points --out under a file).
"""

from __future__ import annotations

import shlex
from importlib import resources
from pathlib import Path

import pytest
from click.testing import CliRunner

import obvert.api
from obvert.cli import main
from obvert.spec import SpecError, load_spec, loads_spec

CORPUS = Path(__file__).resolve().parents[1] / "spec_corpus"
FILES = sorted(CORPUS.glob("*.toml"))


def _header(path: Path) -> dict[str, str]:
    out: dict[str, str] = {}
    for line in path.read_bytes().decode("utf-8", "replace").splitlines():
        if not line.startswith("# ") or ":" not in line:
            break
        name, _, text = line[2:].partition(":")
        out[name.strip()] = text.strip()
    return out


@pytest.fixture(autouse=True)
def _no_build(monkeypatch: pytest.MonkeyPatch) -> None:
    """A corpus file that got past the input checks must not start a real build."""

    def refuse(*_args: object, **_kwargs: object) -> None:
        raise AssertionError("the build started: the input was not refused")

    monkeypatch.setattr(obvert.api, "compile_table", refuse)


def test_the_corpus_is_large_enough() -> None:
    assert len(FILES) >= 60
    for path in FILES:
        head = _header(path)
        assert head.get("wrong") and head.get("field"), f"{path.name}: header incomplete"


@pytest.mark.parametrize("path", FILES, ids=lambda p: p.stem)
def test_bad_input_is_exit_2_naming_field_and_value(path: Path, tmp_path: Path) -> None:
    head = _header(path)
    args = shlex.split(head.get("args", ""))
    out = tmp_path / "out"
    if "--out-under-file" in args:
        args.remove("--out-under-file")
        (tmp_path / "blocker").write_text("a file, not a folder")
        out = tmp_path / "blocker" / "out"
    res = CliRunner().invoke(main, ["build", str(path), "--out", str(out), *args])
    err = res.stderr
    assert res.exit_code == 2, f"{path.name}: exit {res.exit_code}\n{res.output}{err}"
    assert isinstance(res.exception, SystemExit), repr(res.exception)
    assert "Traceback" not in res.output and "Traceback" not in err
    assert err.startswith("error: "), err
    assert err.count("allowed") == 1, err
    field = head["field"]
    assert f"{field} = " in err or f"{field} is missing" in err, f"{path.name}: {err}"
    if "value" in head:
        assert head["value"] in err, f"{path.name}: {head['value']} not echoed: {err}"
    if field == "--out":
        assert str(out) in err
    assert not out.exists()
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("path", FILES, ids=lambda p: p.stem)
def test_the_loader_alone_refuses_spec_errors(path: Path) -> None:
    """Every corpus file that is wrong in the spec itself is a SpecError from load_spec."""
    head = _header(path)
    if "args" in head or head["field"].startswith("outputs.targets["):
        load_spec(path)  # the spec is fine; the command line or a target name is not
        return
    with pytest.raises(SpecError) as err:
        load_spec(path)
    assert err.value.path == head["field"] or err.value.path.startswith(head["field"] + ".")


def test_misspelt_key_names_it_and_the_nearest_key() -> None:
    text = (CORPUS / "misspelt_plate_temperature.toml").read_text("utf-8")
    with pytest.raises(SpecError) as err:
        loads_spec(text)
    assert err.value.path == "appliance.plate_temprature"
    assert 'did you mean "plate_temperature"?' in str(err.value)


def test_a_byte_order_mark_is_accepted(tmp_path: Path) -> None:
    text = resources.files("obvert.demo").joinpath("griddle_patty.toml").read_text("utf-8")
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    assert load_spec(path) == loads_spec(text)
    assert loads_spec("\ufeff" + text) == loads_spec(text)


def test_a_zero_byte_file_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "empty.toml"
    path.write_bytes(b"")
    res = CliRunner().invoke(main, ["build", str(path), "--out", str(tmp_path / "o")])
    assert res.exit_code == 2 and "file = " in res.stderr and "no keys" in res.stderr
    assert not (tmp_path / "o").exists()


def test_a_missing_file_and_a_folder_are_refused(tmp_path: Path) -> None:
    for path in (tmp_path / "nope.toml", tmp_path):
        with pytest.raises(SpecError) as err:
            load_spec(path)
        assert err.value.path == "file" and str(path) in str(err.value)


def test_help_answers_without_numerical_packages() -> None:
    import subprocess
    import sys

    code = (
        "import sys; from click.testing import CliRunner; from obvert.cli import main; "
        "r = CliRunner().invoke(main, ['build', '--help']); assert r.exit_code == 0; "
        "bad = [m for m in ('numpy', 'scipy', 'casadi', 'numba', 'pint') if m in sys.modules]; "
        "print(','.join(bad))"
    )
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert res.stdout.strip() == "", f"imported at --help: {res.stdout}"
