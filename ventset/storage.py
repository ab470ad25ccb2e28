"""Files the user keeps: the data folder, atomic writes, and JSON loading that refuses hostile input.

Every save goes through :func:`atomic_write_bytes`: a temporary file in the same folder is
written, flushed and fsynced, moved over the target with ``os.replace`` and the folder is
fsynced, so a crash or power loss leaves either the old file or the new one, never a mix.
:func:`read_json` caps the size before parsing, rejects NaN/Infinity, duplicate keys, lone
surrogates and runaway nesting, and removes temporary files that a killed writer left behind.
No pickle, no eval: plain JSON only.
"""

from __future__ import annotations

import errno
import json
import math
import os
import socket
import sys
import tempfile
import time
from pathlib import Path

from ventset.errors import VentsetError, visible, visible_path

DATA_DIR_ENV = "VENTSET_DATA_DIR"
MAX_NESTING = 64
STALE_TEMP_AGE_S = 3600.0
_TEMP_SUFFIX = ".tmp"


class StorageError(VentsetError):
    """A file could not be read or written; ``reason`` says why in plain words."""

    verb = "use"

    def __init__(self, path: os.PathLike | str, reason: str) -> None:
        self.path = Path(path)
        self.reason = reason
        super().__init__(str(self))

    def message(self) -> str:
        return f"cannot {self.verb} '{visible_path(self.path)}': {self.reason}"


class ReadError(StorageError):
    verb = "open"


class WriteError(StorageError):
    verb = "save"


_ADVICE = {
    errno.ENAMETOOLONG: "choose a shorter name",
    errno.EACCES: "choose a folder you may use, or ask the folder's owner",
    errno.EPERM: "choose another folder",
    errno.ENOSPC: "the disk is full; free some space or choose another disk",
    errno.EDQUOT: "your disk quota is used up; free some space or choose another disk",
    errno.EROFS: "the disk is read-only; choose another folder",
    errno.ENOENT: "check the name and that its folder exists",
    errno.ENOTDIR: "a part of the path is a file, not a folder",
    errno.EISDIR: "it is a folder, not a file",
    errno.ELOOP: "the path has too many symbolic links (a loop?)",
    errno.EIO: "check the disk, or choose another one",
}


def os_reason(exc: OSError) -> str:
    """An OSError in plain words, with what to do ('File name too long: choose a shorter name')."""
    words = exc.strerror or type(exc).__name__
    advice = _ADVICE.get(exc.errno or -1)
    return f"{words}: {advice}" if advice else words


_os_reason = os_reason


def data_dir(create: bool = True) -> Path:
    """The user data folder: $VENTSET_DATA_DIR if set, else platformdirs' user_data_dir("ventset").

    Created private to the user (0700) when it is missing.
    """
    override = os.environ.get(DATA_DIR_ENV, "").strip()
    if override:
        folder = Path(override).expanduser()
    else:
        from platformdirs import user_data_dir

        folder = Path(user_data_dir("ventset", appauthor=False))
    if create:
        try:
            folder.mkdir(mode=0o700, parents=True, exist_ok=True)
            if not folder.is_dir():
                raise NotADirectoryError(errno.ENOTDIR, "not a folder")
        except OSError as exc:
            raise WriteError(folder, f"the data folder cannot be used ({os_reason(exc)}); set {DATA_DIR_ENV} "
                                     "to a folder you own") from None
    return folder


def fsync_folder(folder: Path) -> None:
    """Make a rename or removal in ``folder`` durable (no-op on Windows)."""
    if sys.platform.startswith("win"):  # pragma: no cover - folders cannot be opened for fsync on Windows
        return
    fd = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def host_tag() -> str:
    """This machine's name as it goes into temporary file names (letters, digits and '-' only)."""
    name = "".join(ch if ch.isascii() and (ch.isalnum() or ch == "-") else "-" for ch in socket.gethostname())
    return name.strip("-")[:40] or "host"


def _temp_prefix(target: Path) -> str:
    return f".{target.name}."


def _umask() -> int:
    mask = os.umask(0o022)  # the only portable way to read it; put back at once
    os.umask(mask)
    return mask


def real_target(path: os.PathLike | str) -> Path:
    """Where a write to ``path`` must go: through symbolic links to the file they point at (the links stay)."""
    target = Path(path)
    try:
        if target.is_symlink():
            return Path(os.path.realpath(target))
    except OSError:
        pass
    return target


def atomic_write_bytes(path: os.PathLike | str, data: bytes, *, private: bool = False) -> None:
    """Replace ``path`` with ``data`` atomically and durably; raises WriteError (the old file stays).

    A symbolic link is written through (its target is replaced; the link stays). A file that exists keeps its
    permissions; a new one gets the user's normal permissions (0666 less the umask), or 0600 when ``private``
    (files inside the private data folder). The temporary file is named ``.<name>.<host>.<pid>.<random>.tmp``.
    """
    shown = Path(path)
    target = real_target(shown)
    folder = target.parent if str(target.parent) else Path(".")
    tmp: str | None = None
    try:
        if target.is_dir():
            raise WriteError(shown, "it is a folder, not a file")
        if not folder.is_dir():
            raise WriteError(shown, f"the folder '{visible_path(folder)}' does not exist")
        try:
            mode = target.stat().st_mode & 0o7777
        except FileNotFoundError:
            mode = 0o600 if private else 0o666 & ~_umask()
        fd, tmp = tempfile.mkstemp(prefix=f"{_temp_prefix(target)}{host_tag()}.{os.getpid()}.",
                                   suffix=_TEMP_SUFFIX, dir=folder)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, target)
        tmp = None
    except OSError as exc:
        raise WriteError(shown, os_reason(exc)) from None
    finally:
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass
    try:
        fsync_folder(folder)
    except OSError:  # the file itself is written and fsynced; the folder entry is durable on the next sync
        pass


def dumps(obj: object) -> bytes:
    """Serialise to UTF-8 JSON (indented, NaN refused); raises ValueError for what JSON cannot hold."""
    text = json.dumps(obj, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    return text.encode("utf-8")  # a lone surrogate raises UnicodeEncodeError (a ValueError) here


def atomic_write_json(path: os.PathLike | str, obj: object, *, private: bool = False) -> None:
    """Write ``obj`` as JSON through :func:`atomic_write_bytes`."""
    try:
        data = dumps(obj)
    except (ValueError, TypeError, RecursionError) as exc:
        raise WriteError(path, f"the data cannot be stored as JSON ({_short(exc)})") from None
    atomic_write_bytes(path, data, private=private)


def pid_alive(pid: int) -> bool:
    """True if a process with this id exists (on Windows: assumed, the age rule then decides)."""
    if pid <= 0:
        return False
    if sys.platform.startswith("win"):  # pragma: no cover - no cheap check; fall back to the age rule
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def clean_stale_temps(target: os.PathLike | str) -> list[Path]:
    """Remove temporary files a killed writer left beside ``target``; returns what was removed.

    A temporary file made on this machine (its name holds this host's name) is stale when its process is gone
    or it is older than an hour; one made elsewhere, or named without a host, only when older than an hour —
    a process id says nothing about another machine, whose save may be in progress on a shared folder.
    """
    target = real_target(target)
    folder = target.parent if str(target.parent) else Path(".")
    prefix = _temp_prefix(target)
    removed: list[Path] = []
    try:
        entries = list(folder.iterdir())
    except OSError:
        return removed
    now = time.time()
    here = host_tag()
    for entry in entries:
        name = entry.name
        if not (name.startswith(prefix) and name.endswith(_TEMP_SUFFIX)):
            continue
        fields = name[len(prefix):].split(".")
        try:
            old = now - entry.lstat().st_mtime > STALE_TEMP_AGE_S
            mine = len(fields) >= 4 and fields[0] == here and fields[1].isdigit()
            gone = mine and not pid_alive(int(fields[1]))
            if (old or gone) and entry.is_file() and not entry.is_symlink():
                entry.unlink()
                removed.append(entry)
        except (ValueError, OSError):
            continue
    return removed


class _Refused(ValueError):
    """Raised inside the JSON parser hooks; carries the plain reason."""


def _no_constants(name: str) -> float:
    raise _Refused(f"it contains {name}, which is not a number a file may hold")


def _finite_float(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise _Refused(f"it contains the number {text[:20]}, which is too large to be finite")
    return value


MAX_INT_DIGITS = 15  # no whole number ventset stores comes near 10^15; larger ones would overflow a float later


def _bounded_int(text: str) -> int:
    digits = len(text.lstrip("-"))
    if digits > MAX_INT_DIGITS:
        raise _Refused(f"it holds a number with too many digits ({digits} digits: {text[:12]}…), too large for "
                       "any value a ventset file holds")
    return int(text)


def _no_duplicates(pairs: list[tuple[str, object]]) -> dict:
    out: dict = {}
    for key, value in pairs:
        if key in out:
            raise _Refused(f"it has the key '{_printable(key)}' twice in one object")
        out[key] = value
    return out


def _printable(text: str, limit: int = 40) -> str:
    return visible(text, limit)


def _short(exc: BaseException) -> str:
    return visible(str(exc) or type(exc).__name__, 120)


def _has_surrogate(text: str) -> bool:
    return any("\ud800" <= ch <= "\udfff" for ch in text)


def check_tree(obj: object, max_depth: int = MAX_NESTING) -> None:
    """Reject nesting deeper than ``max_depth`` and lone surrogates in keys or text (iterative, no recursion)."""
    stack: list[tuple[object, int, str]] = [(obj, 1, "")]
    while stack:
        value, depth, where = stack.pop()
        if isinstance(value, dict | list):
            if depth > max_depth:
                raise _Refused(f"it is nested more than {max_depth} levels deep")
            items = value.items() if isinstance(value, dict) else enumerate(value)
            for key, child in items:
                path = f"{where}.{key}" if isinstance(key, str) else f"{where}[{key}]"
                if isinstance(key, str) and _has_surrogate(key):
                    raise _Refused(f"a key at '{_printable(where or '.')}' holds an invalid character "
                                   "(a lone UTF-16 surrogate)")
                stack.append((child, depth + 1, path))
        elif isinstance(value, str) and _has_surrogate(value):
            raise _Refused(f"the text at '{_printable(where.lstrip('.') or '.')}' holds an invalid character "
                           "(a lone UTF-16 surrogate)")


_JSON_START = b"{[ \t\r\n"


def _decode(raw: bytes) -> str:
    """The text of a JSON file: UTF-8 (with or without a byte-order mark), or UTF-16 recognised as such."""
    utf16 = None
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        utf16 = "utf-16"
    elif len(raw) >= 2 and raw[0] in _JSON_START and raw[1] == 0:
        utf16 = "utf-16-le"
    elif len(raw) >= 2 and raw[0] == 0 and raw[1] in _JSON_START:
        utf16 = "utf-16-be"
    if utf16 is not None:
        try:
            return raw.decode(utf16)
        except UnicodeDecodeError:
            raise _Refused("it is a UTF-16 text file, but a damaged one (save it again as UTF-8)") from None
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise _Refused(f"it is not a text file (byte 0x{raw[exc.start]:02x} at position {exc.start} "
                       "is not UTF-8)") from None


def parse_json_bytes(raw: bytes) -> object:
    """Parse JSON strictly (UTF-8, or UTF-16 with its byte-order mark); raises ValueError with a plain reason."""
    if not raw.strip():
        raise _Refused("it is empty")
    text = _decode(raw)
    if not text.strip():
        raise _Refused("it is empty")
    if "\x00" in text:
        raise _Refused("it is not a text file (it contains NUL bytes)")
    try:
        data = json.loads(text, parse_constant=_no_constants, parse_float=_finite_float, parse_int=_bounded_int,
                          object_pairs_hook=_no_duplicates)
    except _Refused:
        raise
    except RecursionError:
        raise _Refused(f"it is nested too deeply (more than {MAX_NESTING} levels)") from None
    except json.JSONDecodeError as exc:
        raise _Refused(f"it is not complete, valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg}); "
                       "it may be truncated or damaged") from None
    except ValueError as exc:  # e.g. an integer with more digits than Python converts
        reason = "a number with too many digits" if "digits" in str(exc) else f"a value that cannot be read " \
                 f"({_short(exc)})"
        raise _Refused(f"it holds {reason}") from None
    check_tree(data)
    return data


def read_json(path: os.PathLike | str, max_bytes: int, error: type[StorageError] = ReadError) -> object:
    """Read and parse a JSON file no larger than ``max_bytes``; raises ``error`` naming the file and why.

    Stale temporary files beside it are removed first. The file itself is never modified.
    """
    target = Path(path)
    clean_stale_temps(target)
    try:
        if target.is_dir():
            raise error(target, "it is a folder, not a file")
        st = target.stat()
        if not target.is_file():
            raise error(target, "it is not a regular file")
        if st.st_size > max_bytes:
            raise error(target, f"it is {st.st_size / 1e6:.1f} MB; this kind of file is at most "
                                f"{max_bytes / 1e6:g} MB")
        with target.open("rb") as fh:
            raw = fh.read(max_bytes + 1)
    except FileNotFoundError:
        raise error(target, "there is no such file") from None
    except PermissionError:
        raise error(target, "permission denied; check the file's and its folder's permissions") from None
    except OSError as exc:
        raise error(target, os_reason(exc)) from None
    if len(raw) > max_bytes:
        raise error(target, f"it is larger than {max_bytes / 1e6:g} MB")
    try:
        return parse_json_bytes(raw)
    except _Refused as exc:
        raise error(target, str(exc)) from None
    except RecursionError:
        raise error(target, "it is nested too deeply") from None
