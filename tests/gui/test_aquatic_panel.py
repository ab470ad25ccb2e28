"""The fish-irrigation panel: builds offscreen, replans on an edit, marks a bad field, installs in the window."""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication, QLabel

from ventset.model import STANDING_NOTICE


def _settle():
    for _ in range(3):
        QApplication.processEvents()


@pytest.fixture
def panel(qtbot):
    from ventset.gui.aquatic_panel import AquaticPanel

    p = AquaticPanel()
    qtbot.addWidget(p)
    p.resize(900, 1200)
    p.show()
    qtbot.waitExposed(p)
    return p


def test_panel_builds_with_a_koi_plan(panel):
    assert panel.plan is not None and panel.plan.group.key == "carp_koi"
    assert panel.headline.plainText().startswith("Flow 1.56 L/min")  # 2 kg koi, 20 °C (see test_aquatic_*)
    assert panel.notice.plainText() == STANDING_NOTICE
    assert any("IRRIGATE_MOUTH_TO_GILLS" in r.plainText() for r in panel.caution_rows if r.isVisible())
    vb = panel.flow_plot.getPlotItem().vb
    assert not any(vb.autoRangeEnabled())
    assert vb.viewRange()[0][1] == pytest.approx(10.0)


def test_edit_replans(panel, qtbot):
    before = panel.plan
    qtbot.keyClicks(panel.edits["mass"], "0")   # "2 kg0" is not a mass …
    _settle()
    assert panel.error is not None and panel.plan is before
    assert "STALE" in panel.headline.plainText()
    assert panel.edits["mass"].styleSheet() != ""
    panel.edits["mass"].clear()
    qtbot.keyClicks(panel.edits["mass"], "4 kg")
    _settle()
    assert panel.error is None and panel.plan is not before and panel.plan.mass_kg == 4.0
    assert panel.edits["mass"].styleSheet() == ""


def test_bad_salinity_marks_field(panel):
    panel.set_field("salinity", "60")
    panel.replan()
    assert panel.error is not None and panel.error.field == "Salinity"
    assert panel.edits["salinity"].styleSheet() != ""
    assert "Salinity" in panel.error_text.plainText()


def test_species_change_shows_ram_caution(panel):
    panel.species.setCurrentIndex(panel.species.findData("shark"))
    panel.set_values({"mass": "10 kg", "water-temperature": "24", "salinity": "35"})
    panel.replan()
    assert panel.plan.group.obligate_ram
    assert any("RAM_VENTILATOR" in r.plainText() for r in panel.caution_rows if r.isVisible())


def test_all_labels_plain_text(panel):
    for label in panel.findChildren(QLabel):
        assert label.textFormat() == Qt.TextFormat.PlainText


def test_installs_in_the_window_and_keeps_entries(make_window):
    from ventset.gui import aquatic_panel, ondemand
    from ventset.gui import window as window_mod

    # The window adds it as a tab built when first shown (tests/gui/test_ondemand.py); installed directly here.
    assert "ventset.gui.ondemand" in window_mod.EXTENSIONS and ondemand.AQUATIC_TITLE == "Fish irrigation"
    w = make_window()
    p = aquatic_panel.install(w)
    assert w.tabs.indexOf(p) >= 0 and w.tabs.tabText(w.tabs.indexOf(p)) == "Fish irrigation"
    p.set_field("mass", "3 kg")
    p.replan()
    assert w.settings.value("aquatic/mass") == "3 kg"
    again = aquatic_panel.install(w)
    assert again.values()["mass"] == "3 kg"
