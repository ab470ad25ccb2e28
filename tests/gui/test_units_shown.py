"""One number format everywhere: the window's tiles, status, derived values, assumptions and cautions are the
presentation layer's rows in the reader's units (the text report and CLI use the same rows); typed units move
the unit chooser and related fields follow it."""

from __future__ import annotations

import pytest

from tests.gui.conftest import settle
from ventset.gui import formstate as fs
from ventset.present.quantities import Units
from ventset.present.rows import assumption_rows, derived_sections, expectation_line, patient_line, setting_rows
from ventset.report import plan_to_text

# BIPM SI brochure: 1 mmHg = 133.322387415 Pa, so 1 kPa = 1000 / 133.322387415 mmHg.
MMHG_PER_KPA = 1000 / 133.322387415


def _horse(window):
    window.form.change_species("horse")
    window.form.set_text("mass", "450")
    settle(window)
    return window.controller.plan


def test_tiles_status_and_derived_are_the_presentation_rows(qtbot, window):
    p = _horse(window)
    units = Units("mmHg", "kg")
    for row in setting_rows(p, units):
        tile = window.settings_panel.tiles[row.key]
        assert (tile.name.text(), tile.value.text(), tile.unit.text(), tile.detail.text()) == \
            (row.name, row.value, row.unit, row.detail)
    assert window.status.patient.text() == patient_line(p, units)
    assert window.status.expect.plainText() == expectation_line(p, units).replace("  ", " ")
    window.tabs.setCurrentWidget(window.derived)  # a hidden tab draws the plan when it is shown
    shown = {k: (v.text(), u.text()) for k, (_n, v, u) in window.derived.values.items()}
    for _title, rows in derived_sections(p, units):
        for row in rows:
            if row.key in shown:
                assert shown[row.key][0] == row.value and shown[row.key][1].startswith(row.unit), row.key
    # A 450 kg horse: volumes and flows above 1000 mL are litres (minute ventilation is not '20327 mL/min').
    assert window.settings_panel.tiles["set_vt"].unit.text() == "L"
    assert shown["minute_ventilation"][1] == "L/min" and shown["alveolar_ventilation"][1] == "L/min"
    assert p.ventilation.minute_ml_min > 1000
    assert float(shown["minute_ventilation"][0]) == pytest.approx(p.ventilation.minute_ml_min / 1000, rel=5e-3)


def test_fio2_and_ie_read_the_same_in_the_window_and_the_text_report(qtbot, window):
    p = window.controller.plan
    text = plan_to_text(p)
    fio2 = window.settings_panel.tiles["fio2"].value.text()
    ie = window.settings_panel.tiles["ti"].detail.text().split("I:E ")[1]
    assert f"FiO2                  {fio2} " in text and f"I:E {ie}" in text
    assert window.copy_plan().split("\n", 1)[1] == text.split("\n", 1)[1]


def test_kpa_reaches_the_assumptions_tab_and_every_panel(qtbot, window):
    window.gas_actions["kPa"].trigger()
    settle(window)
    window.tabs.setCurrentWidget(window.assumptions)  # a hidden tab draws the plan when it is shown
    p = window.controller.plan
    table = {window.assumptions.item(r, 0).text(): window.assumptions.item(r, 1).text()
             for r in range(window.assumptions.rowCount())}
    target = next(a for a in p.assumptions if a.key == "target_paco2")
    # 40 mmHg × 133.322387415 Pa/mmHg = 5.33 kPa.
    assert table[target.name] == f"{target.value / MMHG_PER_KPA:.3g} kPa"
    assert not any("mmHg" in v for v in table.values())
    assert [r.value for r in assumption_rows(p, Units("kPa"))] == [window.assumptions.item(r, 1).text()
                                                                    for r in range(window.assumptions.rowCount())]
    assert "mmHg" not in window.status.expect.plainText() and "kPa" in window.status.expect.plainText()
    assert "mmHg" not in window.settings_panel.tiles["fio2"].detail.text()


def test_a_typed_unit_moves_the_chooser_and_lean_mass_follows(qtbot, window):
    form = window.form
    steps = window.undo.count()
    edit = form.rows["mass"].edit
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, "3500 g")
    edit.editingFinished.emit()
    settle(window)
    assert form.rows["mass"].unit.currentData() == "g" and edit.text() == "3500"
    assert form.rows["lean-mass"].unit.currentData() == "g"
    assert window.controller.plan.resolved.mass_kg == pytest.approx(3.5)
    assert window.undo.count() == steps + 1  # typing and the unit it named: one step
    assert window.status.patient.text().split(", ")[1] == "3500 g"
    window.undo.undo()
    settle(window)
    assert form.rows["mass"].unit.currentData() == "kg" and form.rows["lean-mass"].unit.currentData() == "kg"
    assert window.controller.plan.resolved.mass_kg == pytest.approx(4.2)


def test_lean_mass_follows_body_mass_in_lb_and_errors_speak_the_unit_typed(qtbot, window):
    form = window.form
    row = form.rows["mass"]
    row.unit.setCurrentIndex(row.unit.findData("lb"))
    row.unit.activated.emit(row.unit.currentIndex())
    settle(window)
    assert form.rows["lean-mass"].unit.currentData() == "lb"
    form.set_text("lean-mass", "8")
    settle(window)
    # 8 lb × 0.45359237 kg/lb (international pound, 1959) = 3.629 kg.
    assert window.controller.plan.resolved.lean_mass_kg == pytest.approx(3.6287390, rel=1e-6)
    form.set_text("mass", "-3")
    settle(window)
    message = window.form.rows["mass"].error.text()
    assert message.endswith(" lb") and "kg" not in message  # the limits in lb, as typed


def test_typed_kpa_moves_every_gas_field(qtbot, window):
    window.form.set_text("target-paco2", "5.3 kPa")
    settle(window)
    for key in fs.GAS_FIELDS:
        assert window.form.rows[key].unit.currentData() == "kPa", key
    assert window.gas_actions["kPa"].isChecked()
    # 5.3 kPa = 5.3 × 1000 / 133.322387415 mmHg = 39.75 mmHg.
    assert window.controller.request.targets.paco2_mmhg == pytest.approx(5.3 * MMHG_PER_KPA)
