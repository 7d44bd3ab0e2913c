"""Render a manifest for a target: ``emit(manifest, target) -> {filename: bytes}``.

Python decides which files exist (the target's ``outputs``); Jinja2 templates from package
``obvert.templates`` lay them out. The environment is strict: an undefined name is an
error, and only strings may reach the output, so every number goes through a filter of
:mod:`obvert.emitter.filters`.
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from importlib import resources
from typing import Any

import jinja2

from obvert.emitter.context import c_context
from obvert.emitter.errors import EmitError
from obvert.emitter.filters import FILTERS
from obvert.emitter.loader import loader_context
from obvert.emitter.profile import C_HEADER_TEMPLATE, OutputSpec, TargetProfile
from obvert.firmware.canonical import CanonicalError, canonical_json
from obvert.firmware.validate import ManifestError, check_manifest

__all__ = ["LOADER_HEADER_TEMPLATE", "emit", "environment", "render_template"]

#: Template of the bundle loader's header (its ``.c`` file includes it by its output name).
LOADER_HEADER_TEMPLATE = "bundle/loader.h.j2"


def _finalize(value: Any) -> str:
    """Let only strings through: a raw number in a template is a template bug."""
    if isinstance(value, str):
        return value
    if isinstance(value, jinja2.Undefined):
        return str(value)  # StrictUndefined raises UndefinedError naming the variable
    raise EmitError(
        f"a template printed {value!r} ({type(value).__name__}) directly; format numbers "
        "and names through a filter (c_int, c_uint, c_float, c_axis, num, c_comment)"
    )


def _load_template(name: str) -> str:
    """Template source from package ``obvert.templates`` (``c/table.h.j2`` style names)."""
    parts = name.split("/")
    if any(part in ("", ".", "..") for part in parts):
        raise jinja2.TemplateNotFound(name)
    resource = resources.files("obvert.templates").joinpath(*parts)
    if not resource.is_file():
        raise jinja2.TemplateNotFound(name)
    return resource.read_text(encoding="utf-8")


@functools.lru_cache(maxsize=1)
def environment() -> jinja2.Environment:
    """Return the shared, strict Jinja2 environment (templates from ``obvert.templates``)."""
    env = jinja2.Environment(
        loader=jinja2.FunctionLoader(_load_template),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        autoescape=False,
        finalize=_finalize,
    )
    env.filters.update(FILTERS)
    return env


def render_template(name: str, context: Mapping[str, Any]) -> str:
    """Render template ``name`` of ``obvert.templates`` with ``context``."""
    try:
        template = environment().get_template(name)
    except jinja2.TemplateNotFound:
        raise EmitError(f"template {name!r} not found in package obvert.templates") from None
    return template.render(**context)


def _context(
    spec: OutputSpec, manifest: dict[str, Any], target: TargetProfile, names: dict[str, str]
) -> dict[str, Any]:
    """Context for a template: C templates get the C view; every template the manifest."""
    context: dict[str, Any] = {"manifest": manifest, "target": target}
    if spec.template is not None and spec.template.startswith("bundle/"):
        headers = [o for o in target.outputs if o.template == LOADER_HEADER_TEMPLATE]
        if not headers:
            raise EmitError(
                f"target {target.name!r}: template {spec.template!r} needs an output with "
                f"template {LOADER_HEADER_TEMPLATE!r} (the loader's header)"
            )
        header = headers[0].filename.format(**names)
        context.update(loader_context(manifest, target, header))
    if spec.template is not None and spec.template.startswith("c/"):
        headers = [o for o in target.outputs if o.template == C_HEADER_TEMPLATE]
        header = headers[0].filename.format(**names) if headers else None
        context.update(c_context(manifest, target, header))
    return context


def _render_one(
    spec: OutputSpec, manifest: dict[str, Any], target: TargetProfile, names: dict[str, str]
) -> bytes:
    if spec.serializer == "canonical_json":
        try:
            return canonical_json(manifest)
        except CanonicalError as exc:
            raise ManifestError(f"manifest is not canonical JSON: {exc}") from None
    if spec.template is None:  # OutputSpec guarantees one of the two
        raise EmitError(f"output {spec.filename!r} has neither template nor serializer")
    text = render_template(spec.template, _context(spec, manifest, target, names))
    return text.encode("utf-8")


def emit(manifest: dict[str, Any], target: TargetProfile) -> dict[str, bytes]:
    """Render every output of ``target`` for ``manifest``.

    Parameters
    ----------
    manifest : dict
        Canonical manifest of a cook-program table (plain JSON-safe values).
    target : TargetProfile
        Target profile, e.g. from :func:`obvert.emitter.load_target`.

    Returns
    -------
    dict of str to bytes
        File name to file content, in the order of the target's outputs. Nothing is
        written to disk.

    Raises
    ------
    EmitError
        If the manifest misses a field or does not fit the target; the message names the
        field, its value and what is allowed.
    """
    check_manifest(manifest)
    try:
        canonical_json(manifest)
    except CanonicalError as exc:
        raise ManifestError(f"manifest is not canonical JSON: {exc}") from None
    table = manifest["table"]["name"]
    names = {"table": table, "prefix": target.prefix_for(table)}
    files: dict[str, bytes] = {}
    for spec in target.outputs:
        filename = spec.filename.format(**names)
        if filename in files:
            raise EmitError(f"target {target.name!r} writes {filename!r} twice for {table!r}")
        files[filename] = _render_one(spec, manifest, target, names)
    return files
