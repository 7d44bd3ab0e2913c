"""Checking a hand-made cook program on the reference model.

A hand program (format in docs/review.md) is a list of bands: a range of thickness and of
start temperature, each band with one schedule (event times in seconds). A band's schedule
runs on every food in the band, so it is judged at the band's worst corner: the thickest
and coldest point, under every tolerance scenario of the spec
(:meth:`obvert.problem.Problem.cases_at`). A colder start and a thicker slab never cook
faster (the comparison principle, checked in tests/physics/test_monotonicity.py), so the
corner binds for the whole band.

A band is *safe* when certification (:func:`obvert.certify.node.certify` with the spec's
error budget: the margin must exceed the reference's estimated error plus
``[planning] min_margin``) accepts its schedule without extending done. Otherwise the
shortest extension of done that certification accepts is reported.
"""

from __future__ import annotations

import math
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from obvert.certify.node import CertificationError, ErrorBudget, certify, judge, judge_all
from obvert.firmware import EVENT_CODES, lookup
from obvert.plan.schedule import Event, Schedule
from obvert.problem import problem_of
from obvert.review.show import run_case, schedule_of, status_text
from obvert.review.source import ReviewError
from obvert.spec import Spec, SpecError
from obvert.spec.units import quantity
from obvert.thermal.reference import food_frame

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib


@dataclass(frozen=True)
class Band:
    """One band of a hand program.

    Attributes
    ----------
    thickness_m : tuple of float
        ``(low, high)`` thickness, m.
    start_temp_c : tuple of float
        ``(low, high)`` start temperature, degC.
    schedule : Schedule
        Event times, s.
    """

    thickness_m: tuple[float, float]
    start_temp_c: tuple[float, float]
    schedule: Schedule


@dataclass(frozen=True)
class HandProgram:
    """A hand-made cook program.

    Attributes
    ----------
    name : str
        Its name.
    bands : tuple of Band
        The bands in file order.
    """

    name: str
    bands: tuple[Band, ...]


@dataclass(frozen=True)
class BandCheck:
    """The verdict on one band.

    Attributes
    ----------
    band : Band
        The band checked.
    safe : bool
        Certification accepts the schedule as it is (no extension).
    reference_passed : bool
        The plain reference verdict at the worst corner, without the error budget.
    margin_log : float
        Smallest log reduction less the target, over every scenario, log10.
    scenario : str
        The scenario where the smallest margin occurs.
    cold_spot_mm : float
        Where in the food the smallest log reduction occurs, mm from the face that was
        first on the plate.
    required_margin_log : float or None
        The margin certification asked for (reference error plus minimum margin), log10;
        None when no extension up to the limit passes.
    extension_s : float or None
        Shortest extension of done that certification accepts, s (0 when safe; None when
        nothing up to twice the done time passes).
    table_done_s : float or None
        Done time the table (``--table``) gives at the same corner, s.
    table_note : str
        Why there is no table comparison (empty when there is one or no table was given).
    """

    band: Band
    safe: bool
    reference_passed: bool
    margin_log: float
    scenario: str
    cold_spot_mm: float
    required_margin_log: float | None
    extension_s: float | None
    table_done_s: float | None = None
    table_note: str = ""

    @property
    def corner(self) -> tuple[float, float]:
        """The worst corner: thickest, coldest (m, degC)."""
        return self.band.thickness_m[1], self.band.start_temp_c[0]


def _fail(field: str, value: object, allowed: str) -> ReviewError:
    return ReviewError(f"{field} = {value!r}: {allowed}")


def _range(raw: object, field: str, kind: str) -> tuple[float, float]:
    if not isinstance(raw, list) or len(raw) != 2:
        raise _fail(field, raw, f"a list of two values with units, [low, high] ({kind})")
    try:
        lo, hi = (quantity(v, f"{field}[{k}]", kind) for k, v in enumerate(raw))
    except SpecError as exc:
        raise ReviewError(str(exc)) from None
    if not lo <= hi:
        raise _fail(field, raw, "low <= high")
    return lo, hi


def _events(raw: object, field: str, tick_s: float) -> Schedule:
    if not isinstance(raw, list) or not raw:
        raise _fail(field, raw, "a non-empty list of {kind, at_s} tables ending with done")
    events = []
    for k, e in enumerate(raw):
        f = f"{field}[{k}]"
        if not isinstance(e, dict) or set(e) != {"kind", "at_s"}:
            raise _fail(f, e, "a table with exactly the keys kind and at_s")
        if e["kind"] not in EVENT_CODES:
            raise _fail(f"{f}.kind", e["kind"], f"one of {sorted(EVENT_CODES)}")
        at = e["at_s"]
        if isinstance(at, bool) or not isinstance(at, int | float) or not math.isfinite(at):
            raise _fail(f"{f}.at_s", at, "a number of seconds")
        ticks = at / tick_s
        if at < 0 or abs(ticks - round(ticks)) > 1e-6:
            raise _fail(f"{f}.at_s", at, f"seconds >= 0 in whole ticks of {tick_s:g} s")
        events.append(Event(e["kind"], round(round(ticks) * tick_s, 9)))
    try:
        return Schedule(tuple(events))
    except ValueError as exc:
        raise _fail(field, raw, str(exc)) from None


def parse_program(text: str, tick_s: float, source: str = "<program>") -> HandProgram:
    """Read a hand program (TOML text; format in docs/review.md).

    Parameters
    ----------
    text : str
        The TOML text.
    tick_s : float
        The appliance's tick (from the spec), s: event times must be whole ticks.
    source : str
        Names the file in errors.

    Raises
    ------
    ReviewError
        Naming the file, the field, the value and what is allowed.
    """
    try:
        data = tomllib.loads(text)
        prog = data.get("program", {})
        unknown = sorted(set(data) - {"program", "band"})
        if unknown:
            raise _fail(unknown[0], data[unknown[0]], "only [program] and [[band]] sections")
        if not isinstance(prog, dict) or set(prog) - {"name"}:
            raise _fail("program", prog, "a table with the key name only")
        name = prog.get("name", "hand program")
        if not isinstance(name, str):
            raise _fail("program.name", name, "a text")
        raw = data.get("band")
        if not isinstance(raw, list) or not raw:
            raise _fail("band", raw, "at least one [[band]] section")
        bands = []
        for i, b in enumerate(raw):
            f = f"band[{i}]"
            extra = sorted(set(b) - {"thickness", "start_temperature", "events"})
            if extra:
                raise _fail(
                    f"{f}.{extra[0]}", b[extra[0]], "keys thickness, start_temperature, events"
                )
            for key in ("thickness", "start_temperature", "events"):
                if key not in b:
                    raise ReviewError(f"{f}.{key} is missing (every band needs it)")
            bands.append(
                Band(
                    _range(b["thickness"], f"{f}.thickness", "length"),
                    _range(b["start_temperature"], f"{f}.start_temperature", "temperature"),
                    _events(b["events"], f"{f}.events", tick_s),
                )
            )
    except tomllib.TOMLDecodeError as exc:
        raise ReviewError(f"{source}: not TOML ({exc})") from None
    except ReviewError as exc:
        raise ReviewError(f"{source}: {exc}") from None
    return HandProgram(name, tuple(bands))


def load_program(path: Path, tick_s: float) -> HandProgram:
    """Read a hand program file (see :func:`parse_program`)."""
    try:
        text = Path(path).read_text("utf-8")
    except OSError as exc:
        raise ReviewError(f"{path}: cannot read the file ({exc.strerror})") from None
    except UnicodeDecodeError as exc:
        raise ReviewError(f"{path}: not UTF-8 text (byte {exc.start})") from None
    return parse_program(text, tick_s, str(path))


def budget_of(spec: Spec) -> ErrorBudget:
    """The error budget the spec's builds certify under."""
    return ErrorBudget(spec.planning.min_margin_log, spec.planning.reference_refinement)


def check_band(
    spec: Spec, band: Band, manifest: dict[str, Any] | None = None, rule: str = "corner"
) -> BandCheck:
    """Judge one band at its worst corner; see the module docstring.

    Parameters
    ----------
    spec : Spec
        Food, appliance, safety target, tolerances and reference settings.
    band : Band
        The band.
    manifest : dict, optional
        A table to compare with at the same corner.
    rule : str
        The table's lookup rule.

    Returns
    -------
    BandCheck
    """
    problem = problem_of(spec)
    x, t = band.thickness_m[1], band.start_temp_c[0]
    cases = problem.cases_at(x, t)
    verdicts = [judge(c, band.schedule) for c in cases]
    k = int(np.argmin([v.min_log_reduction for v in verdicts]))
    _, lr = food_frame(run_case(cases[k], band.schedule))
    cells = lr[-1]
    n = cells.size
    where_mm = (int(np.argmin(cells)) + 0.5) * cases[k].thickness_m / n * 1e3
    overall = judge_all(cases, band.schedule)
    target = problem.requirement.log_reduction
    try:
        cert = certify(cases, band.schedule, spec.appliance.tick_s, 1.0, budget_of(spec))
        extension: float | None = round(cert.schedule.done_s - band.schedule.done_s, 9)
        need: float | None = cert.required_margin_log
    except CertificationError:
        extension, need = None, None
    table_done, note = None, ""
    if manifest is not None:
        res = lookup(manifest, x, t, rule=rule)
        if res.status == 0:
            table_done = schedule_of(manifest, res.events).done_s
        else:
            note = status_text(manifest, res.status)
    return BandCheck(
        band,
        extension == 0.0,
        overall.passed,
        overall.min_log_reduction - target,
        problem.scenarios[k].name,
        where_mm,
        need,
        extension,
        table_done,
        note,
    )


def check_program(
    spec: Spec, program: HandProgram, manifest: dict[str, Any] | None = None, rule: str = "corner"
) -> tuple[BandCheck, ...]:
    """:func:`check_band` for every band of ``program``, in order."""
    return tuple(check_band(spec, b, manifest, rule) for b in program.bands)


def check_text(program: HandProgram, checks: tuple[BandCheck, ...]) -> str:
    """Plain-text view of the checks of ``program``."""
    lines = [f"{program.name}: {len(checks)} band(s), each at its worst corner"]
    for i, c in enumerate(checks):
        b = c.band
        ev = ", ".join(f"{e.kind}@{e.at_s:.1f}" for e in b.schedule.events)
        lines.append(
            f"band {i}: {b.thickness_m[0] * 1e3:.2f}-{b.thickness_m[1] * 1e3:.2f} mm, "
            f"{b.start_temp_c[0]:.1f} to {b.start_temp_c[1]:.1f} degC; {ev}"
        )
        verdict = "PASS" if c.safe else "FAIL"
        x, t = c.corner
        lines.append(
            f"  {verdict}: smallest margin {c.margin_log:+.3f} log at {x * 1e3:.2f} mm, "
            f"{t:.1f} degC (scenario {c.scenario}, {c.cold_spot_mm:.2f} mm from the face first "
            f"on the plate); reference verdict without the error budget: "
            + ("passes" if c.reference_passed else "fails")
        )
        if c.required_margin_log is not None:
            lines.append(
                f"  margin required (reference error + minimum): {c.required_margin_log:.3f} log"
            )
        if c.extension_s is None:
            lines.append("  no extension of done up to twice its time makes this band safe")
        elif not c.safe:
            done = b.schedule.done_s + c.extension_s
            lines.append(
                f"  extend done by {c.extension_s:.1f} s (to {done:.1f} s) to make it safe"
            )
        if c.table_done_s is not None:
            head = f"  the certified table runs done at {c.table_done_s:.1f} s at this corner"
            if c.extension_s is None:
                lines.append(f"{head}, safely (this band cannot be made safe by extending done)")
            else:
                ours = b.schedule.done_s + c.extension_s
                what = "this band" if not c.extension_s else "this band once extended"
                gain = ours - c.table_done_s
                lines.append(
                    f"{head}: {gain:.1f} s sooner than {what}"
                    if gain >= 0.0
                    else f"{head}: {-gain:.1f} s later than {what}"
                )
        elif c.table_note:
            lines.append(f"  no table comparison: {c.table_note}")
    bad = sum(not c.safe for c in checks)
    lines.append(f"{bad} band(s) unsafe" if bad else "every band is safe")
    return "\n".join(lines)
