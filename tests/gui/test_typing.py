"""A number being typed is planned at every keystroke that gives a plan, in the keystroke's own pass; one that
gives none ('4' and '45' of a horse's '450') puts the settled plan back at once and is said to be wrong only
when the typing pauses, so the plan kept on screen, stale, is never a half-typed one. Enter and focus-out
settle at once; a save or any flush hands over what is typed."""

from __future__ import annotations

import time

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication

from tests.gui.conftest import enter, settle
from ventset.gui.form import TYPING_PAUSE_MS


def _planned_masses(window) -> list[float]:
    seen: list[float] = []
    window.controller.plan_ready.connect(lambda p: seen.append(p.resolved.mass_kg))
    return seen


def _pass() -> None:
    """The event-loop passes one keystroke takes: the replan is one zero-delay timer away."""
    for _ in range(3):
        QApplication.processEvents()


def test_every_keystroke_that_gives_a_plan_is_planned_in_its_own_pass(qtbot, window):
    window.form.species.picked.emit("dog")
    settle(window)
    seen = _planned_masses(window)
    edit = window.form.rows["mass"].edit
    edit.setFocus()
    edit.selectAll()
    for ch, mass in (("1", 1.0), ("8", 18.0), (".", 18.0), ("5", 18.5)):
        qtbot.keyClick(edit, ch)
        _pass()  # no waiting for a pause
        assert window.controller.plan.resolved.mass_kg == pytest.approx(mass)
        assert not window.controller.stale
    assert seen == [1.0, 18.0, 18.5]  # '18.' is the same number as '18': planned once


def test_a_half_typed_number_that_cannot_be_planned_keeps_the_settled_plan(qtbot, window):
    enter(qtbot, window, "horse", "520")
    edit = window.form.rows["mass"].edit
    settled_mass = window.controller.plan.resolved.mass_kg
    assert settled_mass == 520.0 and not window.controller.stale
    errors: list = []
    window.controller.plan_invalid.connect(errors.append)
    edit.selectAll()
    for ch in "45":  # 4 and 45 kg are below a horse's 100 kg
        qtbot.keyClick(edit, ch)
        _pass()
        assert window.controller.plan.resolved.mass_kg == settled_mass  # never a half-typed plan
    assert errors == []  # not said while typing
    time.sleep(TYPING_PAUSE_MS / 1000 * 1.5)
    qtbot.waitUntil(lambda: bool(errors), timeout=10_000)  # the pause: now it is said, on the settled plan
    assert window.controller.stale and window.controller.plan.resolved.mass_kg == settled_mass
    assert "mass" in window.form._errors
    qtbot.keyClick(edit, "0")
    _pass()
    assert window.controller.plan.resolved.mass_kg == 450.0 and not window.controller.stale


def test_enter_plans_at_once(qtbot, window):
    seen = _planned_masses(window)
    edit = window.form.rows["mass"].edit
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, "6.5")
    qtbot.keyClick(edit, Qt.Key.Key_Return)
    QApplication.processEvents()  # no waiting for the pause
    assert window.controller.plan.resolved.mass_kg == pytest.approx(6.5) and seen[-1] == 6.5


def test_focus_out_settles_and_flush_hands_the_typing_over(qtbot, window):
    edit = window.form.rows["mass"].edit
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, "5.5")
    window.form.rows["lean-mass"].edit.setFocus()  # focus out
    QApplication.processEvents()
    assert window.controller.plan.resolved.mass_kg == pytest.approx(5.5)
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, "-")  # cannot be planned: the settled 5.5 kg stays, the error waits for the pause
    assert window.controller.request.patient.mass_kg == pytest.approx(5.5) and not window.controller.stale
    window.controller.flush()  # e.g. before saving: what is typed is handed over, and said
    assert window.controller.stale and window.controller.request.patient.mass_kg == pytest.approx(5.5)
    assert "mass" in window.form._errors
