"""A scroll bar that shows a remembered image of each state it has drawn.

The Fusion style draws a tall scroll bar's handle slowly: about 1.1 ms for a 700-pixel handle on the
build machine, most of a keystroke's painting of the numbers. The cautions list's bar is drawn again whenever
the list's height changes, which is most edits (a caution's text gains or loses a line as a number is typed),
and the heights come back (a digit typed and deleted). ``RememberedScrollBar`` keeps the last few images the
style drew, keyed by everything the style is given to draw from, and shows the image when that state comes
back. While the pointer is over the bar or its handle is held it is drawn by the style as usual: the style's
hover and pressed looks depend on state Qt keeps to itself.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtGui import QImage, QPainter
from PySide6.QtWidgets import QScrollBar, QStyle, QStyleOptionSlider, QWidget

KEEP = 6  # images kept per bar: a few heights of the list, at one size and look


def _key(bar: QScrollBar, opt: QStyleOptionSlider) -> tuple:
    """Everything the style draws a scroll bar from (``.value``, not ``int()``: ``int()`` of a style option's
    flag crashes PySide6 6.10 inside a paint event)."""
    r = opt.rect
    return (r.x(), r.y(), r.width(), r.height(), bar.devicePixelRatioF(), opt.state.value, opt.minimum,
            opt.maximum, opt.sliderPosition, opt.sliderValue, opt.pageStep, opt.singleStep, opt.orientation.value,
            opt.upsideDown, opt.direction.value, opt.palette.cacheKey(), id(bar.style()))


class RememberedScrollBar(QScrollBar):
    """A QScrollBar whose idle look is drawn by the style once per state and then shown from the image."""

    def __init__(self, orientation: Qt.Orientation, parent: QWidget | None = None) -> None:
        super().__init__(orientation, parent)
        self._images: dict[tuple, QImage] = {}

    def paintEvent(self, e) -> None:  # noqa: N802 - Qt override
        if self.underMouse() or self.isSliderDown():
            super().paintEvent(e)
            return
        opt = QStyleOptionSlider()
        self.initStyleOption(opt)
        opt.subControls = QStyle.SubControl.SC_All  # as QScrollBar paints itself when idle
        opt.activeSubControls = QStyle.SubControl.SC_None
        key = _key(self, opt)
        image = self._images.pop(key, None)
        if image is None:
            ratio = self.devicePixelRatioF()
            # Opaque like the window's own surface: the style's gradients round exactly as they do there (on a
            # transparent image they came out one level off), and the style covers the whole bar.
            image = QImage(round(self.width() * ratio), round(self.height() * ratio), QImage.Format.Format_RGB32)
            image.setDevicePixelRatio(ratio)
            image.fill(self.palette().window().color())
            p = QPainter(image)
            self.style().drawComplexControl(QStyle.ComplexControl.CC_ScrollBar, opt, p, self)
            p.end()
            while len(self._images) >= KEEP:
                self._images.pop(next(iter(self._images)))
        self._images[key] = image  # the most recently used last
        p = QPainter(self)
        p.drawImage(0, 0, image)
        p.end()
