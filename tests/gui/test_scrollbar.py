"""ventset.gui.scrollbar against Qt's own QScrollBar (the outside reference): a remembered image shows the same
pixels the style draws for the same state, a changed state is drawn afresh, and the images kept are bounded."""

import pytest
from PySide6.QtCore import QPoint, Qt
from PySide6.QtGui import QColor, QPalette
from PySide6.QtWidgets import QScrollBar, QWidget

from ventset.gui.scrollbar import KEEP, RememberedScrollBar


def _pair(qtbot, orientation, size):
    host = QWidget()
    qtbot.addWidget(host)
    host.resize(size[0] * 2 + 10, size[1] + 10)
    ref, ours = QScrollBar(orientation, host), RememberedScrollBar(orientation, host)
    ref.setGeometry(0, 0, *size)
    ours.setGeometry(size[0] + 10, 0, *size)
    host.show()
    qtbot.waitExposed(host)
    return host, ref, ours


def _same(ref, ours) -> bool:
    return ref.grab().toImage() == ours.grab().toImage()


@pytest.mark.parametrize("orientation,size", [(Qt.Orientation.Vertical, (14, 748)),
                                              (Qt.Orientation.Horizontal, (300, 14))])
def test_each_state_shows_what_the_style_draws(qtbot, orientation, size):
    host, ref, ours = _pair(qtbot, orientation, size)
    states = [(0, 516, 700, 0), (0, 530, 700, 0), (0, 516, 700, 0), (0, 530, 700, 120), (0, 0, 700, 0)]
    for lo, hi, page, value in states:  # heights come back: the third is shown from the image of the first
        for bar in (ref, ours):
            bar.setRange(lo, hi)
            bar.setPageStep(page)
            bar.setValue(value)
        assert _same(ref, ours), (lo, hi, page, value)


def test_a_new_palette_is_drawn_afresh(qtbot):
    host, ref, ours = _pair(qtbot, Qt.Orientation.Vertical, (14, 300))
    for bar in (ref, ours):
        bar.setRange(0, 100)
    assert _same(ref, ours)
    pal = QPalette(ours.palette())
    pal.setColor(QPalette.ColorRole.Button, QColor("#334455"))
    pal.setColor(QPalette.ColorRole.Window, QColor("#223344"))
    for bar in (ref, ours):
        bar.setPalette(pal)
    assert _same(ref, ours)


def test_images_kept_are_bounded(qtbot):
    host, _, ours = _pair(qtbot, Qt.Orientation.Vertical, (14, 300))
    for hi in range(0, 40 * 10, 10):
        ours.setRange(0, hi)
        ours.grab()
    assert len(ours._images) == KEEP


def test_under_the_pointer_the_style_draws_it(qtbot, monkeypatch):
    """Hover and pressed looks come from state Qt keeps to itself: no image is made or used then."""
    host, ref, ours = _pair(qtbot, Qt.Orientation.Vertical, (14, 300))
    ours.setRange(0, 100)
    monkeypatch.setattr(RememberedScrollBar, "underMouse", lambda self: True)
    ours._images.clear()
    ours.grab(ours.rect().translated(QPoint(0, 0)))
    assert ours._images == {}
