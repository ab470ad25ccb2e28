"""The comparison window and the dead-space teaching view: open from the menus, follow edits, mark differences,
show the notice, never render a name as markup."""

from __future__ import annotations

import math

import pytest
from PySide6.QtWidgets import QApplication

from ventset.model import STANDING_NOTICE, ApparatusPart, Circuit, Patient, Request

CAT = Request(Patient("cat", 3.0))


def _settle():
    for _ in range(3):
        QApplication.processEvents()


@pytest.fixture
def cat_window(make_window):
    from ventset.gui.compare_menu import install

    w = make_window(CAT)
    install(w)
    return w


def _row(view, label):
    t = view.table
    return next(r for r in range(t.rowCount()) if t.item(r, 0).text().strip().lstrip("≠ ") == label)


def test_compare_opens_from_the_case_menu_with_an_hme_beside_the_patient(cat_window):
    assert cat_window.act_compare in cat_window.menu("Case").actions()
    cat_window.act_compare.trigger()
    view = cat_window._compare_view
    _settle()
    assert view.notice.text.text() == STANDING_NOTICE
    assert view.comparison is not None and len(view.comparison.setups) == 2
    r = _row(view, "Minute volume")
    assert view.table.item(r, 0).text().startswith("≠")
    assert view.table.item(r, 1).text() == "498 mL/min" and view.table.item(r, 2).text() == "720 mL/min"
    assert not view.table.item(_row(view, "CO2 output (VCO2)"), 0).text().startswith("≠")
    assert "[2] adds: [DANGER] TARGET_UNREACHABLE" in view.cautions.toPlainText()
    assert "NOTICE: " + STANDING_NOTICE in view.cautions.toPlainText()
    assert "NOTICE: " + STANDING_NOTICE in view.copy_text()
    assert view.breath_plots[0].isVisible() and view.breath_plots[1].isVisible()
    assert not view.breath_plots[2].isVisible()
    ranges = [p.plot.vb.viewRange()[0] for p in view.breath_plots[:2]]
    assert ranges[0] == pytest.approx(ranges[1])  # one scale for the paired breaths


def test_a_bad_setup_says_why_and_the_others_still_compare(cat_window):
    cat_window.act_compare.trigger()
    view = cat_window._compare_view
    view.editors[1].spec.setEditText("tube=wide")
    view.editors[2].spec.setEditText("circuit=rebreathing_paediatric")
    view.flush()
    assert view.editors[1].error.plainText().startswith("setup 3, Tube internal diameter: wide")
    assert [s.label for s in view.comparison.setups] == ["as entered", "add=hme_paediatric",
                                                         "circuit=rebreathing_paediatric"]
    assert view.numbers == [1, 2, 4]
    assert view.table.horizontalHeaderItem(3).text().startswith("[4]")
    view.editors[0].spec.setEditText("")
    view.editors[2].spec.setEditText("")
    view.flush()
    assert view.comparison is None and "Enter a change in setup 2" in view.status.plainText()


def test_compare_follows_the_main_window_patient(cat_window):
    from dataclasses import replace

    cat_window.act_compare.trigger()
    view = cat_window._compare_view
    ctl = cat_window.controller
    ctl.set_request(replace(CAT, patient=replace(CAT.patient, mass_kg=4.0)))
    ctl.flush()
    _settle()
    assert view.comparison.setups[0].plan.resolved.mass_kg == 4.0
    ctl.set_request(replace(CAT, patient=replace(CAT.patient, mass_kg=400.0)))  # not a cat: no comparison
    ctl.flush()
    _settle()
    assert view.comparison is None and "cannot be planned" in view.status.plainText()


def test_compare_shows_hostile_names_literally(make_window):
    from test_hostile_text import HOSTILE, markup_problems

    from ventset.gui.compare_view import CompareView

    req = Request(Patient("dog", 20.0, name=HOSTILE[0]), Circuit(parts=(ApparatusPart(HOSTILE[2], 3.0),)))
    w = make_window(req)
    view = CompareView(w.library, req, parent=w)
    view.editors[0].spec.setEditText(f"add={HOSTILE[1]}=2 mL")
    view.flush()
    view.show()
    _settle()
    assert view.comparison is not None
    assert markup_problems(view) == []
    cells = [view.table.item(r, c).text() for r in range(view.table.rowCount()) for c in range(1, 3)]
    assert any(HOSTILE[2] in x and HOSTILE[1] in x for x in cells)


def test_deadspace_view_moves_the_breath_and_marks_where_exchange_stops(cat_window):
    cat_window.act_deadspace.trigger()
    view = cat_window._deadspace_view
    _settle()
    first = cat_window.controller.plan
    assert view.current.plan.ventilation.expected_paco2_mmhg == pytest.approx(first.ventilation.expected_paco2_mmhg)
    assert view.notice.text.text() == STANDING_NOTICE
    view.added.set_value(10.0)
    _settle()
    ls = view.current
    assert ls.plan.ventilation.tidal_volume_ml == pytest.approx(first.ventilation.tidal_volume_ml)
    assert ls.plan.ventilation.expected_paco2_mmhg > 60
    assert ls.minute_needed_ml_min > first.ventilation.minute_ml_min
    assert view.plot.stops[0].value() == pytest.approx(ls.stop_ml)
    assert view.plot.now.value() == pytest.approx(ls.apparatus_ml)
    # VT(1 − f_alv) = VD_fixed: 30·0.9 − Stahl 2.76·3^0.96·0.8 (6.34 mL intubated airway) = 20.7 mL of apparatus + tube
    assert "Gas exchange stops at 20.7 mL" in view.readout_text()
    view.added.set_value(30.0)
    _settle()
    assert math.isinf(view.current.plan.ventilation.expected_paco2_mmhg)
    assert "NO GAS EXCHANGE" in view.readout_text() and "VT_NOT_ABOVE_DEAD_SPACE" in view.readout_text()
    assert "NOTHING exchanges gas" in view.breath.caption.plainText()


def test_dragging_the_line_sets_the_added_part(cat_window):
    cat_window.act_deadspace.trigger()
    view = cat_window._deadspace_view
    others = view.current.apparatus_ml
    view.plot.now.setValue(others + 6.0)
    view.plot.now.sigDragged.emit(view.plot.now)
    _settle()
    assert view.added.value() == pytest.approx(6.0, abs=view.added.step)
    assert view.current.apparatus_ml == pytest.approx(others + view.added.value())


def test_tube_length_and_free_settings(cat_window):
    cat_window.act_deadspace.trigger()
    view = cat_window._deadspace_view
    before = view.current.plan.dead_space.tube_ml
    view.tube.set_value(view.tube.value() * 4)
    _settle()
    assert view.current.plan.dead_space.tube_ml == pytest.approx(4 * before, rel=0.02)
    view.added.set_value(20.0)
    view.hold.setChecked(False)
    _settle()
    assert view.current.plan.limits.binding != ("fixed_by_user",)
    assert "chosen again" in view.readout_text()
