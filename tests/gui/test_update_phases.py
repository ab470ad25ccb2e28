"""How an edit reaches the screen: the numbers first, painted in the keystroke's pass; the plots after; a hidden
tab when it is shown, before it paints."""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QEvent, QObject, Qt
from PySide6.QtWidgets import QApplication

from tests.gui.conftest import enter, settle
from ventset.units import fmt


class _Paints(QObject):
    """Records, in order, each paint of the watched widgets."""

    def __init__(self, log: list[str], name: str) -> None:
        super().__init__()
        self.log, self.name = log, name

    def eventFilter(self, obj, e) -> bool:  # noqa: N802 - Qt override
        if e.type() == QEvent.Type.Paint:
            self.log.append(self.name)
        return False


def _type_digit(window, key: str = "mass") -> None:
    edit = window.form.rows[key].edit
    edit.setFocus()
    edit.end(False)
    from PySide6.QtTest import QTest

    QTest.keyClick(edit, Qt.Key.Key_5)


def test_the_numbers_are_painted_before_the_plots_are_drawn(qtbot, window):
    settle(window)
    log: list[str] = []
    tile = window.settings_panel.tiles["set_vt"].value
    watcher = _Paints(log, "tile painted")
    tile.installEventFilter(watcher)
    waves_before = [a.copy() for a in window.wave_plot.curve_data()]
    seen: dict = {}

    def numbers(plan) -> None:  # runs after the window's own slot for the same signal
        log.append("numbers set")
        seen["tile"] = tile.text()
        seen["waves"] = [a.copy() for a in window.wave_plot.curve_data()]

    window.controller.plan_ready.connect(numbers)
    window.controller.plan_views.connect(lambda plan: log.append("views drawn"))
    _type_digit(window)
    qtbot.waitUntil(lambda: "views drawn" in log, timeout=3000)
    plan = window.controller.plan
    # The first phase shows the new plan's numbers while the plots still hold the last plan's curves.
    assert seen["tile"] == fmt(plan.ventilation.set_tidal_volume_ml)
    assert all(np.array_equal(a, b) for a, b in zip(seen["waves"], waves_before, strict=True))
    # The tile is painted with them before the second phase starts drawing.
    assert log.index("numbers set") < log.index("tile painted") < log.index("views drawn")
    # Then the plots show the same plan.
    assert any(not np.array_equal(a, b) for a, b in zip(window.wave_plot.curve_data(), waves_before,
                                                        strict=True))
    tile.removeEventFilter(watcher)


def test_flush_runs_both_phases(qtbot, window):
    waves_before = [a.copy() for a in window.wave_plot.curve_data()]
    window.form.set_text("mass", "7.5")
    window.controller.flush()  # no event loop: the views are drawn too
    assert window.controller.plan.resolved.mass_kg == 7.5
    assert any(not np.array_equal(a, b) for a, b in zip(window.wave_plot.curve_data(), waves_before,
                                                        strict=True))


def test_a_hidden_tab_shows_the_current_plan_as_soon_as_it_is_shown(qtbot, window):
    settle(window)
    window.form.set_text("mass", "7.5")
    settle(window)
    plan = window.controller.plan
    assert plan.resolved.mass_kg == 7.5
    expected = fmt(plan.ventilation.tidal_volume_ml)
    window.tabs.setCurrentWidget(window.derived)
    # Drawn when the tab became current: before any event (and so any paint) has been processed.
    assert window.derived.values["patient_vt"][1].text() == expected
    window.tabs.setCurrentWidget(window.assumptions)
    names = {window.assumptions.item(r, 0).text() for r in range(window.assumptions.rowCount())}
    assert names == {a.name for a in plan.assumptions}


def test_the_tab_shown_follows_each_edit_and_the_plots_catch_up_when_shown_again(qtbot, window):
    window.tabs.setCurrentWidget(window.derived)
    settle(window)
    waves_before = [a.copy() for a in window.wave_plot.curve_data()]
    window.form.set_text("mass", "9")
    settle(window)
    plan = window.controller.plan
    assert window.derived.values["patient_vt"][1].text() == fmt(plan.ventilation.tidal_volume_ml)
    assert all(np.array_equal(a, b) for a, b in zip(window.wave_plot.curve_data(), waves_before, strict=True))
    window.tabs.setCurrentIndex(0)  # the plots tab
    assert any(not np.array_equal(a, b) for a, b in zip(window.wave_plot.curve_data(), waves_before,
                                                        strict=True))
    QApplication.processEvents()


def test_a_plot_whose_data_did_not_change_is_not_drawn_again(qtbot, window):
    """A new patient name makes a new plan with the same numbers: the breath, waveform and dead-space plots
    keep what they drew (the same data objects) and do not paint."""
    settle(window)
    for _ in range(6):  # the first show's paints are done
        QApplication.processEvents()
    before = (window.breath_plot.data, window.sens_plot.data, window.wave_plot.data)
    log: list[str] = []
    watchers = [_Paints(log, name) for name in ("breath", "sens", "waves")]
    for w, card in zip(watchers, (window.breath_plot, window.sens_plot, window.wave_plot), strict=True):
        card.widget.viewport().installEventFilter(w)
    plan_before = window.controller.plan
    qtbot.keyClicks(window.form.name_edit, "x")
    settle(window)
    for _ in range(6):
        QApplication.processEvents()
    assert window.controller.plan is not plan_before and window.controller.plan.request.patient.name.endswith("x")
    assert (window.breath_plot.data, window.sens_plot.data, window.wave_plot.data) == before
    assert all(a is b for a, b in zip((window.breath_plot.data, window.sens_plot.data, window.wave_plot.data),
                                      before, strict=True))
    assert log == []
    type_mass = window.form.rows["mass"].edit  # a new mass: all three draw again
    type_mass.setFocus()
    type_mass.selectAll()
    qtbot.keyClicks(type_mass, "6")
    settle(window)
    for _ in range(6):
        QApplication.processEvents()
    assert all(a is not b for a, b in zip((window.breath_plot.data, window.sens_plot.data, window.wave_plot.data),
                                          before, strict=True))
    assert {"breath", "sens", "waves"} <= set(log)


def test_a_new_theme_recolours_the_map_though_its_data_did_not_change(window):
    """The map's zones are the same cells after a theme change, but in the new theme's colours."""
    mp = window.map_plot
    day = mp.image.image.copy()
    window.set_theme("night")
    settle(window)
    assert mp.map is not None and np.array_equal(mp.image.image, mp.lut[mp.map.cell])
    assert not np.array_equal(mp.image.image, day)


def test_a_fields_tooltip_names_the_default_in_use_now(qtbot, window):
    """The tooltip of an empty field names the value the plan used and its source, from the plan's own
    assumption record, and follows the plan (the body temperature of a cat, then of a horse)."""
    def said(plan):
        a = next(a for a in plan.assumptions if a.name.startswith("Body temperature"))
        return f"{fmt(a.value)} {a.unit}"

    row = window.form.rows["body-temperature"]
    cat = window.controller.plan
    assert said(cat) in row.edit.toolTip() and "Default used now" in row.edit.toolTip()
    enter(qtbot, window, "horse", "450")
    horse = window.controller.plan
    assert horse.resolved.species == "horse" and said(horse) != said(cat)
    assert said(horse) in row.edit.toolTip() and said(cat) not in row.edit.toolTip()
