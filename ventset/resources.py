"""The one accessor for files shipped in resources/ (works installed or from a checkout)."""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path


def resource_path(name: str) -> Path:
    """Return the path of a shipped data file, e.g. ``resource_path("species.toml")``."""
    packaged = files("ventset") / "_resources" / name
    if packaged.is_file():
        return Path(str(packaged))
    checkout = Path(__file__).resolve().parent.parent / "resources" / name
    return checkout
