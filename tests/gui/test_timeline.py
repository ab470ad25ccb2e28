"""The anaesthetic record panel: record a measurement, set a proposal, keep what was typed when it is wrong."""

from __future__ import annotations

import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402

from ventset.evaluate import evaluate  # noqa: E402
from ventset.gui.timeline import TimelinePanel, install  # noqa: E402
from ventset.model import Circuit, Patient, Request, Targets  # noqa: E402
from ventset.planner import plan  # noqa: E402

DOG = Request(Patient("dog", 20.0, name="Juniper"), Circuit(tube_id_mm=8.0, tube_length_cm=8.0),
              Targets(paco2_mmhg=40.0))


@pytest.fixture
def panel(qtbot):
    applied = []
    p = TimelinePanel(lambda: DOG, applied.append)
    p.applied = applied
    qtbot.addWidget(p)
    p.resize(600, 1200)
    p.show()
    qtbot.waitExposed(p)
    return p


def fill(panel, **values):
    for key, text in values.items():
        edit = panel.edits[key.replace("_", "-")]
        edit.clear()
        edit.setText(text)


def test_recording_a_measurement_shows_a_proposal(panel, qtbot):
    fill(panel, time="0", tidal_volume="200 mL", rate="10", etco2="50", paco2="55")
    qtbot.mouseClick(panel.record_button, Qt.MouseButton.LeftButton)
    assert len(panel.entries) == 1 and panel.table.rowCount() == 1
    text = panel.proposal_text.text()
    m = panel.entries[0].measurement
    # The 200 mL typed is what is set on the ventilator; the circuit takes Cc·(peak − PEEP) of it (Chatburn 2014).
    s = plan(DOG).subject
    peak = evaluate(s, m.tidal_volume_ml, 10.0).peak_cmh2o
    assert m.set_tidal_volume_ml == 200 and m.tidal_volume_ml < 200
    assert m.tidal_volume_ml + s.compressible_ml_cmh2o * (peak - s.peep_cmh2o) == pytest.approx(200, rel=1e-9)
    # Alveolar ventilation equation: VT kept, rate 10 × 55/40 = 13.75/min (shown to 3 figures).
    assert "Next: set 200 mL (" in text and " at the patient) at 13.8/min" in text
    assert "Part-way: set 200 mL (" in text and "at 12.5/min" in text  # +37.5 % is over the 25 % step
    assert "LARGE_STEP" not in text and "CAUTION" in text
    assert panel.set_full.isEnabled() and panel.set_partial.isEnabled()
    assert panel.edits["paco2"].text() == ""  # the measured values are in the record now
    assert panel.edits["rate"].text() == "10"  # the settings in use stay


def test_accepting_sets_the_settings_in_use_and_keeps_the_record(panel, qtbot):
    fill(panel, time="0", tidal_volume="200", rate="10", paco2="55")
    panel.record()
    qtbot.mouseClick(panel.set_partial, Qt.MouseButton.LeftButton)
    e = panel.entries[0]
    assert e.accepted == "partial_step" and e.settings_set.rate_per_min == pytest.approx(12.5)
    assert e.proposal.rate_per_min == pytest.approx(13.75)  # what was proposed is kept beside what was set
    assert panel.applied[-1].settings == e.settings_set
    assert panel.applied[-1].metabolic_rate_w > 0  # the measured CO2 output, for the window's plan
    assert panel.edits["rate"].text() == "12.5"
    assert "part-way" in panel.table.item(0, 6).text()
    fill(panel, time="12", paco2="45")
    panel.record()
    assert len(panel.entries) == 2 and panel.entries[1].measurement.rate_per_min == pytest.approx(12.5)
    fill(panel)
    panel.own_vt.setText("210")
    panel.own_rate.setText("14")
    qtbot.mouseClick(panel.set_own, Qt.MouseButton.LeftButton)
    own = panel.entries[1].settings_set
    assert panel.entries[1].accepted == "own" and own.set_tidal_volume_ml == 210 and own.tidal_volume_ml < 210
    assert panel.entries[0].accepted == "partial_step"


def test_an_invalid_entry_is_marked_and_nothing_is_lost(panel, qtbot):
    fill(panel, time="0", tidal_volume="200", rate="abc", etco2="5 kg", spo2="101", note="after positioning")
    qtbot.mouseClick(panel.record_button, Qt.MouseButton.LeftButton)
    assert panel.entries == ()
    assert panel.invalid_keys() == {"rate", "etco2", "spo2"}
    for key in ("rate", "etco2", "spo2"):
        assert panel.edits[key].property("invalid") is True
        assert panel.error_labels[key].isVisibleTo(panel) and panel.error_labels[key].text().startswith("⚠")
    assert "not a unit of this kind" in panel.error_labels["etco2"].text()
    assert (panel.edits["rate"].text(), panel.edits["etco2"].text(), panel.edits["spo2"].text(),
            panel.edits["note"].text()) == ("abc", "5 kg", "101", "after positioning")
    assert "Not recorded" in panel.status.text()
    qtbot.keyClicks(panel.edits["etco2"], "x")  # typing in a marked field clears its mark only
    assert panel.invalid_keys() == {"rate", "spo2"}
    fill(panel, rate="12", etco2="5.6 kPa", spo2="97")
    assert panel.record()
    assert panel.entries[0].measurement.etco2_mmhg == pytest.approx(5.6 * 7.500615758)
    assert panel.entries[0].measurement.note == "after positioning"


def test_an_impossible_tidal_volume_is_marked(panel):
    fill(panel, time="0", tidal_volume="20", rate="10", paco2="50")  # below the model's dead space
    assert not panel.record()
    assert panel.invalid_keys() == {"tidal-volume"} and panel.edits["tidal-volume"].text() == "20"


def test_record_needs_a_request(qtbot):
    p = TimelinePanel(lambda: None)
    qtbot.addWidget(p)
    fill(p, time="0", tidal_volume="200", rate="10", paco2="50")
    assert not p.record()
    assert p.entries == () and p.edits["paco2"].text() == "50"


def test_themes_recolour_without_losing_the_record(panel):
    from ventset.gui.theme import THEMES

    fill(panel, time="0", tidal_volume="200", rate="10", paco2="55", etco2="5 kg")
    panel.record()
    for theme in THEMES.values():
        panel.set_theme(theme)
        assert panel.edits["etco2"].text() == "5 kg" and theme.danger in panel.edits["etco2"].styleSheet()


def test_clock_times_count_from_the_first_entry(panel):
    fill(panel, time="23:50", tidal_volume="200", rate="10", paco2="50")
    panel.record()
    fill(panel, time="00:05", paco2="44")
    panel.record()
    assert [e.measurement.time_min for e in panel.entries] == [0.0, 15.0]


def test_in_the_window_the_plan_follows_what_is_set(make_window):
    from tests.gui.conftest import settle

    window = make_window(DOG)
    panel = install(window)
    settle(window)
    assert window.tabs.indexOf(panel) >= 0
    # Offered from the plan before the first record: the volume to set, and what the patient receives of it.
    assert panel.edits["tidal-volume"].text() == f"{window.controller.plan.ventilation.set_tidal_volume_ml:.4g}"
    assert panel.vt_note.text().startswith("= 200 mL at the patient")
    fill(panel, time="0", rate="10", paco2="46")
    assert panel.record()
    panel.accept_latest("proposal")
    settle(window)
    req, plan = window.controller.request, window.controller.plan
    assert req.strategy.rate_per_min == pytest.approx(10 * 46 / 40)
    # Metabolic rate from the measured CO2 output, by hand: VA = 10·(200·0.9 − 43.194) = 1368 mL/min;
    # VCO2 = 1368·46/867.12 = 72.58 mL/min (alveolar ventilation equation); VO2 = VCO2/0.8;
    # W = VO2·(3.941 + 1.106·0.8)·4.184/60 = 30.5 W (Weir 1949).
    vco2 = 10 * (200 * 0.9 - 43.194) * 46 / 867.121
    assert req.patient.metabolic_rate_w == pytest.approx(vco2 / 0.8 * (3.941 + 1.106 * 0.8) * 4.184 / 60, rel=1e-4)
    # The window's plan now shows the settings that were set (measured CO2 output, same target).
    assert plan.ventilation.rate_per_min == pytest.approx(11.5)
    assert plan.ventilation.tidal_volume_ml == pytest.approx(200.0)
    assert "metabolic rate" in panel.status.text()


def test_a_preference_that_cannot_be_kept_says_why_first(panel):
    # Keep the tidal volume: 10/min × 100/40 = 25/min is past the dog's highest usual rate, so both change.
    fill(panel, time="0", tidal_volume="223", rate="10", paco2="100")
    assert panel.prefer.currentData() == "rate" and panel.record()
    first = panel.proposal_text.text().split("<br><br>")[0]
    assert first.startswith("<b>Not as chosen (keep the tidal volume, change the rate)")
    assert "highest usual rate" in first and panel.entries[0].proposal.changed == "both"
    assert "PROPOSAL_LIMITED" not in panel.proposal_text.text()
    fill(panel, time="10", paco2="44")  # 10 × 44/40 = 11/min: kept, nothing to explain
    assert panel.record()
    assert "Not as chosen" not in panel.proposal_text.text() and panel.entries[1].proposal.changed == "rate"


def test_species_notes_once_per_card(panel):
    from ventset.library import load_library

    notes = load_library().species["dog"].notes
    assert notes  # the dog's entry has notes (e.g. on open-chest surgery)
    fill(panel, time="0", tidal_volume="223", rate="10", paco2="55")  # a large step: full and part-way plans
    assert panel.record() and panel.entries[0].partial_step is not None
    text = panel.proposal_text.text()
    for n in notes:
        assert text.count(n.code) == 1, n.code
        assert n.text[:40] not in text  # the sentence is in the Cautions panel, not repeated on every card
