"""Emit layer: a canonical manifest rendered to firmware files for a target profile.

``emit(manifest, target)`` returns ``{filename: bytes}`` and writes nothing; targets come
from ``load_target("c99")`` (built-ins in ``targets/``) or a TOML path.
"""

from obvert.emit.canonical import CanonicalError, canonical_json, canonical_sha256
from obvert.emit.profile import OutputSpec, ProfileError, TargetProfile, load_target, loads_target
from obvert.emit.render import emit
from obvert.emit.validate import EmitError

__all__ = [
    "CanonicalError",
    "EmitError",
    "OutputSpec",
    "ProfileError",
    "TargetProfile",
    "canonical_json",
    "canonical_sha256",
    "emit",
    "load_target",
    "loads_target",
]
