"""The window on the screen: first-run size and remembered geometry kept inside the available screen area.

The available area is the screen's minus panels and docks (``QScreen.availableGeometry``), in the logical pixels
of the current scale factor, so a geometry remembered at 1× is brought back on screen at 2×.
"""

from __future__ import annotations

from PySide6.QtCore import QPoint, QRect
from PySide6.QtGui import QGuiApplication
from PySide6.QtWidgets import QWidget

DEFAULT_SIZE = (1400, 900)


def available(window: QWidget) -> QRect:
    """The available area of the screen the window is on (the primary screen if it is on none)."""
    centre = window.frameGeometry().center()
    screen = QGuiApplication.screenAt(centre) or window.screen() or QGuiApplication.primaryScreen()
    return screen.availableGeometry() if screen is not None else QRect(0, 0, *DEFAULT_SIZE)


def first_size(window: QWidget) -> tuple[int, int]:
    """The first-run size: DEFAULT_SIZE, or the whole available area when that is smaller."""
    area = available(window)
    return min(DEFAULT_SIZE[0], area.width()), min(DEFAULT_SIZE[1], area.height())


def clamp_to_screen(window: QWidget) -> bool:
    """Move and shrink ``window`` (its frame included) so that all of it is inside the available area.
    True if it was changed. A maximized or full-screen window is left to the window manager."""
    if window.isMaximized() or window.isFullScreen():
        return False
    area = available(window)
    geo, frame = window.geometry(), window.frameGeometry()
    extra_w, extra_h = frame.width() - geo.width(), frame.height() - geo.height()
    w = max(min(geo.width(), area.width() - extra_w), window.minimumWidth())
    h = max(min(geo.height(), area.height() - extra_h), window.minimumHeight())
    changed = (w, h) != (geo.width(), geo.height())
    if changed:
        window.resize(w, h)
    frame = window.frameGeometry()
    x = max(area.left(), min(frame.left(), area.right() + 1 - frame.width()))
    y = max(area.top(), min(frame.top(), area.bottom() + 1 - frame.height()))
    if QPoint(x, y) != frame.topLeft():
        window.move(x, y)
        changed = True
    return changed


def on_screen(window: QWidget) -> bool:
    """True when the whole window, frame included, is inside the available area of its screen."""
    return available(window).contains(window.frameGeometry())


class FitColumn(QWidget):
    """A column for a scroll area: widgets without stretch keep their whole height, widgets with stretch share
    what is left and may shrink to their minimum, so the column scrolls only when even that does not fit."""

    def __init__(self, parent: QWidget | None = None) -> None:
        from PySide6.QtWidgets import QVBoxLayout

        super().__init__(parent)
        QVBoxLayout(self)

    def hasHeightForWidth(self) -> bool:  # noqa: N802 - Qt override
        return True

    def heightForWidth(self, width: int) -> int:  # noqa: N802 - Qt override
        lay = self.layout()
        m = lay.contentsMargins()
        inner = width - m.left() - m.right()
        shown = [i for i in range(lay.count()) if lay.itemAt(i).widget() is not None
                 and not lay.itemAt(i).widget().isHidden()]
        h = m.top() + m.bottom() + lay.spacing() * max(0, len(shown) - 1)
        for i in shown:
            item = lay.itemAt(i)
            if lay.stretch(i) > 0:
                h += item.minimumSize().height()
            else:
                h += item.heightForWidth(inner) if item.hasHeightForWidth() else item.sizeHint().height()
        return h

    def sizeHint(self):  # noqa: N802 - Qt override
        hint = super().sizeHint()
        hint.setHeight(self.heightForWidth(max(1, self.width())))
        return hint
