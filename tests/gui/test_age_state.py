"""The age and reptile-state choices of the window reach the plan (issue 9: an age input in the window)."""

from __future__ import annotations

import pytest

from tests.gui.conftest import settle


def test_age_choice_plans_a_juvenile_and_a_new_species_resets_it(qtbot, window):
    form = window.form
    adult = window.controller.plan.metabolism.vo2_ml_min
    form.age_combo.setCurrentIndex(form.age_combo.findData("juvenile"))
    form.age_combo.activated.emit(form.age_combo.currentIndex())
    settle(window)
    plan = window.controller.plan
    assert plan.request.patient.age == "juvenile" and plan.basis.growth.age == "juvenile"
    # planning.toml: placental juvenile factor 1.3 × the adult allometric rate (the demo cat has no own value)
    assert plan.metabolism.vo2_ml_min == pytest.approx(1.3 * adult, rel=1e-9)
    form.undo.undo()
    settle(window)
    assert window.controller.plan.request.patient.age is None
    form.age_combo.activated.emit(form.age_combo.findData("neonate"))
    form.species.picked.emit("dog")
    settle(window)
    assert window.controller.plan.request.patient.age is None and "age and state" in form.state["notice"]


def test_reptile_state_fed_uses_the_published_multiplier(qtbot, window):
    form = window.form
    form.species.picked.emit("python")
    form.set_text("mass", "10")
    settle(window)
    fasted = window.controller.plan.metabolism.vo2_ml_min
    form.state_combo.activated.emit(form.state_combo.findData("fed"))
    settle(window)
    # planning.toml fed_metabolic_factor 6.7 (house snake digestion scope; Secor & Diamond 1995 up to 17)
    assert window.controller.plan.metabolism.vo2_ml_min == pytest.approx(6.7 * fasted, rel=1e-9)
