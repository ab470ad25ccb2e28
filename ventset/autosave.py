"""Autosave while a case is edited, and recovery after a crash or power loss.

Each running window owns a session: ``<data dir>/autosave/session-<id>.json`` (the case and the
file it came from) and ``session-<id>.lock``, locked for as long as the window runs. After a
crash the lock is free, so the next start finds the session file and offers to restore it.
Writes are atomic (ventset.storage). Sessions the user declines are moved to ``autosave/dismissed``
(the newest 20 are kept), not deleted. No Qt here; the window drives it with a timer.
"""

from __future__ import annotations

import os
import secrets
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import IO

from ventset import storage
from ventset.cases import Case, case_from_dict, check_reopens, now_iso
from ventset.textpolicy import bad_character

AUTOSAVE_INTERVAL_S = 10
AUTOSAVE_DEBOUNCE_S = 1.5  # after the last edit: a kill moments after an edit loses nothing (common practice)
FORMAT = "ventset-autosave"
SCHEMA_VERSION = 1
MAX_BYTES = 12_000_000
KEEP_DISMISSED = 20

try:  # POSIX advisory locks; released by the kernel when the process dies
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None  # type: ignore[assignment]  # the module is absent there; callers check for None


def autosave_dir() -> Path:
    """The autosave folder inside the user data folder (created if missing)."""
    folder = storage.data_dir() / "autosave"
    try:
        folder.mkdir(mode=0o700, parents=True, exist_ok=True)
    except OSError as exc:
        raise storage.WriteError(folder, f"the autosave folder cannot be created ({storage.os_reason(exc)})") \
            from None
    return folder


def _lock_free(lock_path: Path, pid: int) -> bool:
    """True if no running process holds the lock (the session's owner is gone)."""
    if fcntl is None:  # pragma: no cover - Windows: fall back to asking whether the pid is alive
        return not storage.pid_alive(pid)
    try:
        fh = lock_path.open("a")
    except FileNotFoundError:
        return True
    except OSError:
        return False
    try:
        fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        return False
    else:
        fcntl.flock(fh.fileno(), fcntl.LOCK_UN)
        return True
    finally:
        fh.close()


class AutosaveSession:
    """The autosave slot of one running window."""

    def __init__(self, folder: Path | None = None) -> None:
        self.folder = Path(folder) if folder is not None else autosave_dir()
        try:
            self.folder.mkdir(mode=0o700, parents=True, exist_ok=True)
        except OSError as exc:
            raise storage.WriteError(self.folder, f"the autosave folder cannot be created "
                                                  f"({storage.os_reason(exc)})") from None
        stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%S")
        self.id = f"{stamp}-{os.getpid()}-{secrets.token_hex(3)}"
        self.path = self.folder / f"session-{self.id}.json"
        self.lock_path = self.folder / f"session-{self.id}.lock"
        self._lock: IO[str] | None = None  # taken before the first autosave, held until close (or death)
        self._last: bytes | None = None
        self.closed = False

    def _take_lock(self) -> None:
        if self._lock is not None:
            return
        self._lock = self.lock_path.open("w")
        if fcntl is not None:
            fcntl.flock(self._lock.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)

    def __enter__(self) -> AutosaveSession:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def save(self, case: Case, source_path: os.PathLike | str | None = None,
             unparsed: dict[str, str] | None = None) -> bool:
        """Autosave ``case`` (edited, not yet saved to ``source_path``); False if nothing changed since last time.

        ``unparsed`` holds what is typed in fields that do not parse yet (field key → text), so that
        recovery can put it back even though the case holds only the last valid inputs.
        """
        try:
            case_data = check_reopens(case)
        except ValueError as exc:
            raise storage.WriteError(self.path, f"the case would not open again ({exc}); not autosaved") from None
        record = {"format": FORMAT, "schema_version": SCHEMA_VERSION, "pid": os.getpid(),
                  "source_path": str(source_path) if source_path else None, "case": case_data,
                  "unparsed": _kept_unparsed(unparsed)}
        try:
            body = storage.dumps(record)
        except (ValueError, TypeError) as exc:
            raise storage.WriteError(self.path, f"the case cannot be stored as JSON ({exc})") from None
        if body == self._last:
            return False
        record["updated_at"] = now_iso()
        try:
            self._take_lock()
        except OSError as exc:
            raise storage.WriteError(self.lock_path, storage.os_reason(exc)) from None
        storage.atomic_write_bytes(self.path, storage.dumps(record), private=True)
        self._last = body
        return True

    def clear(self) -> None:
        """Nothing unsaved any more (the case was saved): remove the autosave file."""
        self._last = None
        try:
            self.path.unlink()
        except FileNotFoundError:
            pass
        except OSError as exc:
            raise storage.WriteError(self.path, f"the autosave cannot be removed ({storage.os_reason(exc)})") \
                from None

    def close(self, keep_unsaved: bool = True) -> None:
        """End the session (clean exit). Unsaved work goes to autosave/dismissed unless ``keep_unsaved`` is False."""
        if self.closed:
            return
        if _exists(self.path):
            if keep_unsaved:
                _to_dismissed(self.path)
            else:
                self.clear()
        if self._lock is not None:
            self._lock.close()
            self._lock = None
            try:
                self.lock_path.unlink()
            except FileNotFoundError:
                pass
        self.closed = True


@dataclass(frozen=True)
class Recovery:
    """A session left behind by a window that did not close cleanly."""

    path: Path
    case: Case | None
    source_path: Path | None
    updated_at: str
    error: str = ""
    unparsed: dict[str, str] = field(default_factory=dict)

    @property
    def title(self) -> str:
        """One line for the restore question: patient, species, file and time."""
        if self.case is None:
            return f"{self.path.name} (cannot be read: {self.error})"
        p = self.case.request.patient
        who = f"{p.name} ({p.species}, {p.mass_kg:g} kg)" if p.name else f"{p.species}, {p.mass_kg:g} kg"
        where = self.source_path.name if self.source_path else "never saved"
        return f"{who} — {where} — autosaved {self.updated_at.replace('T', ' ').replace('Z', ' UTC')}"


def _read(path: Path) -> Recovery:
    try:
        data = storage.read_json(path, MAX_BYTES)
        if not isinstance(data, dict) or data.get("format") != FORMAT:
            raise ValueError("it is not a ventset autosave file")
        if data.get("schema_version") != SCHEMA_VERSION:
            raise ValueError(f"autosave schema {data.get('schema_version')!r} is not {SCHEMA_VERSION}")
        case, _ = case_from_dict(data.get("case"))
        source = data.get("source_path")
        updated = data.get("updated_at")
        unparsed = _kept_unparsed(data.get("unparsed"))
        source_ok = isinstance(source, str) and 0 < len(source) < 4096 and bad_character(source) is None
        return Recovery(path, case, Path(str(source)) if source_ok else None,
                        updated if isinstance(updated, str) else "", unparsed=unparsed)
    except storage.StorageError as exc:
        return Recovery(path, None, None, "", exc.reason)
    except ValueError as exc:
        return Recovery(path, None, None, "", str(exc))
    except (TypeError, AttributeError, KeyError, OverflowError, RecursionError) as exc:  # a last guard
        return Recovery(path, None, None, "", f"it holds a value of the wrong kind ({type(exc).__name__})")


MAX_UNPARSED = 500


def _kept_unparsed(raw: object) -> dict[str, str]:
    """What was typed in fields that do not parse yet, as autosave keeps it: short single-line text only (the
    same rule when writing and reading, so what is written is read back)."""
    if not isinstance(raw, dict):
        return {}
    return {k: v for k, v in raw.items() if isinstance(k, str) and len(k) < 100 and isinstance(v, str)
            and len(v) < MAX_UNPARSED and bad_character(v) is None and bad_character(k) is None}


def _exists(path: Path) -> bool:
    try:
        return path.exists()
    except OSError:
        return False


def _pid_of(path: Path) -> int:
    parts = path.stem.split("-")
    try:
        return int(parts[-2])
    except (IndexError, ValueError):
        return -1


def find_recoverable(folder: Path | None = None, exclude: AutosaveSession | None = None) -> list[Recovery]:
    """Sessions whose window is gone, newest first (unreadable ones too, with the reason)."""
    folder = Path(folder) if folder is not None else autosave_dir()
    found: list[Recovery] = []
    try:
        paths = sorted(folder.glob("session-*.json"), reverse=True)
    except OSError:
        return found
    for path in paths:
        if exclude is not None and path == exclude.path:
            continue
        if _lock_free(path.with_suffix(".lock"), _pid_of(path)):
            found.append(_read(path))
    return found


def _to_dismissed(path: Path) -> None:
    dest_dir = path.parent / "dismissed"
    try:
        dest_dir.mkdir(exist_ok=True)
        os.replace(path, dest_dir / path.name)
        storage.fsync_folder(path.parent)
        for old in sorted(dest_dir.glob("session-*.json"), reverse=True)[KEEP_DISMISSED:]:
            old.unlink()
    except OSError as exc:
        raise storage.WriteError(path, f"cannot move the autosave aside ({storage.os_reason(exc)})") from None


def _remove_lock(rec: Recovery) -> None:
    try:
        rec.path.with_suffix(".lock").unlink()
    except FileNotFoundError:
        pass
    except OSError:  # pragma: no cover - a leftover lock file is harmless
        pass


def dismiss(rec: Recovery) -> None:
    """The user declined to restore: move the session to autosave/dismissed (kept, not deleted)."""
    if _exists(rec.path):
        _to_dismissed(rec.path)
    _remove_lock(rec)


def restore(rec: Recovery, session: AutosaveSession) -> Case:
    """Take over a left-behind session: the new session autosaves it first, then the old file is put aside."""
    if rec.case is None:
        raise storage.ReadError(rec.path, rec.error or "it cannot be read")
    session.save(rec.case, rec.source_path)
    dismiss(rec)
    return rec.case
