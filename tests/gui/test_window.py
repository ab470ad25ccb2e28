"""The window as a clinician uses it: typing, bad input, units, apparatus, cautions, undo, screenshots."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QImage, QKeySequence
from PySide6.QtWidgets import QApplication

from tests.gui.conftest import settle
from ventset.gui import formstate as fs
from ventset.model import ApparatusPart, Circuit, Patient, Request
from ventset.physiology import gas
from ventset.units import fmt


def type_into(qtbot, window, key: str, text: str) -> None:
    """Replace a field's text by typing, as a user would (select all, then keystrokes)."""
    edit = window.form.rows[key].edit
    edit.setFocus()
    edit.selectAll()
    if text:
        qtbot.keyClicks(edit, text)
    else:
        qtbot.keyClick(edit, Qt.Key.Key_Delete)
    edit.editingFinished.emit()
    settle(window)


def snapshot(window) -> dict:
    return {
        "tiles": {k: t.value.text() for k, t in window.settings_panel.tiles.items()},
        "breath": window.breath_plot.curve_data(),
        "map_image": window.map_plot.image.image.copy(),
        "map_lines": [c.getData()[1].copy() for c in window.map_plot.iso if c.isVisible()],
        "waves": [a.copy() for a in window.wave_plot.curve_data()],
        "sens": window.sens_plot.curve_data().copy(),
    }


def test_typing_a_mass_updates_settings_and_every_plot(qtbot, window):
    before_plan = window.controller.plan
    before = snapshot(window)
    type_into(qtbot, window, "mass", "6.5")
    p = window.controller.plan
    assert p is not before_plan and p.resolved.mass_kg == pytest.approx(6.5)
    after = snapshot(window)
    assert after["tiles"]["set_vt"] != before["tiles"]["set_vt"]
    assert after["breath"] != before["breath"]
    assert not np.array_equal(after["map_image"], before["map_image"]) or any(
        not np.array_equal(a, b, equal_nan=True) for a, b in zip(after["map_lines"], before["map_lines"],
                                                                  strict=False))
    assert any(not np.array_equal(a, b) for a, b in zip(after["waves"], before["waves"], strict=True))
    assert not np.array_equal(after["sens"], before["sens"], equal_nan=True)
    # The big tile shows the plan's number with its unit beside it.
    tile = window.settings_panel.tiles["set_vt"]
    assert tile.value.text() == fmt(p.ventilation.set_tidal_volume_ml)
    assert tile.unit.text() == "mL"


def test_invalid_value_is_marked_in_place_and_the_last_plan_stays_flagged_stale(qtbot, window):
    good = window.controller.plan
    shown = window.settings_panel.tiles["rate"].value.text()
    type_into(qtbot, window, "mass", "-3")
    row = window.form.rows["mass"]
    assert row.edit.text() == "-3"                       # nothing typed is lost
    assert row.error.isVisible() and "must be" in row.error.text()
    assert window.controller.plan is good                # the last valid plan stays
    assert window.controller.stale
    assert "STALE" in window.settings_panel.stale_tag.text()
    assert window.status.badge.text().endswith("NOT UPDATED") and "Body mass" in window.status.problem.text()
    assert window.settings_panel.tiles["rate"].value.text() == shown
    assert all("stale" in c.title.text() for c in window.plot_cards)
    type_into(qtbot, window, "mass", "5")
    assert not window.controller.stale and not row.error.isVisible()
    assert window.controller.plan.resolved.mass_kg == 5.0


def test_a_plan_level_error_marks_its_field(qtbot, window):
    type_into(qtbot, window, "lean-mass", "9")  # above the 4.2 kg body mass
    assert window.controller.stale
    assert window.form.rows["lean-mass"].error.isVisible()
    assert "must not exceed" in window.form.rows["lean-mass"].error.text()


def test_switching_mass_units_changes_no_value(qtbot, window):
    type_into(qtbot, window, "mass", "4.37")
    req = window.controller.request
    row = window.form.rows["mass"]
    for unit in ("lb", "g", "kg", "lb"):
        row.unit.setCurrentIndex(row.unit.findData(unit))
        row.unit.activated.emit(row.unit.currentIndex())
        settle(window)
        assert window.controller.request.patient.mass_kg == req.patient.mass_kg
    # 4.37 kg / 0.45359237 kg per lb (international avoirdupois pound, 1959) = 9.634 lb.
    assert row.edit.text() == "9.634"
    assert window.controller.plan.resolved.mass_kg == 4.37


def test_switching_gas_units_changes_no_value(qtbot, window):
    type_into(qtbot, window, "target-paco2", "45")
    before = window.controller.plan
    window.gas_actions["kPa"].trigger()
    settle(window)
    after = window.controller.plan
    assert after.request.targets.paco2_mmhg == 45.0
    assert after.ventilation.rate_per_min == before.ventilation.rate_per_min
    # 45 mmHg × 0.133322 kPa/mmHg = 6.0 kPa (conventional mmHg).
    assert window.form.rows["target-paco2"].edit.text() == "6"  # 5.9995 to 4 significant figures
    assert window.form.rows["target-paco2"].unit.currentData() == "kPa"
    assert "kPa" in window.status.expect.text()
    window.tabs.setCurrentWidget(window.derived)  # a hidden tab draws when it is shown
    assert "kPa" in window.derived.values["paco2"][2].text()
    shown = [msg for _sev, _code, msg in window.cautions.shown()]
    assert any("kPa" in m for m in shown) and not any("mmHg" in m for m in shown)  # cautions follow the unit
    window.gas_actions["mmHg"].trigger()
    settle(window)
    assert window.form.rows["target-paco2"].edit.text() == "45"
    assert window.controller.request.targets.paco2_mmhg == 45.0


def test_adding_an_apparatus_part_raises_the_needed_minute_volume(qtbot, make_window):
    w = make_window(Request(Patient("dog", 10.0), Circuit(tube_id_mm=7.0, tube_length_cm=5.0)))
    before = w.controller.plan
    editor = w.form.parts_editor
    editor.catalogue.setCurrentIndex(editor.catalogue.findData("hme_paediatric"))
    qtbot.mouseClick(editor.add_button, Qt.MouseButton.LeftButton)
    settle(w)
    after = w.controller.plan
    assert after.dead_space.apparatus_ml == pytest.approx(20.0)
    assert after.ventilation.minute_ml_min > before.ventilation.minute_ml_min
    # Same alveolar ventilation must be delivered: VE = VA/(1 − f) + f_rate·VD/(1 − f) (alveolar ventilation eq.)
    assert after.ventilation.alveolar_ml_min == pytest.approx(before.ventilation.alveolar_ml_min)
    # A measured part counts its measured volume.
    editor.own_name.setText("Sampling T, measured")
    editor.own_volume.setText("4.5")
    qtbot.mouseClick(editor.own_add, Qt.MouseButton.LeftButton)
    settle(w)
    assert w.controller.plan.dead_space.apparatus_ml == pytest.approx(24.5)
    assert w.controller.plan.dead_space.parts[-1] == ApparatusPart("Sampling T, measured", 4.5, "entered by the user")


def test_cautions_show_a_danger_when_tidal_volume_is_below_dead_space(qtbot, window):
    editor = window.form.parts_editor
    editor.own_name.setText("Large-animal filter fitted by mistake")
    editor.own_volume.setText("90")
    qtbot.mouseClick(editor.own_add, Qt.MouseButton.LeftButton)
    settle(window)
    p = window.controller.plan
    assert p.ventilation.tidal_volume_ml <= p.dead_space.total_ml
    shown = window.cautions.shown()
    codes = [code for _, code, _ in shown]
    assert "VT_NOT_ABOVE_DEAD_SPACE" in codes
    sev, _, msg = shown[codes.index("VT_NOT_ABOVE_DEAD_SPACE")]
    assert sev == "danger" and "dead space" in msg and "mL" in msg
    order = {"danger": 0, "caution": 1, "info": 2}
    assert [order[s] for s, _, _ in shown] == sorted(order[s] for s, _, _ in shown)
    row = window.cautions.rows[codes.index("VT_NOT_ABOVE_DEAD_SPACE")]
    assert row.word.text() == "DANGER" and not row.icon.pixmap().isNull()  # word and shape, not colour alone
    assert "NO ALVEOLAR VENTILATION" in window.status.expect.text() or "NOT REACHED" in window.status.expect.text()


def test_undo_restores_a_value_and_redo_reapplies_it(qtbot, window):
    type_into(qtbot, window, "mass", "7.5")
    type_into(qtbot, window, "peep", "6")
    assert window.controller.plan.pressures.peep_cmh2o == 6.0
    window.form.rows["mass"].edit.setFocus()
    qtbot.keySequence(window, QKeySequence.StandardKey.Undo)  # the platform's undo key, even inside a field
    settle(window)
    assert window.form.rows["peep"].edit.text() == ""
    assert window.controller.plan.pressures.peep_cmh2o == window.library.species["cat"].peep_cmh2o.value
    window.act_undo.trigger()
    settle(window)
    assert window.form.rows["mass"].edit.text() == "4.2"
    assert window.controller.plan.resolved.mass_kg == 4.2
    qtbot.keySequence(window, QKeySequence.StandardKey.Redo)
    settle(window)
    assert window.form.rows["mass"].edit.text() == "7.5"
    assert window.controller.plan.resolved.mass_kg == 7.5
    assert window.act_undo.shortcut() == QKeySequence(QKeySequence.StandardKey.Undo)


def test_typing_a_run_of_keys_is_one_undo_step(qtbot, window):
    type_into(qtbot, window, "mass", "12.25")
    assert window.undo.count() == 1
    window.undo.undo()
    settle(window)
    assert window.form.rows["mass"].edit.text() == "4.2"


def test_unit_choice_is_remembered_between_runs(qtbot, make_window):
    w = make_window()
    row = w.form.rows["mass"]
    row.unit.setCurrentIndex(row.unit.findData("lb"))
    row.unit.activated.emit(row.unit.currentIndex())
    w.gas_actions["kPa"].trigger()
    settle(w)
    w.close()
    w2 = make_window()
    assert w2.form.rows["mass"].unit.currentData() == "lb"
    assert w2.form.gas_unit() == "kPa"
    assert w2.controller.plan.resolved.mass_kg == pytest.approx(4.2)
    assert w2.form.rows["mass"].edit.text() == "9.259"  # 4.2 kg = 9.259 lb


def test_species_search_by_alias(qtbot, window):
    picker = window.form.species
    assert picker.key_for("budgie") == "psittacine"
    assert picker.key_for("Pony") == "horse"
    picker.setFocus()
    picker.lineEdit().selectAll()
    qtbot.keyClicks(picker.lineEdit(), "guinea pig")
    picker.lineEdit().editingFinished.emit()
    type_into(qtbot, window, "mass", "0.9")
    assert window.controller.plan.resolved.species == "guinea_pig"


def test_unknown_species_is_marked_and_nothing_is_lost(qtbot, window):
    window.form._push({"species": "unicorn"}, "Change species")
    settle(window)
    assert window.controller.stale
    assert window.form.species_error.isVisible() and "not in the library" in window.form.species_error.text()
    assert window.form.species.currentText() == "unicorn"


def test_custom_species_keeps_its_name_and_uses_the_base_species(qtbot, window):
    window.form.custom_edit.setText("Fennec fox")
    window.form.custom_edit.textEdited.emit("Fennec fox")
    type_into(qtbot, window, "body-temperature", "38.9")
    p = window.controller.plan
    assert p.resolved.species == "cat"
    assert p.resolved.body_temp_c == 38.9
    assert "Fennec fox" in window.status.patient.text()
    assert window.form.more_patient.isChecked()  # the override fields open


def test_either_or_targets(qtbot, window):
    window.form.rows["target-etco2"].label.click()
    type_into(qtbot, window, "target-etco2", "38")
    p = window.controller.plan
    assert p.request.targets.paco2_mmhg is None and p.request.targets.etco2_mmhg == 38.0
    assert p.ventilation.target_paco2_mmhg == pytest.approx(38.0 + p.resolved.gradient_mmhg)
    assert not window.form.rows["target-paco2"].edit.isEnabled()


def test_external_set_request_is_one_batch_and_shows_in_the_form(qtbot, window):
    seen = []
    window.controller.plan_ready.connect(seen.append)
    req = Request(Patient("horse", 450.0, name="Test mare"), Circuit(tube_id_mm=26.0, tube_length_cm=10.0))
    window.controller.set_request(req)
    window.controller.set_request(req)  # a burst coalesces
    settle(window)
    assert len(seen) == 1 and seen[0].resolved.species == "horse"
    assert window.form.rows["mass"].edit.text() == "450"
    assert window.form.rows["tube-id"].edit.text() == "26"
    assert window.form.species.currentText() == "Horse (adult)"
    window.undo.undo()  # loading is one undo step
    settle(window)
    assert window.controller.plan.resolved.species == "cat"


def test_panels_and_menus_can_be_added(qtbot, window):
    from PySide6.QtWidgets import QLabel

    tab = window.add_panel("Titration", QLabel("steps"))
    assert window.tabs.indexOf(tab) >= 0
    dock = window.add_panel("Case notes", QLabel("notes"), dock=True)
    assert dock.widget().text() == "notes"
    case = window.menu("Case")
    assert window.menu("File") is case and window.menu("&Case") is case
    assert [a.text() for a in window.menuBar().actions()][0] == "&Case"


def test_copy_plan_as_text_has_the_notice(qtbot, window):
    text = window.copy_plan()
    assert "NOTICE:" in text and QApplication.clipboard().text() == text


def test_expected_paco2_shown_is_the_alveolar_ventilation_equation(qtbot, window):
    p = window.controller.plan
    # PaCO2 = VCO2·K(T)/VA with K(37 °C) = 863 (West, Respiratory Physiology).
    va = p.ventilation.delivered_alveolar_ml_min
    expected = p.metabolism.vco2_ml_min * gas.alveolar_constant_mmhg(p.resolved.body_temp_c) / va
    assert f"{expected:.3g}" in window.status.expect.text()


def test_themes_are_readable(qtbot, window, tmp_path):
    for key in ("night", "contrast", "day"):
        window.set_theme(key)
        settle(window)
        pal = QApplication.palette()
        text, base = pal.color(pal.ColorRole.WindowText), pal.color(pal.ColorRole.Window)
        assert abs(text.lightness() - base.lightness()) > 120, key  # readable contrast
        img = window.grab().toImage()
        assert _distinct_colours(img) > 20


def test_font_guard():
    # A family name is always returned; the loaded font must also hold the characters the tiles show.
    from PySide6.QtGui import QRawFont

    raw = QRawFont.fromFont(QApplication.font())
    assert raw.isValid() and raw.supportsCharacter(ord("8")) and raw.supportsCharacter(ord("°"))


def test_text_follows_the_application_font(qtbot, window):
    base = QApplication.font().pointSizeF()
    font = window.settings_panel.tiles["set_vt"].value.value_font()
    assert font.pointSizeF() > 1.5 * base  # large, and relative to the system font, not a pixel size
    assert font.pixelSize() == -1


def test_every_field_has_its_definition_as_a_tooltip(qtbot, window):
    from ventset.fields import FIELDS

    for key, row in window.form.rows.items():
        assert FIELDS[key].help[:30] in row.edit.toolTip()
    assert "Source" in window.settings_panel.tiles["set_vt"].toolTip()


def test_keyboard_reaches_every_field_in_order(qtbot, window):
    order = []
    w = window.form.name_edit
    for _ in range(200):
        order.append(w)
        w = w.nextInFocusChain()
        if w is window.form.name_edit:
            break
    edits = [r.edit for r in window.form.rows.values() if r.edit.isVisibleTo(window)]
    positions = [order.index(e) for e in edits if e in order]
    assert len(positions) == len(edits)
    mass, peep = order.index(window.form.rows["mass"].edit), order.index(window.form.rows["peep"].edit)
    assert mass < peep


def test_screenshot_of_the_whole_window_is_not_blank(qtbot, window, tmp_path):
    settle(window)
    path = tmp_path / "window.png"
    assert window.grab().save(str(path))
    img = QImage(str(path))
    assert (img.width(), img.height()) == (1400, 900)
    assert _distinct_colours(img) > 50


def _distinct_colours(img: QImage) -> int:
    img = img.convertToFormat(QImage.Format.Format_RGB32)
    h = img.height()
    ptr = img.constBits()
    arr = np.frombuffer(ptr, dtype=np.uint32, count=img.bytesPerLine() // 4 * h)
    return len(np.unique(arr[:: 7]))


def test_map_click_reads_an_alternative(qtbot, window):
    p = window.controller.plan
    s = window.map_plot.probe_point(p.ventilation.tidal_volume_ml * 0.8, p.ventilation.rate_per_min)
    assert s.paco2_mmhg > p.ventilation.expected_paco2_mmhg  # smaller breath, same rate: more CO2
    assert "PaCO2" in window.map_plot.readout.text() and "plateau" in window.map_plot.readout.text()


def test_enlarge_shows_one_plot(qtbot, window):
    window.map_plot.zoom.click()
    assert window.map_plot.isVisible() and not window.wave_plot.isVisible()
    window.map_plot.zoom.click()
    assert all(c.isVisible() for c in window.plot_cards)


def test_state_round_trip_keeps_every_value(qtbot, window):
    p = window.controller.plan
    st = fs.state_from_request(p.request, window.form.units(), window.library)
    req, errors = fs.request_from_state(st, window.library)
    assert not errors and req == p.request


def test_pressure_mode_shows_the_inspiratory_pressure(qtbot, make_window):
    w = make_window(Request(Patient("psittacine", 0.35, name="Kiwi"), Circuit(tube_id_mm=2.5, tube_length_cm=2.0)))
    p = w.controller.plan
    assert p.resolved.mode == "pressure"
    tiles = w.settings_panel.tiles
    assert tiles["flow"].name.text() == "Inspiratory pressure"
    assert tiles["flow"].value.text() == f"{p.pressures.inspiratory_pressure_cmh2o:.3g}"
    assert "expected" in tiles["set_vt"].name.text() and "pressure" in tiles["set_vt"].detail.text()
    # Pressure-controlled breath: VT = C·ΔP·(1 − e^(−Ti/τ)) (single-compartment model, Marini & Crooke 1993).
    import math
    pr = p.pressures
    vt = pr.compliance_ml_cmh2o * pr.inspiratory_pressure_cmh2o * (1 - math.exp(-p.ventilation.ti_s /
                                                                                 pr.time_constant_s))
    assert vt == pytest.approx(p.ventilation.tidal_volume_ml, rel=1e-9)
    assert "pressure-controlled" in w.status.patient.text()


@pytest.mark.parametrize(("typed", "key"), [
    ("elephant", "asian_elephant"), ("orangutan", "orangutan"), ("sea lion", "sea_lion"), ("dolphin", "dolphin"),
    ("emu", "emu"), ("penguin", "penguin"), ("flamingo", "flamingo"), ("python", "python"),
    ("monitor", "monitor_lizard"), ("sea turtle", "sea_turtle"), ("hamster", "hamster"), ("koala", "koala"),
    ("bat", "bat"), ("chicken", "chicken"), ("calf", "cattle"), ("piglet", "pig"), ("puppy", "dog"),
    ("kitten", "cat"), ("echidna", "echidna"),
])
def test_species_chooser_finds_every_alias(window, typed, key):
    assert window.form.species.key_for(typed) == key


def test_species_chooser_plans_a_species_not_listed_by_group(qtbot, window):
    picker = window.form.species
    i = picker.findData("taxon:marsupial")
    assert i >= 0 and "Not listed" in picker.itemText(i)
    picker.setCurrentIndex(i)
    picker.activated.emit(i)
    type_into(qtbot, window, "mass", "3")
    p = window.controller.plan
    assert p.resolved.species == "taxon:marsupial" and p.request.patient.taxon == "marsupial"
    assert "TAXON_ONLY" in {c.code for c in p.cautions}


def test_a_theme_chosen_while_a_mouse_is_shown_keeps_every_axis_in_its_own_units(qtbot, window):
    """A mouse's map spans 0-0.5 mL; after a change of theme (which styles every axis again) each axis still
    labels the values of its view box's own range (pyqtgraph 0.14 kept a ×1000 prefix: 100-400 under 'mL'),
    and a cat shown afterwards reads 0-80 mL again."""
    from tests.gui.test_plotarea import _tick_texts

    window.form.change_species("mouse")
    type_into(qtbot, window, "mass", "0.03")
    window.controller.flush()
    for theme in ("night", "day"):
        window.set_theme(theme)
        for card in window.plot_cards:
            vb = card.plot.vb if hasattr(card, "plot") else None
            if vb is None:
                continue
            (x0, x1), _ = vb.viewRange()
            ax = card.plot.getAxis("bottom")
            texts = [t for t in _tick_texts(ax) if t]
            assert texts, card.objectName()
            assert all(x0 - 1e-9 <= float(t) <= x1 + 1e-9 for t in texts), (card.objectName(), texts, (x0, x1))
    window.form.change_species("cat")
    type_into(qtbot, window, "mass", "4.2")
    window.controller.flush()
    texts = _tick_texts(window.map_plot.plot.getAxis("bottom"))
    assert max(float(t) for t in texts if t) <= 80
