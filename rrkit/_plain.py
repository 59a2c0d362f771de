"""Settings as plain data: one `to_plain` (JSON-ready values) and one `digest` (its SHA-256).

Every settings object of rrkit is a frozen dataclass, possibly holding others (a
`rrkit.DailySettings` holds the cleaning, metric, quality, day and baseline settings). The
resume cache, the HDF5 store and the provenance file all record settings through these two
functions, so the same settings always give the same text and the same hash.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import json
from collections.abc import Mapping
from typing import Any

__all__ = ["canonical_json", "digest", "fields_plain", "to_plain"]


def to_plain(obj: Any) -> Any:
    """``obj`` as JSON-ready values: dataclasses -> dicts of their fields, tuples -> lists.

    A dataclass with its own ``to_plain()`` method gives what that method returns.
    Dates and clock times become ISO text, time zones their name; a window spec (anything
    with ``_plain_as_repr``) its ``repr``, which names its kind and every parameter. A mapping
    that is already plain comes back equal to itself, so ``digest(settings) ==
    digest(to_plain(settings))``.
    """
    if obj is None or isinstance(obj, (str, bool, int, float)):
        return obj
    if getattr(obj, "_plain_as_repr", False):
        return repr(obj)
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        own = getattr(obj, "to_plain", None)
        return own() if callable(own) else fields_plain(obj)
    if isinstance(obj, Mapping):
        return {str(k): to_plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [to_plain(v) for v in obj]
    if isinstance(obj, (dt.date, dt.time)):
        return obj.isoformat()
    if isinstance(obj, dt.tzinfo):
        return str(obj)
    if hasattr(obj, "item") and callable(obj.item):  # numpy scalars
        return to_plain(obj.item())
    return repr(obj)


def fields_plain(obj: Any) -> dict[str, Any]:
    """A dataclass as ``{field: to_plain(value)}`` (what a settings class's ``to_plain`` builds
    on)."""
    return {f.name: to_plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}


def canonical_json(obj: Any) -> str:
    """Sorted-key, compact JSON of `to_plain` (the text that is hashed and stored)."""
    return json.dumps(to_plain(obj), sort_keys=True, separators=(",", ":"), allow_nan=True)


def digest(obj: Any) -> str:
    """SHA-256 (hex) of `canonical_json`: the one settings hash of rrkit."""
    return hashlib.sha256(canonical_json(obj).encode("utf-8")).hexdigest()
