"""The list of recently saved or opened case files, in the user data folder. No Qt here."""

from __future__ import annotations

import os
from pathlib import Path

from ventset import storage

RECENT_FILE = "recent.json"
RECENT_MAX = 10


def _recent_path() -> Path:
    return storage.data_dir() / RECENT_FILE


def recent_files() -> list[Path]:
    """Recently saved or opened case files, newest first (a damaged list reads as empty)."""
    try:
        data = storage.read_json(_recent_path(), 1_000_000)
    except storage.StorageError:
        return []
    paths = data.get("paths") if isinstance(data, dict) else None
    if not isinstance(paths, list):
        return []
    return [Path(p) for p in paths if isinstance(p, str) and p][:RECENT_MAX]


def _write_recent(paths: list[Path]) -> str:
    try:
        storage.atomic_write_json(_recent_path(), {"format": "ventset-recent", "schema_version": 1,
                                                   "paths": [str(p) for p in paths[:RECENT_MAX]]}, private=True)
    except storage.StorageError as exc:
        return f"the list of recent cases was not updated ({exc})"
    return ""


def add_recent(path: os.PathLike | str) -> str:
    """Put ``path`` at the top of the recent-files list; returns a warning ('' if none). Never raises: the list
    is a convenience, and a case that was saved stays saved whatever happens to it."""
    try:
        try:
            target = Path(path).resolve()
        except (OSError, RuntimeError):
            target = Path(path).absolute()
        return _write_recent([target, *(p for p in recent_files() if p != target)])
    except (OSError, RuntimeError, ValueError) as exc:
        return f"the list of recent cases was not updated ({type(exc).__name__})"


def remove_recent(path: os.PathLike | str) -> str:
    """Drop ``path`` from the recent-files list (e.g. after it failed to open); returns a warning ('' if none)."""
    try:
        target = Path(path)
        return _write_recent([p for p in recent_files() if p != target and p != target.absolute()])
    except (OSError, ValueError) as exc:
        return f"the list of recent cases was not updated ({type(exc).__name__})"


def clear_recent() -> str:
    """Empty the recent-files list (the case files themselves are untouched); returns a warning ('' if none)."""
    return _write_recent([])


def recent_labels(paths: list[Path]) -> list[str]:
    """What the recent-files menu shows for each path: the file name, with its folder's name added where two
    entries would otherwise read the same (the full path is the menu entry's tooltip)."""
    from ventset.errors import visible

    names = [p.name for p in paths]
    out = []
    for p, name in zip(paths, names, strict=True):
        label = f"{name} — {p.parent.name or p.parent}" if names.count(name) > 1 else name
        out.append(visible(label, 120))
    return out
