"""Build a settings dataclass from None, an instance, or a plain mapping (TOML, JSON, kwargs).

Several stages take settings either as their dataclass or as a dict read from a file; this is
the one place that turns a mapping into the dataclass and refuses unknown names in one line.
"""

from __future__ import annotations

from dataclasses import fields
from typing import Any, Mapping, TypeVar

from resolve.errors import InputError

T = TypeVar("T")


def coerce_settings(cls: type[T], settings: "T | Mapping[str, Any] | None", what: str) -> T:
    """Return ``settings`` as an instance of ``cls``; lists become tuples; unknown keys refused."""
    if settings is None:
        return cls()
    if isinstance(settings, cls):
        return settings
    known = {f.name for f in fields(cls)}
    unknown = sorted(set(settings) - known)
    if unknown:
        raise InputError(
            f"Unknown {what} setting(s) {', '.join(unknown)}; use only {', '.join(sorted(known))}."
        )
    values = {k: (tuple(v) if isinstance(v, list) else v) for k, v in settings.items()}
    return cls(**values)
