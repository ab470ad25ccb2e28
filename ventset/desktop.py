"""``ventset install-desktop``: put ventset in the desktop's application menu and let it open case files.

Writes, following the freedesktop.org specifications (Desktop Entry 1.5, Icon Theme, Shared MIME-info), into
``$XDG_DATA_HOME`` (``~/.local/share`` when unset, empty or not absolute, as the XDG Base Directory
specification says):

* ``applications/ventset.desktop`` — the launcher, with ``MimeType=application/x-ventset-case;`` and
  ``Exec=… %f`` so a double-clicked case opens in the window;
* ``icons/hicolor/scalable/apps/ventset.svg`` (and the same picture for the case files' type);
* ``mime/packages/ventset.xml`` — the type ``application/x-ventset-case`` for ``*.ventcase`` (a kind of JSON).

Then it asks the desktop to re-read them (``update-mime-database``, ``update-desktop-database``) when those
tools are installed. ``--remove`` takes the files away again. No Qt here: this runs from the command line.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
from pathlib import Path

from ventset import storage
from ventset.case_model import SUFFIX
from ventset.resources import icon_path  # noqa: F401 (re-exported: the desktop entry's icon)

APP_ID = "ventset"
MIME_TYPE = "application/x-ventset-case"
MIME_ICON = MIME_TYPE.replace("/", "-")
# Characters that make a Desktop Entry Exec argument need quoting ("The Exec key", Desktop Entry spec 1.5).
_RESERVED = set(" \t\n\"'\\><~|&;$*?#()`")


def data_home() -> Path:
    """$XDG_DATA_HOME, or ~/.local/share when it is unset, empty or relative (XDG Base Directory spec)."""
    value = os.environ.get("XDG_DATA_HOME", "")
    return Path(value) if value and os.path.isabs(value) else Path.home() / ".local" / "share"


def exec_arg(arg: str) -> str:
    """One argument of an Exec line: quoted when it has reserved characters, then escaped as a string value."""
    arg = arg.replace("%", "%%")
    if any(c in _RESERVED for c in arg):
        arg = '"' + "".join("\\" + c if c in '"`$\\' else c for c in arg) + '"'
    return arg.replace("\\", "\\\\")


def launch_command() -> list[str]:
    """How the desktop should start ventset: the ``ventset`` script beside this Python, else ``python -m``."""
    here = Path(sys.executable).parent / "ventset"
    if here.is_file() and os.access(here, os.X_OK):
        return [str(here)]
    found = shutil.which("ventset")
    if found:
        return [str(Path(found).resolve())]
    return [sys.executable, "-m", "ventset"]


def desktop_entry(command: list[str]) -> str:
    exec_line = " ".join(exec_arg(a) for a in command) + " %f"
    return "\n".join([
        "[Desktop Entry]",
        "Type=Application",
        "Version=1.5",
        "Name=ventset",
        "GenericName=Ventilator starting settings",
        "Comment=Draft starting ventilator settings for anaesthetised animals; a starting point only, titrated to "
        "monitoring",
        f"Exec={exec_line}",
        f"Icon={APP_ID}",
        "Terminal=false",
        "Categories=Science;MedicalSoftware;",
        f"MimeType={MIME_TYPE};",
        "Keywords=ventilation;anaesthesia;anesthesia;veterinary;tidal volume;dead space;",
        f"StartupWMClass={APP_ID}",
        "StartupNotify=true",
        "",
    ])


def mime_xml() -> str:
    return f"""<?xml version="1.0" encoding="UTF-8"?>
<mime-info xmlns="http://www.freedesktop.org/standards/shared-mime-info">
  <mime-type type="{MIME_TYPE}">
    <comment>ventset case</comment>
    <sub-class-of type="application/json"/>
    <icon name="{MIME_ICON}"/>
    <glob pattern="*{SUFFIX}"/>
  </mime-type>
</mime-info>
"""


def targets(home: Path) -> dict[str, Path]:
    icons = home / "icons" / "hicolor" / "scalable"
    return {"desktop": home / "applications" / f"{APP_ID}.desktop",
            "icon": icons / "apps" / f"{APP_ID}.svg",
            "mime_icon": icons / "mimetypes" / f"{MIME_ICON}.svg",
            "mime": home / "mime" / "packages" / f"{APP_ID}.xml"}


def _mkdir(folder: Path) -> None:
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise storage.WriteError(folder, storage.os_reason(exc)) from None


def install(home: Path | None = None, command: list[str] | None = None) -> list[Path]:
    """Write the desktop entry, the icons and the MIME type under ``home`` (default data_home()); the paths."""
    where = targets(home or data_home())
    icon = icon_path().read_bytes()
    content = {"desktop": desktop_entry(command or launch_command()).encode(), "icon": icon, "mime_icon": icon,
               "mime": mime_xml().encode()}
    for key, path in where.items():
        _mkdir(path.parent)
        storage.atomic_write_bytes(path, content[key])
    return list(where.values())


def remove(home: Path | None = None) -> list[Path]:
    """Take away what install() wrote; the paths removed."""
    gone = []
    for path in targets(home or data_home()).values():
        try:
            path.unlink()
            gone.append(path)
        except FileNotFoundError:
            continue
        except OSError as exc:
            raise storage.WriteError(path, storage.os_reason(exc)) from None
    return gone


def refresh(home: Path | None = None) -> list[str]:
    """Ask the desktop's databases to re-read the folders (when their tools are installed); what was run."""
    base = home or data_home()
    ran = []
    # No icon cache is written: a stale cache in the user's folder would hide icons other programs add later.
    for tool, folder in (("update-mime-database", base / "mime"), ("update-desktop-database", base / "applications")):
        exe = shutil.which(tool)
        if exe is None or not folder.is_dir():
            continue
        try:
            done = subprocess.run([exe, str(folder)], capture_output=True, text=True, timeout=60)
        except (OSError, subprocess.SubprocessError):
            continue
        if done.returncode == 0:
            ran.append(tool)
    return ran


def register(sub, _add_request_options) -> dict:
    p = sub.add_parser("install-desktop", help="add ventset to the desktop's applications, with its icon, and "
                       f"let it open {SUFFIX} files")
    p.add_argument("--remove", action="store_true", help="take the desktop entry, icon and file type away again")
    p.add_argument("--no-refresh", action="store_true", help="do not run update-mime-database and friends")
    return {"install-desktop": _cmd_install}


def _cmd_install(ns: argparse.Namespace) -> int:
    home = data_home()
    paths = remove(home) if ns.remove else install(home)
    verb = "removed" if ns.remove else "wrote"
    for path in paths:
        print(f"{verb} {path}")
    if not ns.no_refresh:
        ran = refresh(home)
        if ran:
            print("refreshed: " + ", ".join(ran))
    if not ns.remove:
        print(f"ventset is in the applications menu; {SUFFIX} files open in it (log out and in again if the desktop "
              "does not show it yet).")
    return 0
