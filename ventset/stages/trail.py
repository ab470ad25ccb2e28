"""The assumptions trail: every default a stage used, keyed by what it is."""

from __future__ import annotations

from ventset.model import Assumption


def note(key: str, name: str, value: float | str, unit: str, source: str) -> Assumption:
    """One assumption (floats kept to 4 decimals, as shown and saved)."""
    return Assumption(name, round(value, 4) if isinstance(value, float) else value, unit, source, key)
