"""Drawing a printed page in points: text boxes, lines, boxes and the severity marks, on any paint device.

Everything is drawn in device coordinates with point-size fonts (no painter.scale, which would scale point
text a second time): a rectangle given in points is converted with the device's resolution.
"""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QFontMetricsF, QPen, QPolygonF

FAMILY = "DejaVu Sans"


class Sheet:
    """Drawing in points on a device of ``dpi``: every rectangle is converted, fonts are point-sized."""

    def __init__(self, painter, dpi: float) -> None:
        self.p = painter
        self.k = dpi / 72.0

    def font(self, size_pt: float, bold: bool = False, italic: bool = False) -> QFont:
        f = QFont(FAMILY)
        f.setPointSizeF(size_pt)
        f.setBold(bold)
        f.setItalic(italic)
        for tag in ("liga", "clig"):  # no ligatures, so text copied or extracted from the PDF reads as typed
            f.setFeature(QFont.Tag.fromString(tag), 0)
        return f

    def rect(self, x: float, y: float, w: float, h: float) -> QRectF:
        return QRectF(x * self.k, y * self.k, w * self.k, h * self.k)

    def _metrics(self, font: QFont) -> QFontMetricsF:
        return QFontMetricsF(font, self.p.device())

    def height(self, text: str, font: QFont, width: float, flags: int | None = None) -> float:
        """Height in points of ``text`` wrapped to ``width`` points."""
        flags = int(Qt.TextFlag.TextWordWrap) if flags is None else flags
        return self._metrics(font).boundingRect(self.rect(0, 0, width, 10_000), flags, text).height() / self.k

    def width(self, text: str, font: QFont) -> float:
        return self._metrics(font).horizontalAdvance(text) / self.k

    def elide(self, text: str, font: QFont, width: float) -> str:
        """``text`` shortened with an ellipsis to fit ``width`` points."""
        return self._metrics(font).elidedText(text, Qt.TextElideMode.ElideRight, width * self.k)

    def text(self, x: float, y: float, w: float, text: str, font: QFont, *, align=None, colour: str = "#000000",
             wrap: bool = True) -> float:
        """Draw ``text`` in a box ``w`` points wide from ``(x, y)``; returns the height used (points)."""
        flags = int(align if align is not None else Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignTop)
        if wrap:
            flags |= int(Qt.TextFlag.TextWordWrap)
        h = self.height(text, font, w, flags)
        self.p.setFont(font)
        self.p.setPen(QColor(colour))
        self.p.drawText(self.rect(x, y, w, h + 1), flags, text)
        return h

    def line(self, x1: float, y1: float, x2: float, y2: float, width_pt: float = 0.5, colour: str = "#000000",
             dashed: bool = False) -> None:
        pen = QPen(QColor(colour), width_pt * self.k)
        if dashed:
            pen.setStyle(Qt.PenStyle.DashLine)
        self.p.setPen(pen)
        self.p.drawLine(QPointF(x1 * self.k, y1 * self.k), QPointF(x2 * self.k, y2 * self.k))

    def box(self, x: float, y: float, w: float, h: float, fill: str | None = None, border: str = "#000000",
            width_pt: float = 0.6) -> None:
        self.p.setPen(QPen(QColor(border), width_pt * self.k) if border else Qt.PenStyle.NoPen)
        self.p.setBrush(QBrush(QColor(fill)) if fill else Qt.BrushStyle.NoBrush)
        self.p.drawRect(self.rect(x, y, w, h))
        self.p.setBrush(Qt.BrushStyle.NoBrush)

    def mark(self, severity: str, x: float, y: float, size: float) -> None:
        """Octagon (danger), triangle (caution) or circle (info): readable in black and white."""
        k, s = self.k, size
        self.p.setPen(QPen(QColor("#000000"), 0.6 * k))
        self.p.setBrush(QBrush(QColor("#000000")) if severity == "danger" else Qt.BrushStyle.NoBrush)
        if severity == "danger":
            c = s * 0.29
            pts = [(c, 0), (s - c, 0), (s, c), (s, s - c), (s - c, s), (c, s), (0, s - c), (0, c)]
            self.p.drawPolygon(QPolygonF([QPointF((x + a) * k, (y + b) * k) for a, b in pts]))
        elif severity == "caution":
            pts = [(s / 2, 0), (s, s), (0, s)]
            self.p.setBrush(QBrush(QColor("#bdbdbd")))
            self.p.drawPolygon(QPolygonF([QPointF((x + a) * k, (y + b) * k) for a, b in pts]))
        else:
            self.p.drawEllipse(self.rect(x, y, s, s))
        self.p.setBrush(Qt.BrushStyle.NoBrush)
