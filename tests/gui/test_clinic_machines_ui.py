"""The clinic's ventilators in the window: the tab of the clinic parts library, the editor (refusals named in
the editor, nothing typed cleared), the chooser listing them, and the plan dialled on the clinic's own steps."""

from __future__ import annotations

import pytest

from ventset import partslib, storage
from ventset.partslib_machines import ClinicMachine

pytest.importorskip("PySide6")

from PySide6.QtCore import Qt  # noqa: E402

from ventset.gui import case_ui  # noqa: E402


@pytest.fixture
def window_and_dialog(qtbot, tmp_path, monkeypatch):
    monkeypatch.setenv("VENTSET_SETTINGS_DIR", str(tmp_path / "settings"))
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    from ventset.gui.window import MainWindow

    window = MainWindow()
    qtbot.addWidget(window)
    manager = case_ui.install(window, offer_recovery=False)
    shown: list[tuple[str, str]] = []
    manager.warn = lambda t, x: shown.append((t, x))
    manager.ask_save_discard_cancel = lambda: "discard"  # the case changed: let the window close in teardown
    dlg = manager.parts_dialog()
    qtbot.addWidget(dlg)
    yield window, manager, dlg, shown
    dlg.close()
    manager.close_session()


def _fill(name: str, rate_step: str = "2", rate_min: str = "4", gas: str = "air"):
    def fill(editor) -> None:
        editor.name_edit.setText(name)
        editor.class_combo.setCurrentIndex(editor.class_combo.findData("bellows_ascending"))
        editor.cells["rate"]["min"].setText(rate_min)
        editor.cells["rate"]["step"].setText(rate_step)
        editor.compressible_edit.setText("1.2")
        editor.gas_combo.setCurrentIndex(editor.gas_combo.findData(gas))
        editor.note_edit.setText("<b>left</b> theatre (invented)")
    return fill


def test_a_ventilator_is_added_edited_used_and_removed_from_the_window(window_and_dialog):
    window, manager, dlg, shown = window_and_dialog
    tab = dlg.machines_tab
    assert tab.new(_fill("Theatre 2 bellows"))
    saved = partslib.load_clinic_library().machine("Theatre 2 bellows")
    assert saved == ClinicMachine.checked("Theatre 2 bellows", "bellows_ascending",
                                          [{"control": "rate", "min": 4, "step": 2}], 1.2, "air", None,
                                          "<b>left</b> theatre (invented)")
    assert tab.table.rowCount() == 1 and tab.table.item(0, 5).text() == "<b>left</b> theatre (invented)"
    combo = window.form.machine_combo
    assert combo.findData("Theatre 2 bellows") > 0  # the chooser lists it

    tab.table.selectRow(0)
    assert tab.use()
    window.controller.flush()
    p = window.controller.plan
    assert p.machine is not None and p.machine.machine.key == "Theatre 2 bellows"
    assert p.machine.setting("rate").value % 2 == 0  # on the clinic's step
    assert combo.currentData() == "Theatre 2 bellows"
    strip = window.settings_panel.machine
    assert strip.title.text() == "Turn these on the ventilator — Theatre 2 bellows"  # short: fits its line

    def widen(editor) -> None:  # the editor opens with the clinic's values, and the class's as hints
        assert editor.cells["rate"]["step"].text() == "2" and editor.cells["rate"]["max"].text() == ""
        assert editor.cells["rate"]["max"].placeholderText() == "class: 60"
        editor.cells["rate"]["step"].setText("1")
        editor.cells["rate"]["min"].setText("3")

    tab.table.selectRow(0)
    assert tab.edit(widen)
    window.controller.flush()
    assert partslib.load_clinic_library().machine("Theatre 2 bellows").range_of("rate").step == 1
    assert window.controller.plan.machine.machine.control("rate").step == 1  # re-planned on the edited machine
    tab.table.selectRow(0)
    assert tab.remove() and partslib.load_clinic_library().machines == ()
    window.controller.flush()
    assert window.controller.errors and "Theatre 2 bellows" in str(window.controller.errors[0])  # said, not hidden


@pytest.mark.parametrize(("fill", "needle"), [
    (_fill("Theatre 2", rate_step="0"), "Breaths per minute step: 0 — must be above 0"),
    (_fill("Theatre 2", rate_min="70"), "Breaths per minute min: 70/min — must be below the max (60/min)"),
    (_fill("Theatre 2", rate_min="-2"), "Breaths per minute min: -2/min — must be above 0"),
    (_fill(""), "Machine name"),
])
def test_bad_entries_are_said_in_the_editor_and_nothing_is_saved(window_and_dialog, fill, needle):
    _window, _manager, dlg, _shown = window_and_dialog
    tab = dlg.machines_tab
    assert not tab.new(fill)
    editor = tab.editor
    assert needle in editor.message.text() and editor.result_machine is None
    assert editor.message.textFormat() == Qt.TextFormat.PlainText
    # nothing typed is cleared by the refusal
    assert editor.compressible_edit.text() == "1.2" and editor.gas_combo.currentData() == "air"
    assert editor.note_edit.text() == "<b>left</b> theatre (invented)" and editor.cells["rate"]["min"].text() != ""
    assert partslib.load_clinic_library().machines == ()


def test_a_machine_from_another_class_drops_the_old_ranges_in_the_editor(window_and_dialog):
    _window, _manager, dlg, _shown = window_and_dialog
    tab = dlg.machines_tab
    assert tab.new(_fill("Theatre 2"))

    def to_piston(editor) -> None:
        editor.class_combo.setCurrentIndex(editor.class_combo.findData("piston_small_animal"))
        assert not editor.gas_combo.isEnabled()  # an electric piston uses no driving gas
        assert all(e.text() == "" for row in editor.cells.values() for e in row.values())

    tab.table.selectRow(0)
    assert tab.edit(to_piston)
    m = partslib.load_clinic_library().machine("Theatre 2")
    assert m.machine_class == "piston_small_animal" and m.controls == () and m.driving_gas is None
