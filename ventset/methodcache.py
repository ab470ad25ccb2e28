"""ventset's dataclass methods compiled once and kept on disk, like Python's own byte-code caches.

On Python 3.11 the ``dataclasses`` module writes each generated method (``__init__``, ``__repr__``, ``__eq__``,
``__hash__``, the frozen ``__setattr__``/``__delattr__``) as source text and compiles it when the class is made:
about 40 ms for ventset's 86 classes, a tenth of the window's start-up. ``install`` gives that module an
``exec`` that, for classes made in ventset's own modules only, looks the text up in a cache of compiled code
before compiling it. An entry is keyed by the whole text, so it can only ever be that text's compilation;
the file is per Python version, is read once, and is written at exit when something new was compiled. It is
kept beside ventset's own byte code (ventset.pkgcache, which says why only there). Any problem with it (a
damaged file, a read-only folder) leaves Python's own compilation in place; ``VENTSET_CACHE_DIR=off`` turns it
off.
"""

from __future__ import annotations

import atexit
import builtins
import sys
from types import CodeType

from ventset import pkgcache

_OWN = "ventset"  # classes made in this package's modules use the cache; every other dataclass is left alone
NAME = "dataclass-methods"
KEEP_AT_MOST = 4000  # entries; past that, only what this process used is kept (old texts of edited classes go)
_compiled: dict[str, CodeType] = {}
_used: set[str] = set()
_state = {"new": 0, "installed": False}


def cache_file():
    """The cache's file, or None when caches are turned off."""
    return pkgcache.path(NAME, "marshal")


def compiled(source: str) -> CodeType:
    """``source`` compiled as ``exec`` compiles a text inside ``dataclasses`` (no inherited future flags)."""
    _used.add(source)
    code = _compiled.get(source)
    if code is None:
        code = compile(source, "<string>", "exec", dont_inherit=True)
        _compiled[source] = code
        _state["new"] += 1
    return code


def _exec(source, globals=None, locals=None, /):  # noqa: A002 - exec's own parameter names
    module = str(globals.get("__name__", "")) if isinstance(globals, dict) else ""
    if isinstance(source, str) and (module == _OWN or module.startswith(_OWN + ".")):
        source = compiled(source)
    return builtins.exec(source, globals, locals)


def _read() -> None:
    table = pkgcache.load_code(NAME)
    _compiled.update((k, v) for k, v in table.items() if isinstance(k, str) and isinstance(v, CodeType))


def save() -> bool:
    """Write the cache when something new was compiled; True when written. Never raises."""
    if not _state["new"]:
        return False
    keep = _compiled if len(_compiled) <= KEEP_AT_MOST else {k: _compiled[k] for k in _used}
    if not pkgcache.save_code(NAME, dict(keep)):
        return False
    _state["new"] = 0
    return True


def install() -> bool:
    """Use the cache for ventset's dataclasses from now on; False (nothing changed) on a Python whose
    ``dataclasses`` is not the 3.11 one this was written for, or when the cache is turned off."""
    if _state["installed"]:
        return True
    import dataclasses

    if sys.version_info[:2] != (3, 11) or not hasattr(dataclasses, "_create_fn") or cache_file() is None:
        return False
    _read()
    dataclasses.exec = _exec  # type: ignore[attr-defined]  # shadows the built-in inside that module only
    atexit.register(save)
    _state["installed"] = True
    return True
