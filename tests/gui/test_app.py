"""Starting the window: no display, first-run acknowledgement, settings isolation, smoke start."""

from __future__ import annotations

import os
import subprocess
import sys

from PySide6.QtWidgets import QDialog

from ventset.gui import app, settings
from ventset.gui.ack import AcknowledgementDialog


def _env(**extra) -> dict:
    env = {k: v for k, v in os.environ.items() if k not in app.DISPLAY_VARS}
    env.update(extra)
    return env


def test_no_display_says_so_in_one_line_and_prints_the_demo_plan(tmp_path):
    if not sys.platform.startswith("linux"):
        return
    out = subprocess.run([sys.executable, "-m", "ventset"], capture_output=True, text=True, timeout=60,
                         env=_env(VENTSET_SETTINGS_DIR=str(tmp_path)))
    assert out.returncode == 0, out.stderr
    lines = out.stdout.splitlines()
    assert lines[0].startswith("ventset: no display available") and "demo plan" in lines[0]
    assert "Set tidal volume" in out.stdout and "NOTICE:" in out.stdout
    assert "Traceback" not in out.stderr


def test_display_check(monkeypatch):
    for v in app.DISPLAY_VARS:
        monkeypatch.delenv(v, raising=False)
    assert app.display_available() is (not sys.platform.startswith("linux"))
    monkeypatch.setenv("WAYLAND_DISPLAY", "wayland-0")
    assert app.display_available()


def test_first_run_acknowledgement_is_required_and_remembered(qtbot, isolated_settings):
    s = settings.open_settings()
    assert not settings.is_acknowledged(s)
    dlg = AcknowledgementDialog()
    qtbot.addWidget(dlg)
    assert not dlg.start.isEnabled()           # cannot start without ticking the box
    dlg.check.setChecked(True)
    assert dlg.start.isEnabled()
    settings.set_acknowledged(s)
    assert settings.is_acknowledged(settings.open_settings())
    assert (isolated_settings / "ventset.ini").exists()  # the isolated file, not the user's settings


def test_run_shows_the_acknowledgement_on_first_start(qtbot, monkeypatch):
    shown = []

    def fake_exec(self):
        shown.append(self.windowTitle())
        return QDialog.DialogCode.Rejected       # the user chooses Quit

    monkeypatch.setattr(AcknowledgementDialog, "exec", fake_exec)
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    monkeypatch.delenv(app.SMOKE_ENV, raising=False)
    assert app.run() == 0
    assert shown == ["Before you start"]


def test_smoke_start_opens_the_demo_and_quits(tmp_path):
    out = subprocess.run([sys.executable, "-m", "ventset"], capture_output=True, text=True, timeout=120,
                         env=_env(QT_QPA_PLATFORM="offscreen", VENTSET_SETTINGS_DIR=str(tmp_path),
                                  VENTSET_DATA_DIR=str(tmp_path / "data"), VENTSET_GUI_SMOKE="1"))
    assert out.returncode == 0, out.stderr
    assert out.stdout.startswith("ready ")
    assert "Traceback" not in out.stderr
