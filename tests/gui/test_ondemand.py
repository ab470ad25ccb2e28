"""The record and fish-irrigation tabs: in the tab bar from the start, built when first shown (before they
paint), the record standing in for its panel until then."""

from __future__ import annotations

from PySide6.QtWidgets import QLabel

from tests.gui.conftest import settle
from ventset.gui import ondemand
from ventset.gui.window import EXTENSIONS
from ventset.units import fmt


def _tabs(window) -> dict[str, object]:
    return {window.tabs.tabText(i): window.tabs.widget(i) for i in range(window.tabs.count())}


def test_the_tabs_are_there_from_the_start_and_built_when_first_shown(window):
    assert "ventset.gui.ondemand" in EXTENSIONS
    ondemand.install(window)
    tabs = _tabs(window)
    titles = list(tabs)
    assert titles[-2:] == [ondemand.RECORD_TITLE, ondemand.AQUATIC_TITLE]  # after the window's own tabs
    record, aquatic = tabs[ondemand.RECORD_TITLE], tabs[ondemand.AQUATIC_TITLE]
    assert not record.built and not aquatic.built
    window.form.set_text("mass", "6")
    settle(window)
    plan = window.controller.plan
    window.tabs.setCurrentWidget(record)
    # Built and shown by the time the tab is current, before any event (and so any paint) is processed, and
    # already showing the window's current plan: its settings offered as the settings in use.
    assert record.built and record.panel().isVisible()
    # the record asks for the volume set on the ventilator (issue 11)
    assert record.panel().edits["tidal-volume"].text() == fmt(plan.ventilation.set_tidal_volume_ml, 4)
    assert not aquatic.built
    window.tabs.setCurrentWidget(aquatic)
    assert aquatic.built and aquatic.panel().isVisible() and aquatic.panel().plan is not None


def test_the_record_stands_in_for_its_panel_until_it_is_needed(window):
    from ventset import titrate

    record, _ = ondemand.install(window)
    changes = []
    record.record_changed.connect(changes.append)
    assert record.entries == () and not record.built  # an empty record, as a new panel has
    p = window.controller.plan
    m = titrate.Measurement(10.0, p.ventilation.tidal_volume_ml, p.ventilation.rate_per_min, etco2_mmhg=51.0)
    entries = titrate.record_measurement((), window.controller.request, m)
    record.set_entries(entries)  # a case opened with a record: the panel is built to hold it
    assert record.built and record.entries == entries == record.panel().entries
    assert changes and changes[-1] == entries  # the panel's signal, passed on


def test_a_panel_that_cannot_be_built_says_so_in_its_tab(window, capsys):
    def broken(parent):
        raise RuntimeError("no such panel")

    tab = ondemand.OnDemandTab("Example", broken, window)
    window.add_panel("Example", tab)
    window.tabs.setCurrentWidget(tab)
    assert isinstance(tab.panel(), QLabel) and "could not be built" in tab.panel().text()
    assert "no such panel" in capsys.readouterr().err
