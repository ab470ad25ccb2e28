"""The one accessor for files shipped in resources/ (works installed or from a checkout).

``$VENTSET_RESOURCES_DIR`` (or an explicit ``folder``) points every loader at another folder holding the
same files, e.g. a test's mutated copy or a data set under review.
"""

from __future__ import annotations

import os
from functools import lru_cache
from importlib.resources import files
from pathlib import Path

RESOURCES_DIR_ENV = "VENTSET_RESOURCES_DIR"


def resource_dir(folder: Path | str | None = None) -> Path:
    """The folder the data files are read from: ``folder``, else $VENTSET_RESOURCES_DIR, else the shipped one."""
    if folder is not None:
        return Path(folder)
    override = os.environ.get(RESOURCES_DIR_ENV, "").strip()
    if override:
        return Path(override)
    return _shipped_dir()


@lru_cache(maxsize=1)
def _shipped_dir() -> Path:
    """Where the shipped files are (looked up once: an installed package does not move while it runs)."""
    packaged = files("ventset") / "_resources"
    if (packaged / "species.toml").is_file():
        return Path(str(packaged))
    return Path(__file__).resolve().parent.parent / "resources"


def resource_path(name: str, folder: Path | str | None = None) -> Path:
    """Return the path of a data file, e.g. ``resource_path("species.toml")`` (see ``resource_dir``)."""
    return resource_dir(folder) / name


def docs_dir() -> Path:
    """The folder of the bundled documents (the user guide and its pictures): installed ``ventset/_docs``
    (copied there by setup.py), else the checkout's ``docs/``."""
    packaged = files("ventset") / "_docs"
    if (packaged / "user-guide.md").is_file():
        return Path(str(packaged))
    return Path(__file__).resolve().parent.parent / "docs"


def icon_path() -> Path:
    """The SVG icon shipped in the package (the window's and the desktop entry's)."""
    return Path(str(files("ventset") / "assets" / "ventset.svg"))
