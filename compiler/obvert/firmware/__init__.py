"""The firmware contract: what a table means to an appliance, below both builder and emitter.

It holds the canonical JSON encoding, the manifest's format version and its checks (a table
that is not certified is refused here), the axis encodings the firmware stores, and the
lookup rules in Python, bit-exact with the generated C.
"""

from obvert.firmware.canonical import CanonicalError, canonical_json, canonical_sha256
from obvert.firmware.contract import EVENT_CODES, EVENT_KINDS, FORMAT_VERSION, RULES, to_ticks
from obvert.firmware.lookup import LookupResult, LookupStatus, lookup, lookup_f32, lookup_fixed
from obvert.firmware.validate import ManifestError, check_manifest, upgrade_manifest

__all__ = [
    "EVENT_CODES",
    "EVENT_KINDS",
    "FORMAT_VERSION",
    "RULES",
    "CanonicalError",
    "LookupResult",
    "LookupStatus",
    "ManifestError",
    "canonical_json",
    "canonical_sha256",
    "check_manifest",
    "lookup",
    "lookup_f32",
    "lookup_fixed",
    "to_ticks",
    "upgrade_manifest",
]
