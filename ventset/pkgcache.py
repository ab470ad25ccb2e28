"""Caches read back as Python objects (compiled code, the pickled library), kept only in ventset's own byte-code
folder.

The house rule (tests/test_storage.py) is that nothing a user opens, and nothing in a folder a user chooses, is
ever unpickled or unmarshalled: a crafted file would run code. These two caches hold objects that only a
pickle or ``marshal`` can give back, so they live where Python already keeps ventset's compiled modules (the
package's ``__pycache__`` folder, next to the ``.pyc`` files Python itself loads and runs without asking):
whoever can write there can already change what ventset runs, so nothing new is trusted. ``VENTSET_CACHE_DIR``
(which may name any folder, even a shared one) never moves them; ``VENTSET_CACHE_DIR=off`` turns them off. Where
the folder cannot be written (a system-wide installation), or Python is told not to write byte code
(``PYTHONDONTWRITEBYTECODE``, ``-B``), they are simply not kept.

This is the only module that may import ``pickle`` or ``marshal`` (the scan in tests/test_storage.py).
"""

from __future__ import annotations

import marshal
import os
import sys
from pathlib import Path
from typing import Any

PACKAGE_DIR = Path(__file__).resolve().parent
_TAG = sys.implementation.cache_tag or "python"  # as Python names its .pyc files: another Python never reads them


CACHE_DIR_ENV = "VENTSET_CACHE_DIR"  # where the parse cache goes (ventset.parsecache); "off" turns every cache off


def turned_off() -> bool:
    """True when ``VENTSET_CACHE_DIR`` says off ('off', '0', 'no', 'none'): no cache of any kind is used."""
    return os.environ.get(CACHE_DIR_ENV, "").strip().lower() in ("off", "0", "no", "none")


def folder() -> Path | None:
    """The package's byte-code folder, or None when caches are turned off."""
    return None if turned_off() else PACKAGE_DIR / "__pycache__"


def path(name: str, suffix: str) -> Path | None:
    where = folder()
    return where / f"ventset-{name}.{_TAG}.{suffix}" if where is not None else None


def _read(name: str, suffix: str) -> bytes | None:
    p = path(name, suffix)
    if p is None:
        return None
    try:
        return p.read_bytes()
    except OSError:
        return None


def _write(name: str, suffix: str, data: bytes) -> bool:
    p = path(name, suffix)
    if p is None or sys.dont_write_bytecode:  # told not to write byte code (PYTHONDONTWRITEBYTECODE, -B): nor this
        return False
    from ventset.errors import VentsetError
    from ventset.storage import atomic_write_bytes

    try:
        p.parent.mkdir(exist_ok=True)
        atomic_write_bytes(p, data)
    except (OSError, VentsetError):
        return False
    return True


def load_code(name: str) -> dict:
    """The table ``save_code`` kept under ``name`` (any value, e.g. text → code object), or {} if none is usable."""
    raw = _read(name, "marshal")
    if raw is None:
        return {}
    try:
        table = marshal.loads(raw)
    except (EOFError, ValueError, TypeError):
        return {}
    return table if isinstance(table, dict) else {}


def save_code(name: str, table: dict) -> bool:
    """Keep ``table`` (marshal-able: texts and code objects) under ``name``; True when written. Never raises."""
    try:
        return _write(name, "marshal", marshal.dumps(table))
    except ValueError:
        return False


def load_value(name: str, stamp: object) -> tuple[bool, Any]:
    """(True, value) when ``save_value`` kept a value under ``name`` with an equal ``stamp``, else (False, None)."""
    raw = _read(name, "pickle")
    if raw is None:
        return False, None
    import pickle  # here, not at the top: its import costs start-up a millisecond or two

    try:
        kept_stamp, value = pickle.loads(raw)
    except Exception:  # noqa: BLE001 - damaged, or made by other code: either way, not used
        return False, None
    return (True, value) if kept_stamp == stamp else (False, None)


def save_value(name: str, stamp: object, value: object) -> bool:
    """Keep ``value`` with its ``stamp`` under ``name``; True when written. Never raises."""
    import pickle

    try:
        data = pickle.dumps((stamp, value), protocol=pickle.HIGHEST_PROTOCOL)
    except Exception:  # noqa: BLE001 - a value that cannot be pickled is simply not kept
        return False
    return _write(name, "pickle", data)
