"""A desktop program's conventions in the window: Edit ▸ Cut/Copy/Paste/Select all on the focused field, recent
cases by name (path on hover) with Clear, no undo across Open, the About box, Help ▸ User guide (F1), the icon."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import pytest

from ventset import __version__, cases, storage
from ventset.model import STANDING_NOTICE

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402
from PySide6.QtGui import QGuiApplication, QKeySequence  # noqa: E402
from PySide6.QtWidgets import QApplication, QLabel  # noqa: E402

from tests.gui.conftest import settle  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture
def win(qtbot, tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    from ventset.gui import case_ui
    from ventset.gui.settings import open_settings
    from ventset.gui.window import MainWindow

    w = MainWindow(open_settings())
    qtbot.addWidget(w)
    manager = case_ui.install(w, offer_recovery=False)
    manager.warn = manager.inform = lambda *a: None
    manager.ask_save_discard_cancel = lambda: "discard"
    w.resize(1366, 768)
    w.show()
    qtbot.waitExposed(w)
    settle(w)
    return w


def _focus(widget) -> None:
    widget.setFocus(Qt.FocusReason.OtherFocusReason)
    QApplication.processEvents()
    assert QApplication.focusWidget() is widget


def test_edit_menu_cuts_copies_and_pastes_in_the_focused_field(win):
    acts = win.edit_actions
    assert [acts[k].shortcut() for k in ("cut", "copy", "paste", "select_all")] == [
        QKeySequence(QKeySequence.StandardKey.Cut), QKeySequence(QKeySequence.StandardKey.Copy),
        QKeySequence(QKeySequence.StandardKey.Paste), QKeySequence(QKeySequence.StandardKey.SelectAll)]
    mass = win.form.rows["mass"].edit
    _focus(mass)
    acts["select_all"].trigger()
    acts["copy"].trigger()
    assert QGuiApplication.clipboard().text() == mass.text() == "4.2"
    name = win.form.name_edit
    _focus(name)
    acts["select_all"].trigger()
    QGuiApplication.clipboard().setText("Bramble (invented)")
    acts["paste"].trigger()
    settle(win)
    assert win.controller.request.patient.name == "Bramble (invented)"  # a paste is an edit: the plan follows
    win.undo.undo()
    settle(win)
    assert win.controller.request.patient.name == "Pickle (demo)"  # and one undo step
    _focus(mass)
    acts["select_all"].trigger()
    acts["cut"].trigger()
    settle(win)
    assert mass.text() == "" and QGuiApplication.clipboard().text() == "4.2" and win.controller.stale
    table = win.assumptions
    win.tabs.setCurrentWidget(table)
    _focus(table)
    table.selectRow(0)
    acts["copy"].trigger()
    first = win.controller.plan.assumptions[0]
    assert QGuiApplication.clipboard().text().split("\t")[0] == first.name
    from ventset.gui import editing

    assert not editing.available("paste") and not editing.available("cut")  # a table takes no paste


def test_recent_cases_show_names_with_the_path_on_hover_and_can_be_cleared(win, tmp_path):
    manager = win.case_manager
    paths = [tmp_path / "ward a" / "pickle.ventcase", tmp_path / "ward b" / "pickle.ventcase",
             tmp_path / "moth.ventcase"]
    for p in reversed(paths):
        p.parent.mkdir(parents=True, exist_ok=True)
        assert cases.add_recent(p) == ""
    manager.fill_recent()
    entries = [a for a in manager.recent_menu.actions() if a.data()]
    labels = [re.sub(r"^&\d ", "", a.text()) for a in entries]
    assert labels == ["pickle.ventcase — ward a", "pickle.ventcase — ward b", "moth.ventcase"]
    for a, p in zip(entries, paths, strict=True):
        assert str(p.resolve()) in a.toolTip() and "/" not in a.text().replace(" — ", "")
    clear = manager.recent_menu.findChild(type(entries[0]), "act-clear-recent") or next(
        a for a in manager.recent_menu.actions() if a.objectName() == "act-clear-recent")
    clear.trigger()
    assert cases.recent_files() == [] and all(p.parent.is_dir() for p in paths)
    manager.fill_recent()
    assert [a.text() for a in manager.recent_menu.actions()] == ["No recent cases"]


def test_undo_never_crosses_into_the_case_opened_before(win, tmp_path):
    manager = win.case_manager
    other = tmp_path / "moth.ventcase"
    win.form.set_text("mass", "6")
    settle(win)
    manager.save_as = lambda: None
    req = win.controller.request
    import dataclasses

    moth = dataclasses.replace(req, patient=dataclasses.replace(req.patient, name="Moth (invented)", mass_kg=3.3))
    cases.save_case(other, cases.make_case(moth, None, library=win.library))
    win.form.set_text("mass", "7")
    settle(win)
    assert win.undo.canUndo()
    assert manager.open_path(other)
    settle(win)
    assert not win.undo.canUndo() and win.undo.count() == 0
    win.undo.undo()
    settle(win)
    assert win.controller.request.patient.name == "Moth (invented)" and win.controller.request.patient.mass_kg == 3.3


def test_about_box_has_version_licence_notice_and_where_the_numbers_come_from(win, qtbot):
    from ventset.about import source_counts, source_kind
    from ventset.gui.help_ui import AboutDialog

    dialog = AboutDialog(win)
    qtbot.addWidget(dialog)
    text = "\n".join(lab.text() for lab in dialog.findChildren(QLabel))
    licence = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["license"]
    assert f"ventset {__version__}" in text and f"{licence} licence" in text
    assert STANDING_NOTICE in text and "not a prescription" in text
    assert f"{len(win.library.species)} species" in text and f"version {win.library.species_version}" in text
    counts = source_counts(win.library)
    assert f"{counts['from memory']} from memory" in text and f"{counts['common practice']} common practice" in text
    for lab in dialog.findChildren(QLabel):
        assert lab.textFormat() == Qt.TextFormat.PlainText or lab.pixmap() is not None and not lab.text()
    assert source_kind("Kleiber 1947") == "published" and source_kind("common practice") == "common practice"
    assert source_kind("from memory; check") == "from memory"
    # every species entry names a source for its tidal volume range (resources/species.toml, read directly)
    species = tomllib.loads((ROOT / "resources" / "species.toml").read_text())["species"]
    assert sum(counts.values()) >= len(species) * 3
    assert not dialog.windowIcon().isNull()


def test_help_opens_the_bundled_user_guide_inside_the_app(win, qtbot):
    from ventset.resources import docs_dir

    assert win.act_guide.shortcut() == QKeySequence(QKeySequence.StandardKey.HelpContents)
    win.act_guide.trigger()
    guide = win._guide
    qtbot.addWidget(guide)
    assert guide.isVisible()
    shown = guide.browser.toPlainText()
    first_heading = (docs_dir() / "user-guide.md").read_text().splitlines()[0].lstrip("# ").strip()
    assert first_heading in shown and "Caution codes" in shown
    assert Path(guide.browser.source().toLocalFile()) == docs_dir() / "user-guide.md"
    assert guide.show_document("titration.md") and "titration.md" in guide.browser.source().toLocalFile()
    assert guide.back.isEnabled()
    guide.browser.backward()
    assert guide.browser.source().toLocalFile().endswith("user-guide.md")


def test_window_has_the_desktop_icon(win):
    from ventset.desktop import icon_path

    assert icon_path().is_file() and not win.windowIcon().isNull()
    assert not win.windowIcon().pixmap(64, 64).isNull()
