"""No user text is ever rendered as markup in the window (issue 10 items 1–2), and autosave follows each edit
(item 9).

A case whose patient, custom species and part names are markup is opened; every QLabel, read-out, tooltip and
table cell is then checked: a label that shows such a name is plain text (or, where the window builds rich text,
shows the name's characters literally), and no tooltip holding a raw name would be taken for rich text.
"""

from __future__ import annotations

import dataclasses

import pytest

from ventset import autosave, cases, storage
from ventset.library import load_library
from ventset.model import ApparatusPart, Circuit, Patient, Request

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402
from PySide6.QtGui import Qt as GuiQt  # noqa: E402
from PySide6.QtGui import QTextDocument  # noqa: E402
from PySide6.QtWidgets import QAbstractItemView, QLabel, QMessageBox, QWidget  # noqa: E402

from ventset.gui.text import Text  # noqa: E402

HOSTILE = ('<img src="/dev/zero">', "<b>x</b>", '<a href="x">y</a>')
LIB = load_library()


def hostile_request() -> Request:
    return Request(Patient("dog", 20.0, name=HOSTILE[0], custom_species=HOSTILE[1]),
                   Circuit(parts=(ApparatusPart(HOSTILE[2], 3.0, HOSTILE[1]), ApparatusPart(HOSTILE[1], 2.0))))


def _rendered(text: str) -> str:
    doc = QTextDocument()
    doc.setHtml(text)
    return doc.toPlainText()


def _columns(model) -> int:
    try:
        return model.columnCount()
    except TypeError:  # a list widget's model keeps columnCount private: it has one column
        return 1


def markup_problems(root: QWidget) -> list[str]:
    """Every place under ``root`` where a hostile name would be rendered as markup."""
    problems = []
    widgets = [root, *root.findChildren(QWidget)]
    for w in widgets:
        if isinstance(w, QLabel) and w.text():
            raw = w.text()
            rich = w.textFormat() == Qt.TextFormat.RichText or (
                w.textFormat() == Qt.TextFormat.AutoText and GuiQt.mightBeRichText(raw))
            if w.textFormat() != Qt.TextFormat.PlainText and any(h in raw for h in HOSTILE):
                problems.append(f"label {w.objectName() or raw[:40]!r} renders a name as markup")
            if w.textFormat() == Qt.TextFormat.AutoText:
                problems.append(f"label {w.objectName() or raw[:40]!r} leaves the format to Qt's guess")
            if rich and any(h in raw for h in HOSTILE):
                problems.append(f"rich label {raw[:40]!r}")
        if isinstance(w, Text) and any(h in w.text() for h in HOSTILE) and w.plainText() != w.text():
            problems.append(f"read-out {w.objectName()!r} drops characters of a name")
        tip = w.toolTip()
        if tip and any(h in tip for h in HOSTILE) and GuiQt.mightBeRichText(tip):
            problems.append(f"tooltip of {type(w).__name__} {w.objectName()!r} renders a name as markup")
        if isinstance(w, QAbstractItemView) and w.model() is not None:
            model = w.model()
            for r in range(model.rowCount()):
                for c in range(_columns(model)):
                    tip = model.index(r, c).data(Qt.ItemDataRole.ToolTipRole) or ""
                    if any(h in tip for h in HOSTILE) and GuiQt.mightBeRichText(tip):
                        problems.append(f"cell tooltip {tip[:40]!r}")
    return problems


def shown_literally(root: QWidget) -> set[str]:
    """The hostile names that appear, character for character, somewhere a person reads."""
    seen = set()
    for w in [root, *root.findChildren(QWidget)]:
        texts = []
        if isinstance(w, QLabel):
            texts.append(w.text() if w.textFormat() == Qt.TextFormat.PlainText else _rendered(w.text()))
        if isinstance(w, Text):
            texts.append(w.plainText())
        if w.toolTip():
            texts.append(_rendered(w.toolTip()) if GuiQt.mightBeRichText(w.toolTip()) else w.toolTip())
        seen |= {h for h in HOSTILE for t in texts if h in t}
    return seen


@pytest.fixture
def make_window(qtbot, tmp_path, monkeypatch):
    monkeypatch.setenv("VENTSET_SETTINGS_DIR", str(tmp_path / "settings"))
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    from ventset.gui.window import MainWindow, install_extensions

    made = []

    def make():
        window = MainWindow()
        qtbot.addWidget(window)
        window.resize(1400, 900)
        window.show()
        install_extensions(window)
        manager = window.case_manager
        manager.warn = manager.inform = lambda *a: None
        manager.ask_save_discard_cancel = lambda: "discard"
        made.append(manager)
        return window, manager

    yield make
    for manager in made:
        manager.close_session()


def test_a_case_with_markup_names_renders_no_markup_anywhere(make_window, qtbot, tmp_path):
    window, manager = make_window()
    path = tmp_path / "hostile.ventcase"
    cases.save_case(path, cases.case_for_request(hostile_request(), LIB))
    assert manager.open_path(path)
    window.controller.flush()
    for i in range(window.tabs.count()):  # every tab drawn once
        window.tabs.setCurrentIndex(i)
        qtbot.wait(1)
    assert markup_problems(window) == []
    assert shown_literally(window) == set(HOSTILE)  # the names are there, as typed
    dialog = manager.parts_dialog()
    assert markup_problems(dialog) == []
    dialog.close()


def test_the_restore_question_shows_a_markup_name_as_text_and_does_not_hang(make_window, tmp_path, monkeypatch):
    folder = tmp_path / "data" / "autosave"
    folder.mkdir(parents=True)
    left = autosave.AutosaveSession(folder)
    left.save(cases.case_for_request(hostile_request(), LIB))
    left._lock.close()  # the window that wrote it is gone (as after a crash)
    left._lock = None
    boxes = []

    def answer(box):
        boxes.append([(lab.textFormat(), lab.text()) for lab in box.findChildren(QLabel)])
        return 0

    monkeypatch.setattr(QMessageBox, "exec", answer)
    window, manager = make_window()
    (rec,) = autosave.find_recoverable(folder, exclude=manager.session)
    assert manager.ask_restore(rec) == "later"
    texts = [t if fmt == Qt.TextFormat.PlainText else _rendered(t) for fmt, t in boxes[0]]
    assert any(HOSTILE[0] in t for t in texts)
    assert not any(fmt != Qt.TextFormat.PlainText and HOSTILE[0] in t for fmt, t in boxes[0])
    manager.ask_restore = lambda rec: "restore"
    assert manager.offer_recovery()
    window.controller.flush()
    assert window.controller.request.patient.name == HOSTILE[0] and markup_problems(window) == []


def test_autosave_follows_an_edit_within_moments_not_only_on_the_timer(make_window, qtbot):
    window, manager = make_window()
    manager.timer.stop()  # only the debounce may save here
    manager.debounce.setInterval(50)
    req = window.controller.request
    window.controller.set_request(dataclasses.replace(req, patient=dataclasses.replace(req.patient, mass_kg=7.5)))
    window.controller.flush()
    assert manager.debounce.isActive()
    qtbot.waitUntil(lambda: manager.session.path.exists(), timeout=5000)
    rec = autosave._read(manager.session.path)
    assert rec.case.request.patient.mass_kg == 7.5


def test_every_edit_restarts_the_debounce(make_window):
    window, manager = make_window()
    manager.timer.stop()
    manager.debounce.setInterval(60_000)
    req = window.controller.request
    for kg in (5.0, 6.0):
        window.controller.set_request(dataclasses.replace(req, patient=dataclasses.replace(req.patient, mass_kg=kg)))
        window.controller.flush()
        assert manager.debounce.isActive() and manager.debounce.remainingTime() > 50_000
    assert not manager.session.path.exists()
    manager.debounce.timeout.emit()
    assert manager.session.path.exists()


@pytest.mark.parametrize("raw", [
    b'{"format": "ventset-case", "schema_version": 1, "request": {"patient": {"species": "dog", "mass_kg": 1'
    + b"0" * 400 + b"}}}",
    b'{"format": "ventset-case", "schema_version": 1, "request": {"patient": {"species": "dog", "mass_kg": 20},'
    b' "circuit": {"parts": [7]}}}',
    b'{"format": "ventset-case", "schema_version": 1, "request": {"patient": {"species": "dog", "mass_kg": 20,'
    b' "name": "Rex\\u202e"}}}',
])
def test_open_refuses_a_malformed_case_and_leaves_the_window_as_it_was(make_window, tmp_path, raw):
    window, manager = make_window()
    shown = []
    manager.warn = lambda title, text: shown.append(text)
    before = window.controller.request
    path = tmp_path / "bad.ventcase"
    path.write_bytes(raw)
    assert manager.open_path(path) is False
    assert window.controller.request == before and path.read_bytes() == raw
    assert shown and "cannot open" in shown[0] and "unchanged" in shown[0]
