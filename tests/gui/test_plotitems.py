"""ventset.gui.plotitems against pyqtgraph's own items (the outside reference). One point drawn by a Marker has
the same pixels as the same point, symbol, size, pen and brush drawn by a ScatterPlotItem, wherever it falls; a
Curve has the pixels of a PlotCurveItem with the same pen and data."""

import numpy as np
import pyqtgraph as pg
import pytest
from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QPen

from ventset.gui.plotarea import PlotView
from ventset.gui.plotitems import Curve, Marker, Picture


def _pen(colour: str, width: float) -> QPen:
    pen = QPen(QColor(colour))
    pen.setWidthF(width)
    pen.setCosmetic(True)
    return pen


def _view(qtbot):
    view = PlotView()
    qtbot.addWidget(view)
    view.setBackground("#ffffff")
    view.getPlotItem().vb.setRange(xRange=(0, 80), yRange=(0, 30), padding=0)
    view.resize(420, 260)
    view.show()
    qtbot.waitExposed(view)
    return view


STYLES = [("o", 17.6, ("#ffffff", 2.0), "#c0392b"), ("+", 17.6, ("#1b1f24", 3.0), "#1b1f24"),
          ("o", 14.4, ("#25292e", 2.0), "#e67e22")]
POINTS = [(40.0, 15.0), (12.37, 21.91), (0.4, 29.8), (79.9, 0.2), (55.55, 7.25), (85.0, 15.0)]


@pytest.mark.parametrize("symbol,size,pen,brush", STYLES)
def test_a_marker_draws_the_pixels_of_a_scatter_point(qtbot, symbol, size, pen, brush):
    ref_view, our_view = _view(qtbot), _view(qtbot)
    ref = pg.ScatterPlotItem(size=size, symbol=symbol)
    ours = Marker(symbol, size)
    for item in (ref, ours):
        item.setPen(_pen(*pen))
        item.setBrush(QBrush(QColor(brush)))
    ref_view.addItem(ref)
    our_view.addItem(ours)
    for x, y in POINTS:  # inside, at the edges (partly clipped) and outside the view
        ref.setData([x], [y])
        ours.setData([x], [y])
        assert ref_view.grab().toImage() == our_view.grab().toImage(), (x, y)
    assert ours.isVisible()
    ref.setData([], [])
    ours.setData([], [])
    assert ours.data.size == 0 and not ours.isVisible()
    assert ref_view.grab().toImage() == our_view.grab().toImage()


def test_a_new_pixel_ratio_renders_the_image_again(qtbot):
    ours = Marker("o", 10)
    ours.setPen(_pen("#000000", 2))
    ours.set_ratio(2.0)
    assert ours.pixmap().devicePixelRatio() == 2.0
    assert ours.pixmap().width() == 24  # ceil(2 × (10 + 2)), as pyqtgraph renders it for the same ratio


CURVE_PENS = [("#1f5f8b", 2.5, Qt.PenStyle.SolidLine), ("#6b7280", 1.2, Qt.PenStyle.DotLine),
              ("#1b1f24", 1.5, Qt.PenStyle.DashLine), ("#b25d00", 3.0, Qt.PenStyle.SolidLine)]


@pytest.mark.parametrize("colour,width,style", CURVE_PENS)
def test_a_curve_draws_the_pixels_of_a_plot_curve_item(qtbot, colour, width, style):
    """Curve against PlotCurveItem: lines with gaps (NaN, connect='finite'), lines leaving the view, a closed box."""
    ref_view, our_view = _view(qtbot), _view(qtbot)
    # antialias as ventset.gui.plots configures pyqtgraph (its default is off, and then Curve leaves it to pyqtgraph)
    ref, ours = pg.PlotCurveItem(connect="finite", antialias=True), Curve(connect="finite", antialias=True)
    for item in (ref, ours):
        pen = _pen(colour, width)
        pen.setStyle(style)
        item.setPen(pen)
    ref_view.addItem(ref)
    our_view.addItem(ours)
    x = np.linspace(0.0, 90.0, 160)
    data = [(x, 600.0 / np.maximum(x, 1.0)), (np.r_[x, np.nan, x], np.r_[0.3 * x, np.nan, 29 - 0.2 * x]),
            ([10.0, 60.0, 60.0, 10.0, 10.0], [5.0, 5.0, 25.0, 25.0, 5.0]), ([], [])]
    for xs, ys in data:
        ref.setData(xs, ys)
        ours.setData(xs, ys)
        assert ref_view.grab().toImage() == our_view.grab().toImage()


def test_a_curve_with_a_fill_is_painted_by_pyqtgraph(qtbot):
    ref_view, our_view = _view(qtbot), _view(qtbot)
    ref, ours = pg.PlotCurveItem(fillLevel=0.0, brush="#88aadd"), Curve(fillLevel=0.0, brush="#88aadd")
    for view, item in ((ref_view, ref), (our_view, ours)):
        item.setPen(_pen("#1b1f24", 2.0))
        item.setData([0.0, 20.0, 40.0, 80.0], [3.0, 25.0, 12.0, 20.0])
        view.addItem(item)
    assert ref_view.grab().toImage() == our_view.grab().toImage()


def _shifted_by_at_most_one_pixel(ref, ours) -> bool:
    """Every pixel that differs has the colour ours shows within one pixel of it in ref (a cell edge moved by
    one pixel at most: the two nearest-pixel scalings round a cell boundary that falls inside a pixel apart)."""
    w, h = ref.width(), ref.height()
    for y in range(h):
        for x in range(w):
            c = ours.pixel(x, y)
            if c != ref.pixel(x, y) and not any(
                    ref.pixel(min(w - 1, max(0, x + dx)), min(h - 1, max(0, y + dy))) == c
                    for dx in (-1, 0, 1) for dy in (-1, 0, 1)):
                return False
    return True


def test_a_picture_shows_the_cells_an_image_item_shows(qtbot):
    """Picture against ImageItem (row-major, the same array, the same rectangle): the same cells, colours and
    place; at most a cell edge one pixel apart (Qt's fast scaling of its own pixel format rounds edges that fall
    inside a pixel differently from its general path, which ImageItem's RGBA image takes)."""
    ref_view, our_view = _view(qtbot), _view(qtbot)
    ref, ours = pg.ImageItem(axisOrder="row-major"), Picture()
    ref_view.addItem(ref)
    our_view.addItem(ours)
    rng = np.random.default_rng(3)
    lut = np.array([[60, 60, 70, 255], [235, 235, 240, 255], [250, 215, 170, 255], [245, 190, 190, 255]], np.uint8)
    cells = np.repeat(np.repeat(rng.integers(0, 4, (12, 12)), 10, axis=0), 10, axis=1)  # 120 × 120, blocks
    for rect in (QRectF(0, 0, 80, 30), QRectF(3.3, 1.7, 61.9, 24.2)):
        for item in (ref, ours):
            item.setImage(lut[cells], autoLevels=False)
            item.setRect(rect)
        a, b = ref_view.grab().toImage(), our_view.grab().toImage()
        assert np.array_equal(ours.image, ref.image)
        assert _shifted_by_at_most_one_pixel(a, b)
        moved = sum(a.pixel(x, y) != b.pixel(x, y) for y in range(a.height()) for x in range(a.width()))
        assert moved < 0.01 * a.width() * a.height()
