"""Loading the Qt binding (PySide6) quickly.

PySide6 asks of every module imported after it whether its source mentions "PySide6" (so that its optional
``__feature__`` switches know which modules they apply to). It asks through ``inspect.getsource``, which
decodes the whole file into the line cache and keeps it there: about 40 ms of the window's start-up for the
300 modules of numpy, pyqtgraph and ventset, and their text held in memory. ``quicken_source_check`` gives
it the same answer from the file's bytes. (Measured with PySide6 6.10.3, the pinned version; the check and
its reason are in PySide6's ``shibokensupport/feature.py``, PYSIDE-2029.)
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from types import ModuleType

MARK = b"PySide6"  # what PySide6's own check looks for in the source


def source_mentions(module: ModuleType, fallback: Callable[[ModuleType], bool]) -> bool:
    """Whether ``module``'s source file contains "PySide6": read as bytes when it is a plain ``.py`` file,
    else answered by ``fallback`` (PySide6's own check: built-in, compiled and zipped modules)."""
    path = getattr(module, "__file__", None)
    if isinstance(path, str) and path.endswith(".py"):
        try:
            with open(path, "rb") as f:
                return MARK in f.read()
        except OSError:
            pass
    return fallback(module)


def quicken_source_check() -> bool:
    """Give PySide6's per-import source check the byte read above; call before PySide6 is imported. True when
    installed; False (PySide6's own check kept, nothing else changes) when this PySide6 has no such check."""
    import shiboken6  # noqa: F401  (installs the import hook and its support modules)

    feature = sys.modules.get("shibokensupport.feature")
    own = getattr(feature, "_mod_uses_pyside", None)
    if feature is None or not callable(own):
        return False
    if getattr(own, "quick", False):  # installed already
        return True

    def check(module: ModuleType) -> bool:
        return source_mentions(module, own)

    check.quick = True  # type: ignore[attr-defined]
    feature._mod_uses_pyside = check  # type: ignore[attr-defined]
    return True
