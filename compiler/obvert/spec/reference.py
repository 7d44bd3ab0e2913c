"""The spec reference, rendered from the key table: ``python -m obvert.spec.reference``.

``docs/spec.md`` is this module's output; a unit test fails when the two disagree.
"""

from __future__ import annotations

import json

from obvert.spec.keys import KEY_LIST, PAIR_TEMPERATURE, REQUIRED, SECTIONS, Key, keys_of

REGENERATE = "python -m obvert.spec.reference > docs/spec.md"


def _unit(key: Key) -> str:
    if key.kind == "section":
        return "table"
    if key.kind in ("number", "integer", "text", "choice"):
        return key.kind
    return f"`{key.unit}`"


def _default(key: Key) -> str:
    if key.default_doc:
        return key.default_doc
    if key.default is REQUIRED:
        return "required"
    if key.default is None:
        return "none"
    if isinstance(key.default, tuple):
        return "`[" + ", ".join(json.dumps(v) for v in key.default) + "]`"
    return f"`{json.dumps(key.default)}`"


def _allowed(key: Key) -> str:
    parts = []
    if key.kind == "choice":
        parts.append(", ".join(f"`{json.dumps(c)}`" for c in key.choices))
    elif key.kind == "section":
        parts.append("a table")
    elif key.kind == "text":
        parts.append("text")
    else:
        rng = key.range_text()
        parts.append(rng or "any")
    if key.count is not None:
        lo, hi = key.count
        parts.insert(0, f"list of {lo}" + ("" if lo == hi else f" to {hi}") + ";")
    text = " ".join(parts)
    return f"{text}; {key.note}" if key.note else text


def _row(key: Key) -> str:
    cells = (f"`{key.name}`", _unit(key), _default(key), _allowed(key), key.meaning)
    return "| " + " | ".join(c.replace("|", "\\|") for c in cells) + " |"


def render() -> str:
    """The reference of every section and key, as Markdown.

    Returns
    -------
    str
        The text of ``docs/spec.md``.
    """
    out = [
        "# Spec reference",
        "",
        f"Generated from `compiler/obvert/spec/keys.py` by `{REGENERATE}`; do not edit by",
        "hand (a unit test compares this file with the key table the loader checks against).",
        "",
        "A spec is a TOML file. Every dimensional value is a text with its unit, typed as",
        'in the examples (`"12 mm"`, `"-18 degC"`, `"450 W/(m^2*K)"`, `"100 ms"`); any unit',
        "of the same dimension converts. Ranges are inclusive. A key the table does not list",
        "is an error naming the nearest known key. Every bad input is exit status 2 with a",
        "message `<field> = <value as typed>: allowed <what is allowed>`.",
        "",
        "Column *unit*: the unit the range is written in, or `number`, `integer`, `text`,",
        "`choice` for values without a unit. Column *default*: `required`, `none` (absent",
        "means not set), or the value used when the key is absent.",
        "",
    ]
    for section in SECTIONS:
        keys = keys_of(section)
        if not keys:
            continue
        title = "Top level: sections" if not section else f"`[{section}]`"
        out += [f"## {title}", ""]
        if section:
            (me,) = (k for k in KEY_LIST if k.path == section)
            optional = "" if me.default is REQUIRED else " Optional."
            out += [f"{me.meaning}{optional}", ""]
        out += ["| key | unit | default | allowed | meaning |", "|---|---|---|---|---|"]
        out += [_row(k) for k in keys]
        if section == "food.measured":
            p = PAIR_TEMPERATURE
            out += [
                "",
                "A tabulated property is a list of `[temperature, value]` pairs, e.g.",
                f'`[["0 degC", {keys[0].example}], ["60 degC", "0.48 W/(m*K)"]]`: '
                f"{p.count[0] if p.count else 2} to {p.count[1] if p.count else 2} pairs, "
                f"temperatures {p.range_text()}, {p.note}.",
            ]
        out.append("")
    return "\n".join(out)


if __name__ == "__main__":  # pragma: no cover
    print(render(), end="")
