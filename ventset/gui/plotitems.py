"""Plot items that draw what pyqtgraph's draw, with less Python in each paint (every edit repaints the plots).

``Marker``: one symbol at one point. pyqtgraph's ScatterPlotItem draws any number of points; for one point each
paint still runs its Python (the view's mask, the mapping of every point, the fragment table): about 0.2 ms a
plot on the build machine, and as much again to set its data. ``Marker`` draws the image pyqtgraph renders for
the same symbol, size, pen and brush (``renderSymbol``) centred where a ScatterPlotItem would centre it: a
QGraphicsPixmapItem that ignores the view's scaling, so Qt paints it in C++.

``Curve``: pyqtgraph's PlotCurveItem whose paint goes straight to the one antialiased stroke the plan's plots
use (the same calls PlotCurveItem makes for it); anything else (a fill, a shadow pen, an export, OpenGL) is
painted by PlotCurveItem itself.

``Picture``: an opaque RGBA image stretched over a rectangle of the view, as pyqtgraph's ImageItem shows one
given ``setImage`` and ``setRect``. ImageItem hands Qt the array as an RGBA8888 image, which the raster engine
converts on every paint; a Picture converts it once, to the screen's own format (exact for opaque pixels), and
draws it with the one call ImageItem.paint makes.

tests/gui/test_plotitems.py compares the pixels with pyqtgraph's own items.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from pyqtgraph.graphicsItems.PlotCurveItem import OpenGLHelpers
from pyqtgraph.graphicsItems.ScatterPlotItem import renderSymbol
from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QBrush, QImage, QPainter, QPen, QPixmap, QTransform
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


class Picture(QGraphicsItem):
    """An opaque image (rows × columns × RGBA, uint8; row 0 at the rectangle's top in view coordinates)."""

    def __init__(self) -> None:
        super().__init__()
        self.image: np.ndarray | None = None  # the array shown, as ImageItem.image holds it
        self._qimage: QImage | None = None
        self._bounds = QRectF()
        self._rect: QRectF | None = None

    def setImage(self, image: np.ndarray, autoLevels: bool = False) -> None:  # noqa: N802,N803 - ImageItem's names
        rgba = np.ascontiguousarray(image, dtype=np.uint8)
        if rgba.ndim != 3 or rgba.shape[2] != 4:
            raise ValueError(f"Picture needs rows × columns × RGBA, not {rgba.shape}")
        h, w = rgba.shape[:2]
        view = QImage(rgba.data, w, h, 4 * w, QImage.Format.Format_RGBA8888)  # a view of the array ...
        self._qimage = view.convertToFormat(QImage.Format.Format_ARGB32_Premultiplied)  # ... copied
        self.image = rgba
        if QRectF(0, 0, w, h) != self._bounds:
            self.prepareGeometryChange()
            self._bounds = QRectF(0, 0, w, h)
        if self._rect is not None:
            self.setRect(self._rect)
        self.update()

    def setRect(self, rect: QRectF) -> None:  # noqa: N802 - ImageItem's name
        """Stretch the image over ``rect`` (view coordinates), the transform ImageItem.setRect makes."""
        self._rect = QRectF(rect)
        if self.image is None:
            return
        h, w = self.image.shape[:2]
        tr = QTransform()
        tr.translate(rect.left(), rect.top())
        tr.scale(rect.width() / w, rect.height() / h)
        self.setTransform(tr)

    def boundingRect(self) -> QRectF:  # noqa: N802 - Qt override
        return self._bounds

    def paint(self, p: QPainter, opt, widget=None) -> None:
        if self._qimage is not None:
            p.drawImage(self._bounds, self._qimage)  # as ImageItem.paint draws it
