"""The situations chooser in the patient section: ticking, searching, undo, a refused situation, a loaded case."""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt

from tests.gui.conftest import settle
from ventset.model import Patient, Request


def _item(window, key):
    lst = window.form.situations.list
    return next(lst.item(i) for i in range(lst.count()) if lst.item(i).data(Qt.ItemDataRole.UserRole) == key)


def _tick(window, key, on=True):
    _item(window, key).setCheckState(Qt.CheckState.Checked if on else Qt.CheckState.Unchecked)
    settle(window)


def test_ticking_laparoscopy_replans_and_undo_returns(qtbot, make_window):
    window = make_window(Request(Patient("dog", 20.0)))
    settle(window)
    before = window.controller.plan
    _tick(window, "laparoscopy")
    p = window.controller.plan
    assert p.request.patient.situations == ("laparoscopy",)
    # Mullett et al. 1993: intraperitoneal CO2 raised CO2 output by 25 ± 4 % (cholecystectomy).
    assert p.metabolism.vco2_ml_min / before.metabolism.vco2_ml_min == pytest.approx(1.25, abs=0.04)
    assert p.ventilation.minute_ml_min > before.ventilation.minute_ml_min
    assert "absorbed CO2 ×1.25" in window.form.situations.effects.text()
    assert "LAPAROSCOPY_CO2_LOAD" in {c.code for c in p.cautions}
    window.act_undo.trigger()
    settle(window)
    assert window.controller.plan.request.patient.situations == ()
    assert _item(window, "laparoscopy").checkState() == Qt.CheckState.Unchecked


def test_several_at_once_and_search(qtbot, window):
    _tick(window, "raised-icp")
    _tick(window, "obesity")
    assert window.controller.plan.request.patient.situations == ("raised-icp", "obesity")
    window.form.situations.search.setText("head trauma")
    assert not _item(window, "raised-icp").isHidden() and _item(window, "obesity").isHidden()
    window.form.situations.search.setText("")
    assert not _item(window, "obesity").isHidden()


def test_a_situation_for_another_species_is_marked_and_the_plan_kept(qtbot, window):
    good = window.controller.plan
    _tick(window, "dorsal-recumbency")  # the demo patient is a cat; horses and cattle only
    assert window.controller.plan is good
    err = window.form.situations.error
    assert err.isVisible() or not window.isVisible()
    assert "applies to" in err.text() and "Cat" in err.text()
    _tick(window, "dorsal-recumbency", on=False)
    assert window.form.situations.error.text() == ""


def test_a_loaded_request_ticks_its_situations(qtbot, make_window):
    w = make_window(Request(Patient("dog", 20.0, situations=("open-chest",))))
    settle(w)
    assert _item(w, "open-chest").checkState() == Qt.CheckState.Checked
    assert "OPEN_CHEST" in {c.code for c in w.controller.plan.cautions}
