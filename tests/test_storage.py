"""Atomic writes, the data folder, stale temp files and strict JSON loading (ventset.storage)."""

from __future__ import annotations

import ast
import os
import stat
import subprocess
import sys
import time
from pathlib import Path

import pytest

import ventset
from ventset import storage
from ventset.errors import VentsetError

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def test_data_dir_follows_the_environment_variable(tmp_path):
    folder = storage.data_dir()
    assert folder == tmp_path / "data" and folder.is_dir()


def test_data_dir_defaults_to_platformdirs(monkeypatch):
    from platformdirs import user_data_dir

    monkeypatch.delenv(storage.DATA_DIR_ENV)
    assert storage.data_dir(create=False) == Path(user_data_dir("ventset", appauthor=False))


def test_atomic_write_replaces_and_leaves_no_temp(tmp_path):
    target = tmp_path / "a.json"
    storage.atomic_write_bytes(target, b"old")
    storage.atomic_write_bytes(target, b"new")
    assert target.read_bytes() == b"new"
    assert [p.name for p in tmp_path.iterdir()] == ["a.json"]


def test_atomic_write_fsyncs_file_and_folder(tmp_path, monkeypatch):
    synced = []
    real = os.fsync

    def spy(fd):
        synced.append(stat.S_ISDIR(os.fstat(fd).st_mode))
        real(fd)

    monkeypatch.setattr(os, "fsync", spy)
    storage.atomic_write_bytes(tmp_path / "a.json", b"x")
    assert synced == [False, True]  # the data first, then the folder entry


def test_atomic_write_keeps_permissions_of_the_replaced_file(tmp_path):
    target = tmp_path / "a.json"
    target.write_bytes(b"old")
    target.chmod(0o640)
    storage.atomic_write_bytes(target, b"new")
    assert stat.S_IMODE(target.stat().st_mode) == 0o640


def test_failed_replace_keeps_the_old_file_and_removes_the_temp(tmp_path, monkeypatch):
    target = tmp_path / "a.json"
    target.write_bytes(b"old")

    def boom(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", boom)
    with pytest.raises(storage.WriteError, match="No space left"):
        storage.atomic_write_bytes(target, b"new")
    assert target.read_bytes() == b"old"
    assert [p.name for p in tmp_path.iterdir()] == ["a.json"]


def test_write_to_a_folder_or_a_missing_folder_is_refused(tmp_path):
    with pytest.raises(storage.WriteError, match="folder, not a file"):
        storage.atomic_write_bytes(tmp_path, b"x")
    with pytest.raises(storage.WriteError, match="does not exist"):
        storage.atomic_write_bytes(tmp_path / "nope" / "a.json", b"x")


def test_json_that_cannot_be_stored_is_refused_before_touching_the_file(tmp_path):
    target = tmp_path / "a.json"
    target.write_bytes(b"old")
    for bad in ({"x": float("nan")}, {"name": "\ud800"}, {"x": object()}):
        with pytest.raises(storage.WriteError, match="cannot be stored as JSON"):
            storage.atomic_write_json(target, bad)
    assert target.read_bytes() == b"old"


def _dead_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def test_stale_temps_are_cleaned_but_live_and_unrelated_files_kept(tmp_path):
    # Temporary files are named .<name>.<host>.<pid>.<random>.tmp; these were made on this machine.
    host = storage.host_tag()
    target = tmp_path / "case.json"
    dead = tmp_path / f".case.json.{host}.{_dead_pid()}.abc123.tmp"
    live = tmp_path / f".case.json.{host}.{os.getpid()}.def456.tmp"
    old_live = tmp_path / f".case.json.{host}.{os.getpid()}.ghi789.tmp"
    other = tmp_path / f".other.json.{host}.{_dead_pid()}.abc.tmp"
    for p in (dead, live, old_live, other):
        p.write_bytes(b"partial")
    hour_ago = time.time() - storage.STALE_TEMP_AGE_S - 10
    os.utime(old_live, (hour_ago, hour_ago))
    removed = storage.clean_stale_temps(target)
    assert sorted(removed) == sorted([dead, old_live])
    assert live.exists() and other.exists()


def test_another_machines_temp_file_is_never_removed_while_it_may_be_in_use(tmp_path):
    # A shared folder: a process id says nothing about another machine, so only age may clean its files.
    target = tmp_path / "case.json"
    foreign = tmp_path / f".case.json.other-clinic-pc.{_dead_pid()}.abc.tmp"
    legacy = tmp_path / f".case.json.{_dead_pid()}.abc.tmp"  # older naming, without a host
    old_foreign = tmp_path / f".case.json.other-clinic-pc.{_dead_pid()}.def.tmp"
    for p in (foreign, legacy, old_foreign):
        p.write_bytes(b"partial")
    hour_ago = time.time() - storage.STALE_TEMP_AGE_S - 10
    os.utime(old_foreign, (hour_ago, hour_ago))
    assert storage.clean_stale_temps(target) == [old_foreign]
    assert foreign.exists() and legacy.exists()


def test_temp_file_names_carry_the_host_and_process(tmp_path, monkeypatch):
    seen = []
    real = os.replace
    monkeypatch.setattr(os, "replace", lambda a, b: seen.append(Path(a).name) or real(a, b))
    storage.atomic_write_bytes(tmp_path / "a.json", b"x")
    assert seen[0].startswith(f".a.json.{storage.host_tag()}.{os.getpid()}.") and seen[0].endswith(".tmp")


def test_read_json_cleans_stale_temps_beside_the_file(tmp_path):
    target = tmp_path / "case.json"
    target.write_text("{}")
    temp = tmp_path / f".case.json.{storage.host_tag()}.{_dead_pid()}.x1.tmp"
    temp.write_bytes(b"{\"half")
    assert storage.read_json(target, 1000) == {}
    assert not temp.exists()


HOSTILE = {
    "empty": (b"", "is empty"),
    "whitespace": (b"  \n\t ", "is empty"),
    "truncated": (b'{"format": "ventset-case", "schema', "not complete, valid JSON"),
    "binary": (bytes(range(256)) * 4, "not a text file"),
    "png": (b"\x89PNG\r\n\x1a\n\x00\x00", "not a text file"),
    "nul": (b'{"a": "\x00"}', "NUL"),
    "deep_list": (b"[" * 100_000, "nested too deeply"),
    "deep_object": (b'{"a":' * 50_000, "nested too deeply"),
    "deep_but_parseable": (b"[" * 200 + b"]" * 200, "nested more than"),
    "nan": (b'{"x": NaN}', "NaN"),
    "infinity": (b'{"x": -Infinity}', "-Infinity"),
    "overflow_float": (b'{"x": 1e999}', "too large"),
    "huge_int": (b'{"x": ' + b"9" * 5000 + b"}", "too many digits"),
    "duplicate_key": (b'{"a": 1, "b": 2, "a": 3}', "key 'a' twice"),
    "lone_surrogate_escape": (b'{"name": "\\udc80"}', "lone UTF-16 surrogate"),
    "lone_surrogate_key": (b'{"\\ud800": 1}', "lone UTF-16 surrogate"),
    "lone_surrogate_raw_bytes": (b'{"name": "\xed\xb2\x80"}', "not UTF-8"),
}


@pytest.mark.parametrize("name", sorted(HOSTILE))
def test_hostile_json_is_refused_with_a_reason(tmp_path, name):
    raw, reason = HOSTILE[name]
    target = tmp_path / "f.json"
    target.write_bytes(raw)
    with pytest.raises(storage.ReadError) as info:
        storage.read_json(target, 10_000_000)
    assert reason in str(info.value)
    assert isinstance(info.value, VentsetError)
    assert "\n" not in str(info.value) and str(target) in str(info.value)
    assert target.read_bytes() == raw  # never modified


def test_size_is_capped_before_reading(tmp_path, monkeypatch):
    target = tmp_path / "big.json"
    with target.open("wb") as fh:  # 50 MB, sparse: cheap to make
        fh.truncate(50 * 1024 * 1024)
    opened = []
    real_open = Path.open
    monkeypatch.setattr(Path, "open", lambda self, *a, **k: opened.append(self) or real_open(self, *a, **k))
    with pytest.raises(storage.ReadError, match=r"52.4 MB; this kind of file is at most 10 MB"):
        storage.read_json(target, 10_000_000)
    assert target not in opened


def test_folder_missing_file_and_fifo_are_refused(tmp_path):
    with pytest.raises(storage.ReadError, match="folder, not a file"):
        storage.read_json(tmp_path, 100)
    with pytest.raises(storage.ReadError, match="no such file"):
        storage.read_json(tmp_path / "none.json", 100)
    if hasattr(os, "mkfifo"):
        fifo = tmp_path / "pipe"
        os.mkfifo(fifo)
        with pytest.raises(storage.ReadError, match="not a regular file"):
            storage.read_json(fifo, 100)


def test_byte_order_mark_and_nesting_up_to_the_limit_are_accepted():
    assert storage.parse_json_bytes(b"\xef\xbb\xbf{\"a\": 1}") == {"a": 1}
    depth = storage.MAX_NESTING
    assert storage.parse_json_bytes(b"[" * depth + b"]" * depth) is not None


FORBIDDEN_CALLS = {"eval", "exec", "compile", "__import__"}
FORBIDDEN_MODULES = {"pickle", "cPickle", "dill", "shelve", "marshal", "yaml", "jsonpickle", "cloudpickle"}


def _unsafe_calls(source: str, where: str) -> list[str]:
    """Every import of a forbidden module and call of a forbidden builtin or loader in ``source``."""
    problems = []
    for node in ast.walk(ast.parse(source, filename=where)):
        at = f"{where}:{getattr(node, 'lineno', '?')}"
        if isinstance(node, ast.Import):
            problems += [f"{at} import {a.name}" for a in node.names if a.name.split(".")[0] in FORBIDDEN_MODULES]
        elif isinstance(node, ast.ImportFrom) and (node.module or "").split(".")[0] in FORBIDDEN_MODULES:
            problems.append(f"{at} from {node.module} import")
        elif isinstance(node, ast.Call):
            fn = node.func
            name = fn.id if isinstance(fn, ast.Name) else fn.attr if isinstance(fn, ast.Attribute) else ""
            # Only the builtins: re.compile() and Qt's dialog.exec() are not code execution.
            builtin = isinstance(fn, ast.Name) or (isinstance(fn, ast.Attribute) and
                                                   isinstance(fn.value, ast.Name) and fn.value.id == "builtins")
            if name in FORBIDDEN_CALLS and builtin:
                problems.append(f"{at} calls {name}()")
            if isinstance(fn, ast.Attribute) and name in {"load", "loads", "unsafe_load"} and \
                    isinstance(fn.value, ast.Name) and fn.value.id in FORBIDDEN_MODULES:
                problems.append(f"{at} calls {fn.value.id}.{name}()")
    return problems


# The two exceptions, each to the letter: the caches kept beside ventset's own byte code (ventset/pkgcache.py,
# which may read a pickle or marshal file only from the package's __pycache__ folder), and the dataclass method
# cache (ventset/methodcache.py), which compiles and runs the text Python's dataclasses module wrote, as that
# module itself does.
ALLOWED = {"ventset/pkgcache.py": ("import marshal", "import pickle", "calls marshal.loads()", "calls pickle.loads()"),
           "ventset/methodcache.py": ("calls compile()", "calls exec()")}


def test_no_unsafe_deserialisation_anywhere_in_the_package():
    """No pickle, shelve, marshal, yaml, eval or exec in ventset/ (the files a user opens are plain JSON/TOML),
    but for the two narrow exceptions above."""
    problems = []
    for path in sorted((ROOT / "ventset").rglob("*.py")):
        where = str(path.relative_to(ROOT))
        problems += [p for p in _unsafe_calls(path.read_text(encoding="utf-8"), where)
                     if not any(p.endswith(ok) for ok in ALLOWED.get(where, ()))]
    assert problems == []


def test_the_caches_that_hold_objects_live_only_beside_the_package_byte_code(tmp_path, monkeypatch):
    from ventset import methodcache, pkgcache

    bytecode = Path(ventset.__file__).resolve().parent / "__pycache__"
    for chosen in (str(tmp_path), "", str(tmp_path / "shared")):  # a cache folder a user names never moves them
        monkeypatch.setenv("VENTSET_CACHE_DIR", chosen)
        assert pkgcache.folder() == bytecode
        assert methodcache.cache_file().parent == bytecode
        assert pkgcache.path("library", "pickle").parent == bytecode
    monkeypatch.setenv("VENTSET_CACHE_DIR", "off")
    assert pkgcache.folder() is None and methodcache.cache_file() is None


def test_the_safety_scan_would_catch_a_pickle_load():
    # Negative control: the very scan the test above runs flags each planted offender, and nothing harmless.
    planted = "import pickle\nfrom yaml import load\nx = pickle.loads(b'')\neval('1')\nbuiltins.exec('1')\n"
    assert len(_unsafe_calls(planted, "planted.py")) == 5
    assert _unsafe_calls("import re\nre.compile('x')\ndialog.exec()\n", "harmless.py") == []


def test_told_not_to_write_byte_code_the_object_caches_are_not_written(monkeypatch):
    """Python's own switch (sys.dont_write_bytecode, set by PYTHONDONTWRITEBYTECODE or -B) also keeps these caches
    from being written beside the byte code; reading what is there still works."""
    from ventset import pkgcache

    monkeypatch.setattr(sys, "dont_write_bytecode", True)
    assert pkgcache.save_value("probe-dont-write", (1,), {"x": 1}) is False
    assert not pkgcache.path("probe-dont-write", "pickle").exists()
    monkeypatch.setattr(sys, "dont_write_bytecode", False)
    assert pkgcache.save_value("probe-dont-write", (1,), {"x": 1}) is True
    assert pkgcache.load_value("probe-dont-write", (1,)) == (True, {"x": 1})
    pkgcache.path("probe-dont-write", "pickle").unlink()
