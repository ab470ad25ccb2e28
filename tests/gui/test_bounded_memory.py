"""A long session keeps bounded memory: the undo history keeps its newest steps, the pixmap cache its limit."""

from __future__ import annotations

from PySide6.QtGui import QPixmapCache

from tests.gui.conftest import settle
from ventset.gui import plots
from ventset.gui.window import UNDO_STEPS


def test_the_undo_history_keeps_only_its_newest_steps(qtbot, window):
    form = window.form
    masses = [f"{5 + i / 100:g}" for i in range(UNDO_STEPS + 25)]
    for text in masses:
        form.set_text("mass", text)
        form._seal()  # each entry its own step, as when the user leaves the field between entries
    settle(window)
    assert window.undo.count() == UNDO_STEPS
    assert window.controller.plan.resolved.mass_kg == float(masses[-1])
    window.undo.undo()
    settle(window)
    assert form.rows["mass"].edit.text() == masses[-2]  # the newest steps still undo, in order
    while window.undo.canUndo():
        window.undo.undo()
    settle(window)
    # The oldest steps were dropped: undoing everything kept goes back to the first entry still held.
    assert form.rows["mass"].edit.text() == masses[len(masses) - UNDO_STEPS - 1]


def test_the_pixmap_cache_is_bounded_to_room_for_the_axes(window):
    ratio = max(1.0, window.devicePixelRatioF())
    assert QPixmapCache.cacheLimit() == int(plots.AXIS_CACHE_KIB * ratio * ratio)
    assert QPixmapCache.cacheLimit() < 10240  # below Qt's default, which stale axis images would fill
