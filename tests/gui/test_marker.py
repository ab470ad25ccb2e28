"""ventset.gui.marker against pyqtgraph's ScatterPlotItem (the outside reference): one point drawn by a Marker has
the same pixels as the same point, symbol, size, pen and brush drawn by a ScatterPlotItem, wherever it falls."""

import pyqtgraph as pg
import pytest
from PySide6.QtGui import QBrush, QColor, QPen

from ventset.gui.marker import Marker
from ventset.gui.plotarea import PlotView


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
