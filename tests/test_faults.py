"""Faults of the machine and hostile files (issue 10 items 6 and 8): one line naming the file and what to do.

Every file-system fault becomes a one-line refusal; every malformed value in a file becomes a refusal (never a
traceback, never a changed file); saving goes through symbolic links; files get the user's normal permissions,
private ones only in the data folder.
"""

from __future__ import annotations

import json
import os
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from ventset import cases, partslib, storage
from ventset.cli import main
from ventset.library import load_library
from ventset.model import Patient, Request

LIB = load_library()
ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(autouse=True)
def _data(tmp_path, monkeypatch):
    monkeypatch.setenv("VENTSET_DATA_DIR", str(tmp_path / "data"))


def _cli(capsys, *args):
    code = main([str(a) for a in args])
    out = capsys.readouterr()
    return code, out.out, out.err


def _one_line_refusal(code: int, err: str) -> None:
    assert code == 2 and err.count("\n") == 1 and err.startswith("ventset: ") and "Traceback" not in err


def test_a_file_name_too_long_is_one_line(tmp_path, capsys):
    code, _, err = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--save", tmp_path / ("x" * 300))
    _one_line_refusal(code, err)
    assert "too long" in err and "shorter name" in err
    code, _, err = _cli(capsys, "show", tmp_path / ("y" * 300))
    _one_line_refusal(code, err)


def test_saving_into_a_missing_folder_or_a_file_as_folder_is_one_line(tmp_path, capsys):
    (tmp_path / "afile").write_text("x")
    for target in (tmp_path / "nope" / "a.ventcase", tmp_path / "afile" / "a.ventcase"):
        code, _, err = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--save", target)
        _one_line_refusal(code, err)


def test_the_case_is_saved_before_the_recent_list_and_a_recent_list_failure_is_a_warning(tmp_path, monkeypatch,
                                                                                        capsys):
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file where the data folder should be")
    monkeypatch.setenv("VENTSET_DATA_DIR", str(blocker))
    path = tmp_path / "c.ventcase"
    code, _, err = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--save", path)
    assert code == 0 and path.is_file()
    lines = err.strip().splitlines()
    assert lines[0].startswith("ventset: saved case") and "warning" in lines[1] and "recent" in lines[1]


@pytest.mark.parametrize(("where", "value", "reason"), [
    (("request", "patient", "mass_kg"), "1" * 400, "too many digits"),       # an oversized integer
    (("request", "patient", "mass_kg"), "1" * 400 + ".5", "too large"),      # a number with 400 digits
    (("request", "circuit", "parts"), "[1, 2]", "must be an object"),       # an entry that is not an object
    (("request", "circuit", "parts"), '[{"name": 5, "volume_ml": 1}]', "must be text"),
    (("request", "targets"), "[]", "must be an object"),
    (("timeline",), '{"schema": "x", "entries": [{"measurement": {"note": 7}}]}', "must be text"),
    (("request", "patient", "species"), '{"a": 1}', "must be text"),
])
def test_loader_errors_are_refusals_in_show(tmp_path, capsys, where, value, reason):
    path = tmp_path / "c.ventcase"
    cases.save_case(path, cases.case_for_request(Request(Patient("dog", 20.0)), LIB))
    text = path.read_text()
    data = json.loads(text)
    node = data
    for key in where[:-1]:
        node = node[key]
    node[where[-1]] = "@@"
    raw = json.dumps(data).replace('"@@"', value).encode()
    path.write_bytes(raw)
    code, out, err = _cli(capsys, "show", path)
    _one_line_refusal(code, err)
    assert reason in err and out == "" and path.read_bytes() == raw


def test_a_record_entry_that_is_not_an_object_still_opens_the_case_and_says_so(tmp_path, capsys):
    path = tmp_path / "c.ventcase"
    cases.save_case(path, cases.case_for_request(Request(Patient("dog", 20.0)), LIB))
    data = json.loads(path.read_text())
    data["timeline"] = {"schema": "ventset-timeline", "version": 1, "entries": ["not an object"]}
    raw = json.dumps(data).encode()
    path.write_bytes(raw)
    code, out, err = _cli(capsys, "show", path)
    assert code == 0 and "Set tidal volume" in out and "record" in err and "Traceback" not in err
    assert path.read_bytes() == raw


def test_a_utf16_file_is_recognised(tmp_path):
    path = tmp_path / "c.ventcase"
    cases.save_case(path, cases.case_for_request(Request(Patient("dog", 20.0, name="Rex")), LIB))
    text = path.read_text(encoding="utf-8")
    path.write_bytes(text.encode("utf-16"))  # with its byte-order mark, as some editors save
    assert cases.load_case(path).case.request.patient.name == "Rex"
    path.write_bytes(text.encode("utf-16")[:-1])
    with pytest.raises(cases.CaseError, match="UTF-16"):
        cases.load_case(path)


def test_a_non_utf8_byte_in_the_name_on_a_strict_terminal(tmp_path):
    env = dict(os.environ, PYTHONIOENCODING="ascii:strict", VENTSET_DATA_DIR=str(tmp_path / "d"))
    r = subprocess.run([os.fsencode(sys.executable), b"-m", b"ventset", b"plan", b"--species", b"dog", b"--mass",
                        b"20", b"--name", b"Rex\xff"], capture_output=True, env=env, cwd=ROOT)
    assert r.returncode == 2 and b"Traceback" not in r.stderr and r.stderr.count(b"\n") == 1
    assert b"--name" in r.stderr and b"not valid text" in r.stderr
    r = subprocess.run([sys.executable, "-m", "ventset", "plan", "--species", "dog", "--mass", "20", "--name",
                        "Réx"], capture_output=True, env=env, cwd=ROOT)
    assert r.returncode == 0 and b"R\\xe9x" in r.stdout and b"Traceback" not in r.stderr


def test_saving_through_a_symbolic_link_writes_its_target_and_keeps_the_link(tmp_path, capsys):
    shared = tmp_path / "shared"
    shared.mkdir()
    target = shared / "rex.ventcase"
    link = tmp_path / "rex.ventcase"
    cases.save_case(target, cases.case_for_request(Request(Patient("dog", 20.0)), LIB))
    link.symlink_to(target)
    code, _, _ = _cli(capsys, "plan", "--species", "dog", "--mass", "25", "--save", link, "--replace")
    assert code == 0 and link.is_symlink()
    assert cases.load_case(target).case.request.patient.mass_kg == 25.0


def test_new_files_get_the_users_normal_permissions_and_data_folder_files_are_private(tmp_path):
    old = os.umask(0o022)
    try:
        case_path = tmp_path / "c.ventcase"
        cases.save_case(case_path, cases.case_for_request(Request(Patient("dog", 20.0)), LIB))
        export = tmp_path / "clinic-parts-export.json"
        partslib.write_library_file(partslib.ClinicLibrary(), export)
        assert stat.S_IMODE(case_path.stat().st_mode) == 0o644
        assert stat.S_IMODE(export.stat().st_mode) == 0o644  # colleagues can read a shared export
        partslib.save_clinic_library(partslib.ClinicLibrary(clinic="Example clinic"))
        assert stat.S_IMODE(partslib.library_path().stat().st_mode) == 0o600
        assert stat.S_IMODE(storage.data_dir().stat().st_mode) == 0o700
    finally:
        os.umask(old)


def _can_drop_to_nobody() -> str:
    if not hasattr(os, "setuid") or os.geteuid() != 0:
        return "needs root to switch to the unprivileged user 'nobody' (not root here: the test below would " \
               "need another account)"
    try:
        import pwd

        pwd.getpwnam("nobody")
    except (ImportError, KeyError):
        return "no 'nobody' account on this machine"
    return ""


@pytest.mark.skipif(bool(_can_drop_to_nobody()), reason=_can_drop_to_nobody() or "runs")
def test_a_folder_without_permission_is_one_line_for_a_user_without_roots_override():
    # root ignores file permissions, so the check runs as 'nobody' in a child process (in a folder of its own:
    # pytest's temporary folders are private to root).
    import pwd
    import shutil
    import tempfile

    nobody = pwd.getpwnam("nobody")
    tmp_path = Path(tempfile.mkdtemp(prefix="ventset-perm-"))
    try:
        _run_as(nobody, tmp_path)
    finally:
        shutil.rmtree(tmp_path, ignore_errors=True)


def _run_as(nobody, tmp_path: Path) -> None:
    locked = tmp_path / "locked"
    locked.mkdir(mode=0o700)
    (locked / "c.ventcase").write_text("{}")
    home = tmp_path / "home"
    home.mkdir()
    os.chown(home, nobody.pw_uid, nobody.pw_gid)
    os.chmod(tmp_path, 0o755)
    # Everything is imported (and the shipped library read) before the switch: the interpreter's own files
    # may sit in a folder only root may read.
    code = ("import os, sys, io, contextlib\n"
            "import ventset.cli, ventset.cli_cases, ventset.cli_titrate, ventset.planner, ventset.report\n"
            "import ventset.summary, ventset.autosave, ventset.library, ventset.case_irrigation, ventset.cases\n"
            "ventset.library.load_library()\n"
            "with contextlib.redirect_stdout(io.StringIO()): ventset.cli.main(['plan', '--species', 'dog', "
            "'--mass', '20'])\n"
            f"os.setgid({nobody.pw_gid}); os.setuid({nobody.pw_uid})\n"
            "sys.exit(ventset.cli.main(sys.argv[1:]))\n")
    env = dict(os.environ, VENTSET_DATA_DIR=str(home / "data"), PYTHONDONTWRITEBYTECODE="1",
               PYTHONPATH=str(ROOT))
    for args in (["plan", "--species", "dog", "--mass", "20", "--save", str(locked / "new.ventcase")],
                 ["show", str(locked / "c.ventcase")]):
        r = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, env=env, cwd=home)
        assert r.returncode == 2, r.stderr
        assert r.stderr.count("\n") == 1 and "Traceback" not in r.stderr and "ermission denied" in r.stderr
    env["VENTSET_DATA_DIR"] = str(locked / "data")  # an unreadable data folder
    r = subprocess.run([sys.executable, "-c", code, "plan", "--species", "dog", "--mass", "20", "--save",
                        str(home / "ok.ventcase")], capture_output=True, text=True, env=env, cwd=home)
    assert r.returncode == 0 and (home / "ok.ventcase").is_file() and "warning" in r.stderr
    assert "Traceback" not in r.stderr
