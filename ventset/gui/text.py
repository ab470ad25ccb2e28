"""A read-out text that repaints only itself when its number changes.

A word-wrapped QLabel asks every layout up to the window to recalculate on each setText, so one
changed number repaints the whole window. ``Text`` asks for a new layout only when the height it
needs for its width really changes; otherwise it just repaints its own rectangle. Text is shown as
it is (plain) unless the widget is made with ``markup=True``: then ``<b>…</b>`` spans (and nothing
else) are drawn bold in ``strong_colour`` — only for the project's own sentences, never user text.

Also here: :func:`plain` (a QLabel that never renders markup) and :func:`plain_tip` (a tooltip that
shows its text literally), for every place that shows user or data text.
"""

from __future__ import annotations

import html
import re

from PySide6.QtCore import QRect, QSize, Qt
from PySide6.QtGui import QColor, QFont, QFontMetrics, QPainter, QTextLayout, QTextOption
from PySide6.QtWidgets import QLabel, QSizePolicy, QWidget

_BOLD = re.compile(r"<b>(.*?)</b>", re.S)
_LAYOUTS_KEPT = 4  # layouts a Text keeps: the widths a layout pass asks about, and the one it is painted at


def plain(label: QLabel) -> QLabel:
    """``label`` set to show its text as plain text (Qt would otherwise guess rich text from a '<')."""
    label.setTextFormat(Qt.TextFormat.PlainText)
    return label


def plain_tip(text: str) -> str:
    """A tooltip that shows ``text`` literally: Qt guesses rich text for tooltips and has no switch, so the
    text is escaped and given as rich text ('<img src=…>' in a name shows as those characters)."""
    if not text:
        return ""
    return "<p>" + html.escape(text).replace("\n", "<br>") + "</p>"


def esc(text: object) -> str:
    """User or data text for a string of HTML the project builds (record cards, tooltips with a bold title)."""
    return html.escape(str(text))


class Text(QWidget):
    """Plain (or lightly bold-marked) text, optionally wrapped, left/right aligned."""

    def __init__(self, text: str = "", parent: QWidget | None = None, *, wrap: bool = False,
                 align: Qt.AlignmentFlag = Qt.AlignmentFlag.AlignLeft, name: str = "", lines: int = 1,
                 markup: bool = False, keep_whole: bool = False) -> None:
        super().__init__(parent)
        self._markup = markup
        self._keep_whole = keep_whole  # wrapped: never squeezed below the height the text needs at its width
        self._min_lines = max(1, lines)  # height kept for this many lines: a longer text need not move others
        self._text = ""
        self._plain = ""
        self._spans: list[tuple[int, int]] = []
        self._wrap = wrap
        self._align = align
        self._colour: QColor | None = None
        self._strong: QColor | None = None
        self._lines_h = 0
        self._layouts: dict[tuple, tuple[QTextLayout, int]] = {}
        self._hfw: dict = {}
        self._size_dirty = False
        if name:
            self.setObjectName(name)
        self.setAttribute(Qt.WidgetAttribute.WA_OpaquePaintEvent, False)
        pol = QSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Preferred)
        if wrap:
            pol = QSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
            pol.setHeightForWidth(True)
        self.setSizePolicy(pol)
        self.setText(text)

    # ------------------------------------------------------------------ content
    def text(self) -> str:
        return self._text

    def plainText(self) -> str:  # noqa: N802 - Qt-style name, as QLabel's text()
        return self._plain

    def setText(self, text: str) -> None:  # noqa: N802 - same API as QLabel
        if text == self._text:
            return
        old_plain = self._plain
        self._text = text
        spans, pieces, pos = [], [], 0
        for m in _BOLD.finditer(text) if self._markup else ():
            pieces.append(text[pos:m.start()])
            start = sum(len(x) for x in pieces)
            pieces.append(m.group(1))
            spans.append((start, len(m.group(1))))
            pos = m.end()
        pieces.append(text[pos:])
        self._plain = "".join(pieces)
        self._spans = spans
        self.setAccessibleName(self._plain)
        if not self.isVisible():
            self._size_dirty = True  # hidden (e.g. another tab): ask for room when shown, not now
        elif self._needs_new_size(old_plain):
            self.updateGeometry()
            self._hold_height()
        self.update()

    def setColour(self, colour: str | QColor | None, strong: str | QColor | None = None) -> None:  # noqa: N802
        self._colour = QColor(colour) if colour is not None else None
        self._strong = QColor(strong) if strong is not None else None
        self.update()

    def setWordWrap(self, on: bool) -> None:  # noqa: N802 - QLabel API
        self._wrap = on
        self.updateGeometry()

    # ------------------------------------------------------------------ size
    def showEvent(self, e) -> None:  # noqa: N802 - Qt override
        super().showEvent(e)
        if self._size_dirty:
            self._size_dirty = False
            self.updateGeometry()

    def _needs_new_size(self, old_plain: str) -> bool:
        if not self._wrap:  # ask for room only when the text no longer fits
            return self.fontMetrics().horizontalAdvance(self._plain) + 2 > self.width()
        h = self.heightForWidth(max(1, self.width()))
        changed = h != self._lines_h
        self._lines_h = h
        return changed

    def _layout(self, width: int) -> tuple[QTextLayout, int]:
        """The text laid out at ``width`` and its height: one layout serves the height asked for a width and
        the paint at that width (a changed text is laid out once, not once for its size and again to paint)."""
        key = (self._plain, width, tuple(self._spans), _font_key(self), self._wrap, int(self._align),
               self._strong.rgba() if self._strong is not None else 0)
        hit = self._layouts.pop(key, None)
        if hit is None:
            hit = self._make_layout(width)
            while len(self._layouts) >= _LAYOUTS_KEPT:
                self._layouts.pop(next(iter(self._layouts)))
        self._layouts[key] = hit  # the most recently used last
        return hit

    def _make_layout(self, width: int) -> tuple[QTextLayout, int]:
        layout = QTextLayout(self._plain, self.font())
        opt = QTextOption()
        opt.setWrapMode(QTextOption.WrapMode.WordWrap if self._wrap else QTextOption.WrapMode.NoWrap)
        opt.setAlignment(self._align)
        layout.setTextOption(opt)
        if self._spans:
            from PySide6.QtGui import QTextCharFormat

            ranges = []
            for start, length in self._spans:
                r = QTextLayout.FormatRange()
                r.start, r.length = start, length
                f = QTextCharFormat()
                f.setFontWeight(QFont.Weight.Bold)
                if self._strong is not None:
                    f.setForeground(self._strong)
                r.format = f
                ranges.append(r)
            layout.setFormats(ranges)
        layout.beginLayout()
        y = 0.0
        while True:
            line = layout.createLine()
            if not line.isValid():
                break
            line.setLineWidth(width)
            line.setPosition(_pt(0.0, y))
            y += line.height()
        layout.endLayout()
        return layout, int(y + 0.999)

    def longest_unbroken(self) -> int:
        """Width (px) of the longest piece of the text that cannot be broken across lines (a word or number)."""
        if not self._plain:
            return 0
        if not self._wrap:
            return self.fontMetrics().horizontalAdvance(self._plain)
        key = (self._plain, -1, _font_key(self))  # beside the heights for widths (width -1: not a width)
        w = self._hfw.get(key)
        if w is None:  # asked on every plan (the tiles' reflow): a text that has not changed is not laid out again
            if len(self._hfw) > 64:
                self._hfw.clear()
            layout, _h = self._make_layout(1)
            w = self._hfw[key] = max(int(layout.lineAt(i).naturalTextWidth() + 0.999)
                                     for i in range(layout.lineCount()))
        return w

    def hasHeightForWidth(self) -> bool:  # noqa: N802 - Qt override
        return self._wrap

    def heightForWidth(self, width: int) -> int:  # noqa: N802 - Qt override
        if not self._plain:
            return self._reserved()
        key = (self._plain, width, _font_key(self))
        h = self._hfw.get(key)
        if h is None:  # layouts ask again and again for the same widths: remember the answers
            if len(self._hfw) > 64:
                self._hfw.clear()
            h = self._hfw[key] = max(self._reserved(), self._layout(max(1, width))[1])
        return h

    def _reserved(self) -> int:
        fm = self.fontMetrics()
        return fm.height() + (self._min_lines - 1) * fm.lineSpacing()

    def sizeHint(self) -> QSize:  # noqa: N802 - Qt override
        fm = QFontMetrics(self.font())
        if self._wrap:
            w = min(fm.horizontalAdvance(self._plain), fm.averageCharWidth() * 60) or fm.averageCharWidth() * 10
            return QSize(w, self.heightForWidth(w))
        return QSize(fm.horizontalAdvance(self._plain) + 2, fm.height())

    def minimumSizeHint(self) -> QSize:  # noqa: N802 - Qt override
        # Never depends on the text, so a new number cannot push the panels around.
        fm = QFontMetrics(self.font())
        return QSize(fm.averageCharWidth() * (8 if self._wrap else 3), fm.height())

    def resizeEvent(self, e) -> None:  # noqa: N802 - Qt override
        super().resizeEvent(e)
        if self._wrap:
            h = self.heightForWidth(self.width())
            if h != self._lines_h:
                self._lines_h = h
                self.updateGeometry()
            self._hold_height()

    def _hold_height(self) -> None:
        if self._keep_whole and self._wrap and self.width() > 0:
            h = self.heightForWidth(self.width())
            if h != self.minimumHeight():
                self.setMinimumHeight(h)

    def changeEvent(self, e) -> None:  # noqa: N802 - Qt override; a font change changes the size
        super().changeEvent(e)
        from PySide6.QtCore import QEvent

        if e.type() == QEvent.Type.FontChange:
            self.__dict__.pop("_fkey", None)
            self.updateGeometry()

    # ------------------------------------------------------------------ paint
    def paintEvent(self, e) -> None:  # noqa: N802 - Qt override
        if not self._plain:
            return
        p = QPainter(self)
        p.setPen(self._colour if self._colour is not None else self.palette().color(self.foregroundRole()))
        rect: QRect = self.contentsRect()
        layout, h = self._layout(rect.width())
        y = rect.top() + max(0, (rect.height() - h) // 2) if not self._wrap else rect.top()
        layout.draw(p, _pt(rect.left(), y))
        p.end()


def _font_key(widget: QWidget) -> str:
    """``widget``'s font key, asked on every layout lookup: kept until its font changes (the widgets here forget
    it on FontChange)."""
    key = widget.__dict__.get("_fkey")
    if key is None:
        key = widget.__dict__["_fkey"] = widget.font().key()
    return key


def _pt(x: float, y: float):
    from PySide6.QtCore import QPointF

    return QPointF(x, y)


class Reading(QWidget):
    """A large number with its unit right beside it on the same baseline (fonts relative to the app font).

    The number is never cut: when the widget is narrower than the text at its full size, the type shrinks
    until it fits (``fitted_fonts``); ``width_at(scale)`` tells a panel how wide the reading needs to be.
    """

    MIN_SCALE = 1.4  # the smallest comfortable number size (× the application font) before a panel reflows

    def __init__(self, parent: QWidget | None = None, *, value_scale: float = 2.3, unit_scale: float = 1.15,
                 name: str = "") -> None:
        super().__init__(parent)
        self._value, self._unit = "—", ""
        self._value_scale, self._unit_scale = value_scale, unit_scale
        self._vf = self._font(value_scale, True)
        self._uf = self._font(unit_scale, False)
        self._fit: tuple | None = None
        self._width_at: tuple | None = None
        self._colour: QColor | None = None
        if name:
            self.setObjectName(name)
        self.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Fixed)

    def _font(self, scale: float, bold: bool) -> QFont:
        from ventset.gui.theme import scaled_font

        return scaled_font(self.font(), scale, bold=bold)

    def text(self) -> str:
        return self._value

    def value_font(self) -> QFont:
        """The font the number is drawn in now (smaller than the full size when the widget is narrow)."""
        return QFont(self.fitted_fonts()[0])

    def unit_font(self) -> QFont:
        return QFont(self.fitted_fonts()[1])

    def unit(self) -> str:
        return self._unit

    def set_reading(self, value: str, unit: str) -> None:
        if (value, unit) == (self._value, self._unit):
            return
        self._value, self._unit = value, unit
        self._fit = None
        self.setAccessibleName(f"{value} {unit}".strip())
        if self._width(self._vf, self._uf) > self.width():
            self.updateGeometry()
        self.update()

    def setColour(self, colour: str | QColor | None) -> None:  # noqa: N802
        self._colour = QColor(colour) if colour is not None else None
        self.update()

    def _width(self, vf: QFont, uf: QFont) -> int:
        gap = QFontMetrics(uf).averageCharWidth() // 2
        return QFontMetrics(vf).horizontalAdvance(self._value) + gap + QFontMetrics(uf).horizontalAdvance(
            self._unit) + 2

    def width_at(self, scale: float) -> int:
        """Pixels the reading needs with the number at ``scale`` × the application font (unit at its own size,
        or smaller in proportion when the number is smaller than the unit's size)."""
        key = (self._value, self._unit, scale, _font_key(self))
        if self._width_at is not None and self._width_at[0] == key:
            return self._width_at[1]
        w = self._width(self._font(scale, True), self._font(min(self._unit_scale, scale), False))
        self._width_at = (key, w)
        return w

    def fitted_fonts(self) -> tuple[QFont, QFont]:
        """The largest number and unit fonts, down from the full size, whose text fits the widget's width."""
        key = (self._value, self._unit, self.width(), _font_key(self))
        if self._fit is not None and self._fit[0] == key:
            return self._fit[1], self._fit[2]
        vf, uf, scale = self._vf, self._uf, self._value_scale
        while self._width(vf, uf) > self.width() and scale > 0.55:
            scale -= 0.05
            vf, uf = self._font(scale, True), self._font(min(self._unit_scale, scale), False)
        self._fit = (key, vf, uf)
        return vf, uf

    def sizeHint(self) -> QSize:  # noqa: N802 - Qt override
        return QSize(self._width(self._vf, self._uf), QFontMetrics(self._vf).height())

    def minimumSizeHint(self) -> QSize:  # noqa: N802 - Qt override
        return QSize(QFontMetrics(self._vf).averageCharWidth() * 3, QFontMetrics(self._vf).height())

    def changeEvent(self, e) -> None:  # noqa: N802 - Qt override; the fonts follow the application font
        super().changeEvent(e)
        from PySide6.QtCore import QEvent

        if e.type() == QEvent.Type.FontChange:
            self.__dict__.pop("_fkey", None)
            self._vf = self._font(self._value_scale, True)
            self._uf = self._font(self._unit_scale, False)
            self._fit = None
            self.updateGeometry()

    def paintEvent(self, e) -> None:  # noqa: N802 - Qt override
        vf, uf = self.fitted_fonts()
        p = QPainter(self)
        p.setPen(self._colour if self._colour is not None else self.palette().color(self.foregroundRole()))
        vfm = QFontMetrics(vf)
        full = QFontMetrics(self._vf)
        base = full.ascent() + max(0, (self.height() - full.height()) // 2)
        p.setFont(vf)
        p.drawText(0, base, self._value)
        x = vfm.horizontalAdvance(self._value) + QFontMetrics(uf).averageCharWidth() // 2
        p.setFont(uf)
        p.drawText(x, base, self._unit)
        p.end()
