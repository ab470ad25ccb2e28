"""ventset.gui.plotarea against pyqtgraph's own PlotItem/PlotWidget (the outside reference): the same view
box and axis geometry, so a plot drawn in a PlotArea has the same pixels as one drawn in a PlotItem."""

import pyqtgraph as pg
import pytest
from PySide6.QtGui import QColor, QImage, QPainter

from ventset.gui.plotarea import PlotArea, PlotView


def _rect(item) -> tuple[float, ...]:
    r = item.sceneBoundingRect()
    return tuple(round(v, 3) for v in (r.x(), r.y(), r.width(), r.height()))


def _pair(qtbot, size):
    ref = pg.PlotWidget(enableMenu=False)
    ref.hideButtons()
    ours = PlotView()
    for w in (ref, ours):
        qtbot.addWidget(w)
        w.getPlotItem().setLabel("bottom", "Tidal volume (mL)")
        w.getPlotItem().setLabel("left", "Rate (/min)")
        w.getPlotItem().vb.setRange(xRange=(0, 80), yRange=(0, 30), padding=0)
        w.resize(*size)
        w.show()
    qtbot.waitUntil(lambda: ours.isVisible() and ref.isVisible())
    return ref, ours


@pytest.mark.parametrize("size", [(258, 99), (420, 260), (160, 120)])
def test_view_box_and_axes_sit_where_a_plot_item_puts_them(qtbot, size):
    ref, ours = _pair(qtbot, size)
    a, b = ref.getPlotItem(), ours.getPlotItem()
    assert _rect(b.vb) == _rect(a.vb)
    for side in ("left", "bottom"):
        assert _rect(b.getAxis(side)) == _rect(a.getAxis(side))


def test_a_curve_draws_the_same_pixels(qtbot):
    ref, ours = _pair(qtbot, (300, 180))
    images = []
    for w in (ref, ours):
        w.addItem(pg.PlotCurveItem([0, 20, 40, 80], [5, 25, 10, 28], pen=pg.mkPen("#1f5fa0", width=2)))
        w.addItem(pg.InfiniteLine(pos=50, angle=90, movable=False))
        img = QImage(w.size(), QImage.Format.Format_ARGB32)
        img.fill(QColor("white"))
        p = QPainter(img)
        w.render(p)
        p.end()
        images.append(img)
    assert images[0] == images[1]


def test_plot_area_lists_what_was_added_and_makes_no_menu(qtbot):
    area = PlotArea()
    curve = area.plot([0, 1], [1, 2])
    line = pg.InfiniteLine(pos=0.5)
    area.addItem(line)
    assert area.items == [curve, line]
    area.removeItem(line)
    assert area.items == [curve]
    assert area.vb.menu is None
    assert not any(area.vb.state["mouseEnabled"])


def _tick_texts(axis) -> list[str]:
    img = QImage(10, 10, QImage.Format.Format_ARGB32_Premultiplied)
    p = QPainter(img)
    try:
        specs = axis.generateDrawSpecs(p)
    finally:
        p.end()
    return [text for _rect, _flags, text in specs[2]] if specs else []


def test_ticks_read_the_values_when_the_si_prefix_is_turned_off_on_a_small_range(qtbot):
    """Turning the SI prefix off while the range is inside 0-1 (a mouse's tidal volumes in mL) must leave the
    values as they are: pyqtgraph 0.14 keeps a ×1000 prefix then, and 0.1-0.4 read 100-400 under 'mL'."""
    view = PlotView()
    qtbot.addWidget(view)
    view.resize(420, 260)
    view.getPlotItem().setLabel("bottom", "Tidal volume at the patient (mL)")
    view.getPlotItem().vb.setRange(xRange=(0, 0.5), yRange=(0, 250), padding=0)
    view.show()
    qtbot.waitExposed(view)
    ax = view.getAxis("bottom")
    ax.enableAutoSIPrefix(False)  # as the plots' style does, on every change of theme
    texts = _tick_texts(ax)
    assert texts and all(0.0 <= float(t) <= 0.5 for t in texts), texts  # within the view box's own range
    assert "0.2" in texts and ax.labelString().count("(mL)") == 1 and "x0.001" not in ax.labelString()
