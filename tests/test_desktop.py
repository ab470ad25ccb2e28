"""Desktop conventions from the command line: ``ventset --version``, ``ventset CASE`` / ``ventset gui CASE`` open
the case, and ``ventset install-desktop`` writes a desktop entry, an SVG icon and a MIME type for case files.

Checked against the freedesktop.org specifications they follow: the XDG Base Directory rule for
$XDG_DATA_HOME, the Desktop Entry key-file format (read back with Python's configparser; Exec arguments
unquoted with shlex, POSIX shell rules, which the Desktop Entry quoting is a subset of), and shared-mime-info's
own update-mime-database where it is installed (it must list *.ventcase under the new type).
"""

from __future__ import annotations

import configparser
import os
import shlex
import shutil
import subprocess
import sys
import tomllib
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from ventset import __version__, desktop

ROOT = Path(__file__).resolve().parents[1]


def _env(tmp_path, **extra) -> dict:
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM",
                                                           "XDG_DATA_HOME", "VENTSET_GUI_SMOKE")}
    env.update(PYTHONPATH=str(ROOT), VENTSET_DATA_DIR=str(tmp_path / "data"), VENTSET_SETTINGS_DIR=str(tmp_path / "s"),
               HOME=str(tmp_path / "home"))
    env.update(extra)
    return env


def _ventset(tmp_path, *args, timeout=120, **env) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "ventset", *args], capture_output=True, text=True, timeout=timeout,
                          env=_env(tmp_path, **env), cwd=tmp_path)


def test_version_is_the_package_version(tmp_path):
    out = _ventset(tmp_path, "--version")
    assert out.returncode == 0 and out.stdout.strip() == f"ventset {__version__}"
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["version"]
    assert __version__ == project


def test_install_desktop_writes_entry_icon_and_mime_type(tmp_path):
    data = tmp_path / "xdg"
    out = _ventset(tmp_path, "install-desktop", XDG_DATA_HOME=str(data))
    assert out.returncode == 0, out.stderr
    entry_path = data / "applications" / "ventset.desktop"
    icon = data / "icons" / "hicolor" / "scalable" / "apps" / "ventset.svg"
    mime = data / "mime" / "packages" / "ventset.xml"
    for p in (entry_path, icon, mime):
        assert p.is_file() and f"wrote {p}" in out.stdout
    entry = configparser.ConfigParser(interpolation=None)
    entry.optionxform = str
    entry.read(entry_path, encoding="utf-8")
    e = entry["Desktop Entry"]
    assert e["Type"] == "Application" and e["Icon"] == "ventset" and e["Terminal"] == "false"
    assert "application/x-ventset-case" in e["MimeType"].split(";") and e["MimeType"].endswith(";")
    assert e["Exec"].endswith(" %f")  # a double-clicked case file is passed to ventset
    svg = ET.parse(icon).getroot()
    assert svg.tag == "{http://www.w3.org/2000/svg}svg" and svg.get("viewBox")
    root = ET.parse(mime).getroot()
    ns = {"m": "http://www.freedesktop.org/standards/shared-mime-info"}
    kind = root.find("m:mime-type", ns)
    assert kind.get("type") == "application/x-ventset-case"
    assert kind.find("m:glob", ns).get("pattern") == "*.ventcase"
    assert kind.find("m:sub-class-of", ns).get("type") == "application/json"
    if shutil.which("update-mime-database"):
        assert "update-mime-database" in out.stdout
        assert "application/x-ventset-case:*.ventcase" in (data / "mime" / "globs2").read_text()
    gone = _ventset(tmp_path, "install-desktop", "--remove", "--no-refresh", XDG_DATA_HOME=str(data))
    assert gone.returncode == 0 and not entry_path.exists() and not icon.exists() and not mime.exists()


def test_data_home_follows_the_base_directory_rule(tmp_path, monkeypatch):
    monkeypatch.setenv("HOME", str(tmp_path))
    monkeypatch.delenv("XDG_DATA_HOME", raising=False)
    assert desktop.data_home() == tmp_path / ".local" / "share"
    monkeypatch.setenv("XDG_DATA_HOME", "")
    assert desktop.data_home() == tmp_path / ".local" / "share"
    monkeypatch.setenv("XDG_DATA_HOME", "relative/path")  # the spec: relative paths are ignored
    assert desktop.data_home() == tmp_path / ".local" / "share"
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "d"))
    assert desktop.data_home() == tmp_path / "d"
    out = _ventset(tmp_path, "install-desktop", "--no-refresh", HOME=str(tmp_path / "h"))
    assert out.returncode == 0 and (tmp_path / "h" / ".local" / "share" / "applications" / "ventset.desktop").is_file()


@pytest.mark.parametrize("command", [["/opt/vet tools/bin/ventset"], ["/usr/bin/python3", "-m", "ventset"],
                                     ['/home/a"b/$HOME/ven`t\\set'], ["/tmp/100%/ventset"]])
def test_exec_line_reads_back_as_the_command(command):
    line = desktop.desktop_entry(command).split("Exec=", 1)[1].split("\n", 1)[0]
    assert line.endswith(" %f")
    as_string = line[: -len(" %f")].replace("\\\\", "\\")  # the key-file string escape first, then the quoting
    # Inside double quotes the spec escapes ", `, $ and \ with a backslash, as a POSIX shell reads them; shlex
    # follows POSIX except that it keeps the backslash before ` and $, so those two are undone here first.
    args = shlex.split(as_string.replace("\\$", "$").replace("\\`", "`"))
    assert [a.replace("%%", "%") for a in args] == command
    if any(c in " $`\"\\" for c in "".join(command)):
        assert line.startswith('"')  # reserved characters: the argument is quoted


def test_a_case_file_on_the_command_line_opens_in_the_window(tmp_path):
    case = tmp_path / "moth.ventcase"
    saved = _ventset(tmp_path, "plan", "--species", "cat", "--mass", "4.1 kg", "--name", "Moth (invented)", "--save",
                     str(case))
    assert saved.returncode == 0, saved.stderr
    for args in ([str(case)], ["gui", str(case)]):
        out = _ventset(tmp_path, *args, QT_QPA_PLATFORM="offscreen", VENTSET_GUI_SMOKE="1")
        assert out.returncode == 0, out.stderr
        assert out.stdout.startswith("ready ") and "case moth.ventcase: Moth (invented)" in out.stdout
    text = _ventset(tmp_path, str(case))  # no display: the case's plan as text, not the demo patient
    assert text.returncode == 0 and "Moth (invented)" in text.stdout and "Pickle" not in text.stdout
    missing = _ventset(tmp_path, str(tmp_path / "nowhere.ventcase"), QT_QPA_PLATFORM="offscreen",
                       VENTSET_GUI_SMOKE="1")
    assert missing.returncode == 2 and missing.stderr.count("\n") == 1 and "no such case file" in missing.stderr
    broken = tmp_path / "broken.ventcase"
    broken.write_text("{not json")
    bad = _ventset(tmp_path, str(broken), QT_QPA_PLATFORM="offscreen", VENTSET_GUI_SMOKE="1")
    assert bad.returncode == 2 and "could not be opened" in bad.stderr and "Traceback" not in bad.stderr
