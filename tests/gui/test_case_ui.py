"""The window's case handling: save/open, unsaved changes, autosave recovery, printing, clinic parts."""

from __future__ import annotations

import dataclasses
import json
import os
import re
from pathlib import Path

import pytest

from ventset import autosave, cases, partslib, storage
from ventset.model import STANDING_NOTICE, ApparatusPart

pytest.importorskip("PySide6")
from PySide6.QtGui import QAction, QGuiApplication, QKeySequence  # noqa: E402
from PySide6.QtWidgets import QWidget  # noqa: E402

from ventset.gui import case_ui  # noqa: E402

SHOTS = Path(os.environ.get("VENTSET_SHOTS", "")) if os.environ.get("VENTSET_SHOTS") else None


class Dialogs:
    """Stands in for the modal dialogs: records what was shown and answers as told."""

    def __init__(self, manager):
        self.shown: list[tuple[str, str, str]] = []
        self.answers: dict[str, object] = {"save_discard_cancel": "discard", "restore": "restore",
                                           "confirm": False, "open": "", "save": "", "text": ""}
        m = manager
        m.warn = lambda t, x: self.shown.append(("warn", t, x))
        m.inform = lambda t, x: self.shown.append(("inform", t, x))
        m.confirm = lambda t, x: self.shown.append(("confirm", t, x)) or self.answers["confirm"]
        m.ask_save_discard_cancel = lambda: self.shown.append(("ask", "", "")) or self.answers["save_discard_cancel"]
        m.ask_restore = lambda rec: self.shown.append(("restore", rec.title, "")) or self.answers["restore"]
        m.pick_open_path = lambda *a: self.answers["open"]
        m.pick_save_path = lambda *a: self.answers["save"]
        m.ask_text = lambda *a, **k: self.answers["text"]

    def kinds(self) -> list[str]:
        return [k for k, _, _ in self.shown]


@pytest.fixture
def make_window(qtbot, tmp_path, monkeypatch):
    monkeypatch.setenv("VENTSET_SETTINGS_DIR", str(tmp_path / "settings"))
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    from ventset.gui.window import MainWindow

    made = []

    def make(offer_recovery: bool = False):
        window = MainWindow()
        qtbot.addWidget(window)
        manager = case_ui.install(window, offer_recovery=False)
        dialogs = Dialogs(manager)
        if offer_recovery:
            manager.offer_recovery()
        made.append((window, manager, dialogs))
        return window, manager, dialogs

    yield make
    for _window, manager, dialogs in made:
        dialogs.answers["save_discard_cancel"] = "discard"
        manager.close_session()


def _edit_mass(window, kg: float) -> None:
    req = window.controller.request
    window.controller.set_request(dataclasses.replace(req, patient=dataclasses.replace(req.patient, mass_kg=kg,
                                                                                       name="Quill (invented)")))
    window.controller.flush()


def test_case_menu_holds_the_case_actions_before_the_windows_own(make_window):
    window, manager, _ = make_window()
    texts = [a.text() for a in window.menu("Case").actions() if a.text()]
    assert texts[:4] == ["New case", "Open case…", "Open recent", "Save case"]
    assert "Copy summary for the clinical record" in texts and "Clinic parts library…" in texts
    assert texts.index("Clinic parts library…") < texts.index("Quit")
    assert manager.act_save.shortcut() == QKeySequence(QKeySequence.StandardKey.Save)
    assert manager.act_open.shortcut() == QKeySequence(QKeySequence.StandardKey.Open)


def test_save_as_then_open_gives_the_same_case(make_window, tmp_path):
    window, manager, dialogs = make_window()
    _edit_mass(window, 6.1)
    assert manager.is_dirty() and window.isWindowModified()
    dialogs.answers["save"] = str(tmp_path / "quill")
    assert manager.save_as()
    path = tmp_path / f"quill{cases.SUFFIX}"
    assert manager.path == path and not manager.is_dirty() and not window.isWindowModified()
    assert "quill.ventcase" in window.windowTitle()
    saved = cases.load_case(path).case
    assert saved.request == window.controller.request and saved.plan is not None
    assert cases.recent_files()[0] == path.resolve()

    other, manager2, dialogs2 = make_window()
    assert manager2.open_path(path)
    assert other.controller.request == saved.request and not manager2.is_dirty()
    assert dialogs2.shown == []  # nothing to report: same library, same plan


def test_failed_open_leaves_the_case_in_the_window_alone(make_window, tmp_path):
    window, manager, dialogs = make_window()
    _edit_mass(window, 5.5)
    before = window.controller.request
    bad = tmp_path / "bad.ventcase"
    bad.write_bytes(b'{"format": "ventset-case", "schema_version": 1, "request": {"patient": {"species": 3}}}')
    assert not manager.open_path(bad)
    kind, _, text = dialogs.shown[-1]
    assert kind == "warn" and "request.patient.species' must be text" in text and "unchanged" in text
    assert window.controller.request == before and manager.path is None and manager.is_dirty()


def test_opening_a_case_with_a_changed_plan_says_so(make_window, tmp_path):
    window, manager, dialogs = make_window()
    dialogs.answers["save"] = str(tmp_path / "c.ventcase")
    manager.save_as()
    data = json.loads((tmp_path / "c.ventcase").read_text(encoding="utf-8"))
    data["plan"]["ventilation"]["rate_per_min"] = 55.0
    (tmp_path / "c.ventcase").write_text(json.dumps(data), encoding="utf-8")
    assert manager.open_path(tmp_path / "c.ventcase")
    kind, title, text = dialogs.shown[-1]
    assert kind == "inform" and "Rate: stored 55 /min" in text and "stays in the file" in text


def test_unsaved_changes_are_asked_about_on_close(make_window, qtbot):
    window, manager, dialogs = make_window()
    window.show()
    _edit_mass(window, 7.0)
    dialogs.answers["save_discard_cancel"] = "cancel"
    window.close()
    assert window.isVisible() and dialogs.kinds()[-1] == "ask"
    manager.autosave_now()
    dialogs.answers["save_discard_cancel"] = "discard"
    window.close()
    assert not window.isVisible()
    dismissed = list((autosave.autosave_dir() / "dismissed").glob("session-*.json"))
    assert len(dismissed) == 1  # discarded on purpose, still kept aside


def test_autosave_recovery_after_a_simulated_crash(make_window, tmp_path):
    window, manager, dialogs = make_window()
    dialogs.answers["save"] = str(tmp_path / "quill.ventcase")
    manager.save_as()
    _edit_mass(window, 6.4)
    window.form.set_text("mass", "6,4")  # an entry that does not parse yet
    window.controller.flush()
    assert window.controller.stale
    assert manager.autosave_now()
    edited = window.controller.request
    # The crash: the process dies, so its lock is released and nothing is cleaned up.
    manager.session._lock.close()
    manager.session = None

    again, manager2, dialogs2 = make_window(offer_recovery=True)
    kind, title, _ = dialogs2.shown[0]
    assert kind == "restore" and "Quill (invented)" in title and "quill.ventcase" in title
    assert again.controller.request == edited
    assert manager2.path == tmp_path / "quill.ventcase" and manager2.is_dirty()
    assert again.form.state["text:mass"] == "6,4"  # what was typed is back
    assert autosave.find_recoverable(exclude=manager2.session) == []


def test_copy_summary_and_pdf(make_window, tmp_path):
    window, manager, dialogs = make_window()
    text = manager.copy_summary()
    assert QGuiApplication.clipboard().text() == text and text.endswith(STANDING_NOTICE)
    pdf = manager.write_pdf(tmp_path / "plan.pdf")
    assert pdf and pdf.read_bytes().startswith(b"%PDF")
    window.form.set_text("mass", "-3")
    window.controller.flush()
    assert manager.write_pdf(tmp_path / "stale.pdf") is None and not (tmp_path / "stale.pdf").exists()
    assert dialogs.shown[-1][1] == "No current plan"
    assert manager.copy_summary().startswith("NOT CURRENT")


def test_print_preview_is_qt_s_own_and_shows_every_page_on_the_chosen_paper(make_window, qtbot, tmp_path):
    import shutil
    import subprocess

    from PySide6.QtGui import QPageSize
    from PySide6.QtPrintSupport import QPrintPreviewDialog, QPrintPreviewWidget

    titrate = pytest.importorskip("ventset.titrate")
    window, manager, dialogs = make_window()
    p = window.controller.plan
    m = titrate.Measurement(5.0, p.ventilation.tidal_volume_ml, p.ventilation.rate_per_min, etco2_mmhg=58.0)
    entries = titrate.record_measurement((), window.controller.request, m)
    manager.register_timeline(lambda: entries, lambda _e: None)
    letter = next(a for a in manager.paper_menu.actions() if a.text() == "Letter")
    letter.trigger()
    dialog = manager.preview()
    qtbot.addWidget(dialog)
    assert isinstance(dialog, QPrintPreviewDialog)
    assert dialog.printer.pageLayout().pageSize().id() == QPageSize.PageSizeId.Letter
    preview = dialog.findChild(QPrintPreviewWidget)
    preview.updatePreview()
    pdf = manager.write_pdf(tmp_path / "plan.pdf")
    assert dialog.job.record == entries
    if shutil.which("pdfinfo"):
        meta = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True, check=True).stdout
        assert int(re.search(r"Pages:\s+(\d+)", meta).group(1)) == preview.pageCount()  # as the PDF
        assert re.search(r"Page size:\s+612(\.\d+)? x 792", meta)
    assert preview.pageCount() >= 2
    assert dialog.findChild(QAction, "preview-save-pdf") is not None
    if SHOTS:
        dialog.grab().save(str(SHOTS / "print-preview.png"))
    dialog.close()


def test_timeline_is_saved_and_given_back_on_open(make_window, tmp_path):
    titrate = pytest.importorskip("ventset.titrate")
    window, manager, dialogs = make_window()
    p = window.controller.plan
    m = titrate.Measurement(15.0, p.ventilation.tidal_volume_ml, p.ventilation.rate_per_min, etco2_mmhg=48.0)
    record = {"entries": titrate.record_measurement((), window.controller.request, m)}
    received = []
    manager.register_timeline(lambda: record["entries"], received.append)
    assert manager.is_dirty()  # a measurement is an unsaved change
    dialogs.answers["save"] = str(tmp_path / "t.ventcase")
    assert manager.save_as() and not manager.is_dirty()
    assert cases.case_timeline(cases.load_case(tmp_path / "t.ventcase").case) == record["entries"]
    other, manager2, _ = make_window()
    manager2.register_timeline(lambda: (), received.append)
    manager2.open_path(tmp_path / "t.ventcase")
    assert received == [record["entries"]]


def test_clinic_parts_dialog_edits_uses_shares(make_window, qtbot, tmp_path):
    window, manager, dialogs = make_window()
    dlg = manager.parts_dialog()
    qtbot.addWidget(dlg)
    assert dlg.catalogue_table.rowCount() == len(window.library.parts)
    assert dlg.new_part("Blue HME, cat", "9.5 mL")
    assert dlg.parts_table.rowCount() == 1 and partslib.load_clinic_library().part("Blue HME, cat").volume_ml == 9.5
    dlg.parts_table.item(0, 1).setText("-2")  # refused, named, put back
    assert dialogs.shown[-1][0] == "warn" and "Part volume" in dialogs.shown[-1][2]
    assert dlg.parts_table.item(0, 1).text() == "9.5"
    dlg.parts_table.item(0, 3).setText("R. Okafor")
    assert partslib.load_clinic_library().part("Blue HME, cat").measured_by == "R. Okafor"
    dlg.parts_table.selectRow(0)
    parts_before = window.controller.request.circuit.parts
    assert dlg.use_part()
    window.controller.flush()
    added = window.controller.request.circuit.parts[-1]
    assert len(window.controller.request.circuit.parts) == len(parts_before) + 1
    assert added == ApparatusPart("Blue HME, cat", 9.5, "clinic parts library: measured by R. Okafor")
    assert dlg.save_preset("Cat theatre 2")
    assert partslib.load_clinic_library().preset("Cat theatre 2").parts[-1] == added
    if SHOTS:
        dlg.grab().save(str(SHOTS / "clinic-parts.png"))

    shared = tmp_path / "from-the-other-machine.json"
    partslib.write_library_file(partslib.ClinicLibrary(parts=(partslib.ClinicPart("Blue HME, cat", 12.0),
                                                              partslib.ClinicPart("Long elbow", 6.0))), shared)
    report = dlg.import_file(str(shared))
    assert report.conflicts and dialogs.kinds()[-2:] == ["confirm", "inform"]
    assert partslib.load_clinic_library().part("Blue HME, cat").volume_ml == 9.5  # never overwritten
    assert partslib.load_clinic_library().part("Long elbow").volume_ml == 6.0
    assert dlg.export_file(str(tmp_path / "out.json"))
    assert partslib.read_library_file(tmp_path / "out.json") == partslib.load_clinic_library()
    dlg.close()


def test_a_damaged_clinic_library_is_shown_not_overwritten(make_window, qtbot):
    window, manager, dialogs = make_window()
    partslib.library_path().write_bytes(b"{broken")
    dlg = manager.parts_dialog()
    qtbot.addWidget(dlg)
    assert "not complete, valid JSON" in dlg.where.text() and not dlg.add_part_button.isEnabled()
    assert partslib.library_path().read_bytes() == b"{broken"
    dlg.close()


def test_the_real_record_panel_is_found_saved_and_restored(qtbot, tmp_path, monkeypatch):
    titrate = pytest.importorskip("ventset.titrate")
    pytest.importorskip("ventset.gui.timeline")
    monkeypatch.setenv("VENTSET_SETTINGS_DIR", str(tmp_path / "settings"))
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    from ventset.gui.window import MainWindow, install_extensions

    windows = []
    for _ in range(2):
        window = MainWindow()
        qtbot.addWidget(window)
        assert "ventset.gui.case_ui" in install_extensions(window)
        window.case_manager.ask_save_discard_cancel = lambda: "discard"
        windows.append(window)
    qtbot.wait(10)  # the deferred attach runs
    first, second = windows
    manager = first.case_manager
    assert manager.attach_timeline_panel()
    panel = next(c for c in first.findChildren(QWidget) if hasattr(c, "set_entries"))
    p = first.controller.plan
    m = titrate.Measurement(10.0, p.ventilation.tidal_volume_ml, p.ventilation.rate_per_min, etco2_mmhg=51.0)
    entries = titrate.record_measurement((), first.controller.request, m)
    panel.set_entries(entries)
    assert manager.is_dirty() and first.isWindowModified()
    manager.pick_save_path = lambda *a: str(tmp_path / "rec.ventcase")
    assert manager.save_as() and not manager.is_dirty()
    assert second.case_manager.open_path(tmp_path / "rec.ventcase")
    panel2 = next(c for c in second.findChildren(QWidget) if hasattr(c, "set_entries"))
    assert panel2.entries == entries and not second.case_manager.is_dirty()
    for w in windows:
        w.case_manager.close_session()
