"""docs/spec.md agrees with the key table, and the loader checks exactly the table's ranges."""

from __future__ import annotations

import copy
import sys
from importlib import resources
from pathlib import Path
from typing import Any

import pytest

from obvert.spec import SpecError, spec_from_dict
from obvert.spec.keys import KEY_LIST, Key
from obvert.spec.reference import REGENERATE, render

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

DOC = Path(__file__).resolve().parents[2] / "docs" / "spec.md"


def _demo(name: str) -> dict[str, Any]:
    text = resources.files("obvert.demo").joinpath(name).read_text("utf-8")
    data = tomllib.loads(text)
    data["safety"].pop("min_temperature")  # so that plate temperatures down to 60 degC load
    return data


GRIDDLE = _demo("griddle_patty.toml")
CLAMSHELL = _demo("clamshell_patty.toml")
MEASURED = copy.deepcopy(GRIDDLE)
MEASURED["food"] = {
    "name": "measured patty",
    "measured": {
        "conductivity": "0.45 W/(m*K)",
        "density": "1050 kg/m^3",
        "specific_heat": "3500 J/(kg*K)",
        "freezing_point": "-1.5 degC",
        "latent_heat": "200 kJ/kg",
    },
}
MEASURED.pop("tolerances")
CUSTOM = copy.deepcopy(GRIDDLE)
CUSTOM["safety"] = {
    "organism_name": "house strain",
    "d_ref": "1.5 min",
    "t_ref": "60 degC",
    "z": "5.5 K",
    "source": "an invented lab",
    "log_reduction": 6.5,
}


def _base(key: Key) -> dict[str, Any]:
    if key.name.startswith("platen"):
        return CLAMSHELL
    if key.section == "food.measured":
        return MEASURED
    if key.section == "safety" and key.name in ("organism_name", "d_ref", "t_ref", "z", "source"):
        return CUSTOM
    return GRIDDLE


def _with(key: Key, value: object) -> dict[str, Any]:
    data = copy.deepcopy(_base(key))
    sec = data
    for part in key.section.split("."):
        sec = sec.setdefault(part, {})
    sec[key.name] = value
    return data


def _typed(key: Key, number: float) -> object:
    one: object = number if key.kind in ("number", "integer") else f"{number:.10g} {key.unit}"
    if key.count is not None:
        return [one] * key.count[0] if key.count[0] > 1 else [one]
    return one


RANGED = [k for k in KEY_LIST if k.lo is not None or k.hi is not None]


def test_doc_matches_the_key_table() -> None:
    assert DOC.read_text("utf-8") == render(), f"docs/spec.md is stale: run {REGENERATE}"


def test_every_key_is_in_the_doc() -> None:
    text = render()
    for key in KEY_LIST:
        assert f"| `{key.name}` |" in text, key.path


@pytest.mark.parametrize("key", KEY_LIST, ids=lambda k: k.path)
def test_every_example_loads(key: Key) -> None:
    if key.kind == "section" or not key.example:
        return
    value = tomllib.loads(f"v = {key.example}")["v"]
    spec_from_dict(_with(key, value))


def _outside(key: Key, side: str) -> float:
    bound = key.hi if side == "hi" else key.lo
    assert bound is not None
    if key.kind == "integer":
        return bound + 1 if side == "hi" else bound - 1
    step = max(abs(bound) * 1e-3, 1e-3)
    return bound + step if side == "hi" else bound - step


@pytest.mark.parametrize("side", ["lo", "hi"])
@pytest.mark.parametrize("key", RANGED, ids=lambda k: k.path)
def test_just_outside_the_range_is_refused(key: Key, side: str) -> None:
    if (key.lo if side == "lo" else key.hi) is None:
        return
    value = _typed(key, _outside(key, side))
    with pytest.raises(SpecError) as err:
        spec_from_dict(_with(key, value))
    assert err.value.path.startswith(key.path), str(err.value)
    assert key.range_text() in str(err.value)


# At the bound itself a value may still clash with another key: named here, with the reason.
CLASHES = {
    ("safety.lethality_cap", "lo"): "below the preset's reference temperature of 60 degC",
    ("tolerances.plate_droop", "lo"): "the base gives plate_recovery, only with a droop",
    ("safety.t_ref", "hi"): "above the default lethality cap of 90 degC",
}


@pytest.mark.parametrize("side", ["lo", "hi"])
@pytest.mark.parametrize("key", RANGED, ids=lambda k: k.path)
def test_the_bounds_themselves_are_allowed(key: Key, side: str) -> None:
    bound = key.lo if side == "lo" else key.hi
    if bound is None or key.section == "food.composition" or (key.path, side) in CLASHES:
        return  # a single fraction at 0 or 1 breaks the sum; clashes are listed above
    value = _typed(key, bound)
    if key.count == (2, 2):  # a [low, high] range: both bounds at once hold the nominal value
        value = [key.lo, key.hi]
    spec_from_dict(_with(key, value))
