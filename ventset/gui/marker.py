"""One symbol at one point of a plot, drawn by Qt without Python in the paint.

pyqtgraph's ScatterPlotItem draws any number of points; for one point each paint still runs its Python (the
view's mask, the mapping of every point, the fragment table): about 0.2 ms a plot on the build machine, and as
much again to set its data. ``Marker`` draws the image pyqtgraph renders for the same symbol, size, pen and brush
(``renderSymbol``) centred where a ScatterPlotItem would centre it: a QGraphicsPixmapItem that ignores the view's
scaling, so Qt paints it in C++. tests/gui/test_marker.py compares the pixels with a ScatterPlotItem's.
"""

from __future__ import annotations

import numpy as np
from pyqtgraph.graphicsItems.ScatterPlotItem import renderSymbol
from PySide6.QtGui import QBrush, QPen, QPixmap
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
