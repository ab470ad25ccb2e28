"""Plot items that draw what pyqtgraph's draw, with less Python in each paint (every edit repaints the plots).

``Marker``: one symbol at one point. pyqtgraph's ScatterPlotItem draws any number of points; for one point each
paint still runs its Python (the view's mask, the mapping of every point, the fragment table): about 0.2 ms a
plot on the build machine, and as much again to set its data. ``Marker`` draws the image pyqtgraph renders for
the same symbol, size, pen and brush (``renderSymbol``) centred where a ScatterPlotItem would centre it: a
QGraphicsPixmapItem that ignores the view's scaling, so Qt paints it in C++.

``Curve``: pyqtgraph's PlotCurveItem whose paint goes straight to the one antialiased stroke the plan's plots
use (the same calls PlotCurveItem makes for it); anything else (a fill, a shadow pen, an export, OpenGL) is
painted by PlotCurveItem itself.

tests/gui/test_plotitems.py compares the pixels with pyqtgraph's own items.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from pyqtgraph.graphicsItems.PlotCurveItem import OpenGLHelpers
from pyqtgraph.graphicsItems.ScatterPlotItem import renderSymbol
from PySide6.QtCore import Qt
from PySide6.QtGui import QBrush, QPainter, QPen, QPixmap
from PySide6.QtWidgets import QGraphicsItem, QGraphicsPixmapItem


class Marker(QGraphicsPixmapItem):
    """A symbol ('o', '+', … as pyqtgraph names them) of ``size`` pixels at one point in the view's coordinates."""

    def __init__(self, symbol: str, size: float) -> None:
        super().__init__()
        self.setFlag(QGraphicsItem.GraphicsItemFlag.ItemIgnoresTransformations)
        self._symbol, self._size = symbol, float(size)
        self._pen, self._brush = QPen(), QBrush()
        self._ratio = 1.0
        self.data = np.zeros(0)  # the points shown, as ScatterPlotItem.data holds them (empty: none)
        self.setVisible(False)

    def setPen(self, pen: QPen) -> None:  # noqa: N802 - pyqtgraph's name for the same
        self._pen = QPen(pen)
        self._render()

    def setBrush(self, brush: QBrush) -> None:  # noqa: N802 - pyqtgraph's name for the same
        self._brush = QBrush(brush)
        self._render()

    def set_ratio(self, ratio: float) -> None:
        """The screen's device pixel ratio: the image is rendered again at it when it changes."""
        if ratio != self._ratio:
            self._ratio = ratio
            self._render()

    def setData(self, x, y) -> None:  # noqa: N802 - pyqtgraph's name for the same
        """Show the symbol at (x[0], y[0]); empty lists hide it."""
        if len(x) == 0:
            self.data = np.zeros(0)
            self.setVisible(False)
            return
        self.data = np.array([(float(x[0]), float(y[0]))])
        self.setPos(float(x[0]), float(y[0]))
        self.setVisible(True)

    def _render(self) -> None:
        image = renderSymbol(self._symbol, self._size, self._pen, self._brush, dpr=self._ratio)
        pixmap = QPixmap.fromImage(image)
        pixmap.setDevicePixelRatio(self._ratio)
        self.setPixmap(pixmap)
        side = image.width() / self._ratio  # centred on the point, as drawPixmapFragments centres a fragment
        self.setOffset(-0.5 * side, -0.5 * side)


class Curve(pg.PlotCurveItem):
    """A PlotCurveItem painted as one antialiased stroke of its path when that is all it is to draw."""

    def paint(self, p: QPainter, opt, widget) -> None:
        o = self.opts
        if (self._exportOpts is not False or o["fillLevel"] is not None or o["shadowPen"] is not None
                or o["compositionMode"] is not None or o["segmentedLineMode"] == "on" or not o["antialias"]
                or isinstance(widget, OpenGLHelpers.GraphicsViewGLWidget)):
            super().paint(p, opt, widget)
            return
        if self.xData is None or len(self.xData) == 0:
            return
        pen = o["pen"]
        if pen is None or pen.style() == Qt.PenStyle.NoPen:
            return
        p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        p.setPen(pen)
        p.drawPath(self.getPath())
