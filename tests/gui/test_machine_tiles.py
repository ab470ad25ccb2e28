"""The ventilator chooser and the dialled settings beside the ideal ones (the text comes from ventset.present.dials;
the numbers are the plan's, checked here only to be the ones shown)."""

from __future__ import annotations

from tests.gui.conftest import settle
from ventset.gui import formstate as fs
from ventset.gui import machine_choice
from ventset.model import Circuit, Patient, Request


def choose(window, key: str) -> None:
    combo = window.form.machine_combo
    machine_choice.ensure(combo)  # what opening it does: the chooser reads its list when first used
    i = combo.findData(key)
    assert i >= 0, key
    combo.setCurrentIndex(i)
    combo.activated.emit(i)
    settle(window)


def test_no_ventilator_shows_no_machine_tiles(window):
    assert window.controller.plan.machine is None
    assert not window.settings_panel.machine.isVisible()


def test_a_flow_time_machine_shows_flow_and_time_in_its_order(window):
    choose(window, "flow_time_small_animal")
    p = window.controller.plan
    assert p.machine is not None and p.request.circuit.machine == "flow_time_small_animal"
    strip = window.settings_panel.machine
    assert strip.isVisible()
    names = [strip.tiles[f"machine_control_{i}"].name.text() for i in range(len(p.machine.settings))]
    assert names == [s.control.label for s in p.machine.settings]
    assert names[:2] == ["Inspiratory flow", "Inspiratory time"]
    first = p.machine.settings[0]
    assert strip.tiles["machine_control_0"].value.text() == first.control.text(first.value)
    assert "ideal" in strip.tiles["machine_control_0"].detail.text()
    assert not strip.tiles[f"machine_control_{len(p.machine.settings)}"].isVisible()
    assert strip.tiles["machine_paco2"].name.text() == "PaCO2 as dialled"
    assert strip.tiles["machine_paco2"].value.text() == f"{p.machine.expected_paco2_mmhg:.3g}"
    # The ideal tiles are still there beside them.
    assert window.settings_panel.tiles["set_vt"].name.text() == "Set tidal volume"
    choose(window, "")
    assert window.controller.plan.machine is None and not strip.isVisible()


def test_a_bellows_machine_round_trips_through_the_form_state(make_window):
    w = make_window(Request(Patient("dog", 20.0), Circuit(machine="bellows_ascending")))
    settle(w)
    p = w.controller.plan
    assert w.form.machine_combo.currentData() == "bellows_ascending"
    assert w.settings_panel.machine.tiles["machine_control_0"].name.text() == "Bellows volume"
    st = fs.state_from_request(p.request, w.form.units(), w.library)
    req, errors = fs.request_from_state(st, w.library)
    assert not errors and req == p.request


def test_the_chooser_reads_its_list_on_first_use(qtbot, window):
    """At start the chooser holds only "no ventilator" (the library is read from disk later, off the first
    frame); the first click on it lists every class before its list opens."""
    from PySide6.QtCore import QEvent, QPointF, Qt
    from PySide6.QtGui import QMouseEvent
    from PySide6.QtWidgets import QApplication

    from ventset.machines.data import load_machines

    combo = window.form.machine_combo
    assert combo.property("filled") is False and combo.count() == 1 and combo.currentData() == ""
    press = QMouseEvent(QEvent.Type.MouseButtonPress, QPointF(2, 2), QPointF(2, 2), Qt.MouseButton.LeftButton,
                        Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier)
    QApplication.sendEvent(combo, press)
    combo.hidePopup()
    keys = {combo.itemData(i) for i in range(combo.count())}
    assert set(load_machines().classes) <= keys and combo.currentData() == ""
