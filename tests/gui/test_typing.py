"""While a number is typed the plan waits for the typing to pause: '450' never plans the half-typed '4' or
'45'; Enter and focus-out plan at once; a save or any flush hands over what is typed."""

from __future__ import annotations

import time

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication

from tests.gui.conftest import settle


def _planned_masses(window) -> list[float]:
    seen: list[float] = []
    window.controller.plan_ready.connect(lambda p: seen.append(p.resolved.mass_kg))
    return seen


def _keys(qtbot, edit, text: str) -> None:
    """Type like a person: a key every 60 ms, each key's events handled before the next."""
    for ch in text:
        qtbot.keyClick(edit, ch)
        end = time.monotonic() + 0.06
        while time.monotonic() < end:
            QApplication.processEvents()


def test_a_half_typed_number_is_never_planned(qtbot, window):
    window.form.species.picked.emit("horse")
    settle(window)
    seen = _planned_masses(window)
    edit = window.form.rows["mass"].edit
    edit.setFocus()
    edit.selectAll()
    _keys(qtbot, edit, "450")
    assert 4.0 not in seen and 45.0 not in seen
    # generous: a loaded machine is slow to fire the timer
    qtbot.waitUntil(lambda: window.controller.plan.resolved.mass_kg == 450.0, timeout=10_000)
    assert seen == [450.0]


def test_enter_plans_at_once(qtbot, window):
    seen = _planned_masses(window)
    edit = window.form.rows["mass"].edit
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, "6.5")
    qtbot.keyClick(edit, Qt.Key.Key_Return)
    QApplication.processEvents()  # no waiting for the pause
    assert window.controller.plan.resolved.mass_kg == pytest.approx(6.5) and seen == [6.5]


def test_focus_out_plans_at_once_and_flush_hands_the_typing_over(qtbot, window):
    edit = window.form.rows["mass"].edit
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, "5.5")
    window.form.rows["lean-mass"].edit.setFocus()  # focus out
    QApplication.processEvents()
    assert window.controller.plan.resolved.mass_kg == pytest.approx(5.5)
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, "7")
    assert window.controller.request.patient.mass_kg == pytest.approx(5.5)  # held back while typing
    window.controller.flush()  # e.g. before saving: what is typed is handed over
    assert window.controller.request.patient.mass_kg == pytest.approx(7.0)
