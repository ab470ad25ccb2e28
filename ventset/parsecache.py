"""Parsed TOML documents cached on disk as JSON; an entry is used only if it holds exactly the file's text.
Also (``built``) a value built from files, used only if every one of those files has exactly the same bytes.

Parsing species.toml with tomllib is most of the time ``load_library`` takes (about 25 of 37 ms);
reading the same document back from JSON takes about 1 ms. Only the parse is cached: the schema check
still runs on every load, so a cache entry can never hold data the current code would refuse, and an
edited file has a new hash. The cache is an optimisation only: any problem with it (no folder, a
read-only disk, a damaged entry) falls back to parsing the file. ``$VENTSET_CACHE_DIR`` moves it;
``VENTSET_CACHE_DIR=off`` turns it off.

``built`` keeps what a pure function of files returned (the checked library: ``ventset.library``) with a stamp
of every file it depends on, the data files and all of the planning core's source: size and two checksums of
each file's bytes. Any byte changed in a data file or in the code that checks and builds it gives a new stamp,
so the value is built again. It is a pickle, so it is kept beside ventset's byte code (ventset.pkgcache), not
in the folder above. Reading the stamp (the source is about 0.9 MB) and the value takes about a quarter of
building.
"""

from __future__ import annotations

import json
import os
import sys
import zlib
from collections.abc import Callable, Iterable
from functools import lru_cache
from pathlib import Path
from typing import Any, TypeVar

from ventset import pkgcache
from ventset.pkgcache import CACHE_DIR_ENV, turned_off

T = TypeVar("T")

_VERSION = "1"  # bump when the JSON layout of an entry changes


def cache_dir() -> Path | None:
    """$VENTSET_CACHE_DIR, else the platform's user cache folder for ventset; None when turned off."""
    if turned_off():
        return None
    override = os.environ.get(CACHE_DIR_ENV, "").strip()
    if override:
        return Path(override)
    if sys.platform == "win32":
        base = Path(os.environ.get("LOCALAPPDATA") or Path.home() / "AppData" / "Local")
        return base / "ventset" / "Cache"
    if sys.platform == "darwin":
        return Path.home() / "Library" / "Caches" / "ventset"
    return Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "ventset"


def parse_toml(name: str, raw: bytes) -> dict[str, Any]:
    """``tomllib.loads(raw.decode())`` through the cache; raises what tomllib (or the decode) raises."""
    text = raw.decode("utf-8")
    folder = cache_dir()
    # The checksum only spreads entries over file names; the text stored in the entry must equal the file's.
    entry = folder / f"{name}-v{_VERSION}-{zlib.crc32(raw):08x}.json" if folder else None
    if entry is not None:
        try:
            cached = json.loads(entry.read_bytes())
            if isinstance(cached, dict) and cached.get("text") == text and isinstance(cached.get("doc"), dict):
                return cached["doc"]
        except (OSError, ValueError):
            pass
    import tomllib  # imported only on a miss: the import alone costs about as much as reading the cache

    doc = tomllib.loads(text)
    if entry is not None:
        _store(entry, text, doc)
    return doc


def _store(entry: Path, text: str, doc: dict[str, Any]) -> None:
    """Write ``entry`` atomically and drop older entries for the same file; never raises."""
    try:
        data = json.dumps({"text": text, "doc": doc}, ensure_ascii=False)  # a TOML date is not JSON: not cached
    except (TypeError, ValueError):
        return
    from ventset.errors import VentsetError
    from ventset.storage import atomic_write_bytes

    name = entry.name.rsplit("-v", 1)[0]
    try:
        entry.parent.mkdir(parents=True, exist_ok=True)
        atomic_write_bytes(entry, data.encode("utf-8"))
        for old in entry.parent.glob(f"{name}-v*.json"):
            if old != entry:
                old.unlink(missing_ok=True)
    except (OSError, VentsetError):
        return


def _stamp(files: Iterable[Path]) -> tuple[tuple[str, int, int, int], ...]:
    out = []
    for path in files:
        raw = path.read_bytes()
        out.append((str(path), len(raw), zlib.crc32(raw), zlib.adler32(raw)))
    return tuple(out)


@lru_cache(maxsize=1)
def core_sources() -> tuple[Path, ...]:
    """Every Python source file of ventset's planning core (the package without ``gui``), in a fixed order."""
    root = Path(__file__).resolve().parent
    found = []
    for folder, dirs, names in os.walk(root):
        dirs[:] = sorted(d for d in dirs if d not in ("gui", "__pycache__"))
        found += [Path(folder) / n for n in sorted(names) if n.endswith(".py")]
    return tuple(found)


def built(name: str, files: Iterable[Path], build: Callable[[], T]) -> T:
    """``build()``, or the value it gave before if each of ``files`` (what ``build`` reads, and the code it runs)
    has the same bytes as then. Raises only what ``build`` raises; any problem with the cache builds anew. The
    value is kept beside ventset's byte code, never in the cache folder above (ventset.pkgcache says why)."""
    if pkgcache.folder() is None:
        return build()
    try:
        stamp = _stamp(files)
    except OSError:
        return build()
    found, value = pkgcache.load_value(name, stamp)
    if found:
        return value
    value = build()
    pkgcache.save_value(name, stamp, value)
    return value
