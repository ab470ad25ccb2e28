"""Fixtures for the window tests: an isolated QSettings folder, a window at a typical size."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("PYQTGRAPH_QT_LIB", "PySide6")
# The offscreen platform's screen is 800 × 800 unless configured; the window keeps itself inside the screen, so
# give the tests a common desktop screen (1920 × 1080) to place their 1400 × 900 windows on.
SCREEN_FILE = Path(__file__).with_name("offscreen-screen.json")
if os.environ["QT_QPA_PLATFORM"] == "offscreen":
    os.environ["QT_QPA_PLATFORM"] = f"offscreen:configfile={SCREEN_FILE}"


@pytest.fixture(autouse=True)
def isolated_settings(tmp_path, monkeypatch):
    """Every test gets its own settings file; the user's real settings are never touched."""
    folder = tmp_path / "settings"
    folder.mkdir()
    monkeypatch.setenv("VENTSET_SETTINGS_DIR", str(folder))
    return folder


@pytest.fixture
def make_window(qtbot):
    """Build a MainWindow (demo patient unless a request is given), shown at 1400 × 900."""

    def make(request=None, size=(1400, 900)):
        from ventset.gui.settings import open_settings
        from ventset.gui.window import MainWindow

        w = MainWindow(open_settings(), request=request)
        qtbot.addWidget(w)
        w.resize(*size)
        w.show()
        qtbot.waitExposed(w)
        return w

    return make


@pytest.fixture
def window(make_window):
    return make_window()


def settle(window) -> None:
    """Let queued replans run and paint."""
    from PySide6.QtWidgets import QApplication

    window.controller.flush()
    QApplication.processEvents()
    window.controller.flush()


def enter(qtbot, window, species: str, mass: str) -> None:
    """Choose ``species`` and type ``mass`` over the body mass, then Enter, as a user would; settled."""
    from PySide6.QtCore import Qt

    window.form.species.picked.emit(species)
    edit = window.form.rows["mass"].edit
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, mass)
    qtbot.keyClick(edit, Qt.Key.Key_Return)
    settle(window)
