"""Emit layer: a checked manifest rendered to firmware files for a target profile.

``emit(manifest, target)`` returns ``{filename: bytes}`` and writes nothing; targets come
from ``load_target("c99")`` (built-ins in ``targets/``) or a TOML path. The manifest is
checked by the firmware contract first (:func:`obvert.firmware.check_manifest`).
"""

from obvert.emitter.context import table_bytes
from obvert.emitter.errors import EmitError
from obvert.emitter.profile import (
    OutputSpec,
    ProfileError,
    TargetProfile,
    load_target,
    loads_target,
)
from obvert.emitter.render import emit

__all__ = [
    "EmitError",
    "OutputSpec",
    "ProfileError",
    "TargetProfile",
    "emit",
    "load_target",
    "loads_target",
    "table_bytes",
]
