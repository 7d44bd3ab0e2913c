"""Generated input: the loader raises SpecError and nothing else, whatever the document.

Random documents are built from the real section and key names with values of random types
(texts with and without units, numbers, NaN, lists, nested tables), and the demo specs are
mutated (a key dropped, a value's type or unit changed, a key added).
"""

from __future__ import annotations

import copy
import sys
from importlib import resources
from typing import Any

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from obvert.spec import SpecError, loads_spec, spec_from_dict
from obvert.spec.errors import toml_text
from obvert.spec.keys import KEY_LIST

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

SETTINGS = settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])

SECTIONS = sorted({k.section for k in KEY_LIST if k.section})
NAMES = sorted({k.name for k in KEY_LIST})
UNITS = [
    "mm",
    "m",
    "in",
    "degC",
    "degF",
    "K",
    "s",
    "ms",
    "min",
    "W/(m^2*K)",
    "W/(m*K)",
    "kg/m^3",
    "J/(kg*K)",
    "kJ/kg",
    "kg",
    "",
    "%",
    "foo",
    "m**",
    "1/0",
    "degC/s",
    "°C",
]

numbers = st.one_of(
    st.integers(min_value=-(10**20), max_value=10**20),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0, 1, 2, 0.5, 1e308, -0.0]),
)
unit_texts = st.builds(lambda n, u: f"{n} {u}".strip(), numbers, st.sampled_from(UNITS))
scalars = st.one_of(numbers, unit_texts, st.text(max_size=12), st.booleans())
values = st.recursive(
    scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4),
        st.dictionaries(st.sampled_from(NAMES), inner, max_size=3),
    ),
    max_leaves=8,
)


def _loads_or_spec_error(data: dict[str, Any]) -> None:
    try:
        spec_from_dict(data)
    except SpecError as exc:
        assert str(exc).count("allowed") == 1, str(exc)  # noqa: PT017


@st.composite
def documents(draw: st.DrawFn) -> dict[str, Any]:
    doc: dict[str, Any] = {}
    for section in draw(st.lists(st.sampled_from(SECTIONS), max_size=6)):
        table = doc
        for part in section.split("."):
            nxt = table.setdefault(part, {})
            table = nxt if isinstance(nxt, dict) else {}
        keys = [k.name for k in KEY_LIST if k.section == section]
        for name in draw(st.lists(st.sampled_from(keys), max_size=6)):
            table[name] = draw(values)
    return doc


@SETTINGS
@given(documents())
def test_random_documents_raise_only_spec_error(doc: dict[str, Any]) -> None:
    _loads_or_spec_error(doc)


def _demo(name: str) -> dict[str, Any]:
    return tomllib.loads(resources.files("obvert.demo").joinpath(name).read_text("utf-8"))


DEMOS = [_demo("griddle_patty.toml"), _demo("clamshell_patty.toml")]


def _paths(data: dict[str, Any], prefix: tuple[str, ...] = ()) -> list[tuple[str, ...]]:
    out = []
    for k, v in data.items():
        out.append((*prefix, k))
        if isinstance(v, dict):
            out += _paths(v, (*prefix, k))
    return out


@st.composite
def mutated_demos(draw: st.DrawFn) -> dict[str, Any]:
    data = copy.deepcopy(draw(st.sampled_from(DEMOS)))
    for _ in range(draw(st.integers(1, 3))):
        paths = _paths(data)
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        parent = data
        for part in path[:-1]:
            parent = parent[part]
        action = draw(st.sampled_from(["drop", "value", "unit", "add"]))
        if action == "drop":
            del parent[path[-1]]
        elif action == "value":
            parent[path[-1]] = draw(values)
        elif action == "unit" and isinstance(parent[path[-1]], str):
            number = parent[path[-1]].split(" ")[0]
            parent[path[-1]] = f"{number} {draw(st.sampled_from(UNITS))}".strip()
        else:
            parent[draw(st.sampled_from([*NAMES, "extra", "plate_temprature"]))] = draw(values)
    return data


@SETTINGS
@given(mutated_demos())
def test_mutated_demos_raise_only_spec_error(data: dict[str, Any]) -> None:
    _loads_or_spec_error(data)


@settings(max_examples=60, deadline=None)
@given(st.text(max_size=200))
def test_random_text_raises_only_spec_error(text: str) -> None:
    try:
        loads_spec(text)
    except SpecError:
        pass


@settings(max_examples=60, deadline=None)
@given(values)
def test_every_value_can_be_shown(value: object) -> None:
    shown = toml_text(value)
    assert isinstance(shown, str) and len(shown) <= 120
