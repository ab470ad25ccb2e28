"""Parsed TOML documents cached on disk as JSON; an entry is used only if it holds exactly the file's text.

Parsing species.toml with tomllib is most of the time ``load_library`` takes (about 25 of 37 ms);
reading the same document back from JSON takes about 1 ms. Only the parse is cached: the schema check
still runs on every load, so a cache entry can never hold data the current code would refuse, and an
edited file has a new hash. The cache is an optimisation only: any problem with it (no folder, a
read-only disk, a damaged entry) falls back to parsing the file. ``$VENTSET_CACHE_DIR`` moves it;
``VENTSET_CACHE_DIR=off`` turns it off.
"""

from __future__ import annotations

import json
import os
import sys
import zlib
from pathlib import Path
from typing import Any

CACHE_DIR_ENV = "VENTSET_CACHE_DIR"
_VERSION = "1"  # bump when the JSON layout of an entry changes


def cache_dir() -> Path | None:
    """$VENTSET_CACHE_DIR, else the platform's user cache folder for ventset; None when turned off."""
    override = os.environ.get(CACHE_DIR_ENV, "").strip()
    if override.lower() in ("off", "0", "no", "none"):
        return None
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
