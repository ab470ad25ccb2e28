"""A plot area: a pyqtgraph ViewBox with a left and a bottom axis, and the view that shows one.

ventset's plots use pyqtgraph's view box, axes and items, but not its PlotItem: a PlotItem also builds a
control panel of some forty widgets, its menus, a title, an auto-range button and top and right axes, none
of which ventset shows, and they were about a third of the window's plot-making at start-up. ``PlotArea``
lays the view box and the two axes out exactly as a PlotItem does (same grid cells, margins, stretch and
stacking), so the pixels are the same.
"""

from __future__ import annotations

import pyqtgraph as pg
from PySide6.QtCore import QEvent, Qt
from PySide6.QtWidgets import QGraphicsGridLayout, QGraphicsItem, QSizePolicy, QWidget

from ventset.gui.plotitems import Marker

# (row, column): PlotItem's cells without its title row, top axis row and right axis column.
_CELLS = {"left": (0, 0), "bottom": (1, 1)}
_VIEW_CELL = (0, 1)


class Axis(pg.AxisItem):
    """pyqtgraph's axis, whose label text is set again only when it changes: pyqtgraph re-parses the label's
    HTML on every pen, font, style and prefix change (some thirty times per axis while a plot is styled, about
    4 ms of the window's start-up)."""

    _label_html: str | None = None

    def updateAutoSIPrefix(self) -> None:  # noqa: N802 - pyqtgraph's name
        """With the SI prefix turned off the values are shown as they are. pyqtgraph 0.14 still works out a
        prefix for the range the axis has when the prefix is turned off (a range inside 0-1 without units
        gives ×1000) and keeps it: a mouse's 0.1-0.4 mL tidal volumes were labelled 100-400 after a change
        of theme, under a label that still said mL."""
        if self.autoSIPrefix:
            super().updateAutoSIPrefix()
            return
        self.autoSIPrefixScale = 1.0
        self.labelUnitPrefix = ""
        self._updateLabel()

    def _updateLabel(self) -> None:  # noqa: N802 - pyqtgraph's name
        html = self.labelString()
        if html != self._label_html:
            self._label_html = html
            self.label.setHtml(html)
        self._adjustSize()
        self.picture = None
        self.update()


class PlotArea(pg.GraphicsWidget):
    """A view box (``vb``) with a left and a bottom axis; no mouse panning or zooming, no menus, and ranges
    set by the caller (never auto-ranged)."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)
        lay = QGraphicsGridLayout()
        lay.setContentsMargins(1, 1, 1, 1)
        lay.setHorizontalSpacing(0)
        lay.setVerticalSpacing(0)
        self.setLayout(lay)
        self.vb = pg.ViewBox(parent=self, enableMenu=False)
        self.vb.setMouseEnabled(x=False, y=False)
        self.vb.disableAutoRange()
        lay.addItem(self.vb, *_VIEW_CELL)
        self.axes: dict[str, pg.AxisItem] = {}
        for name, cell in _CELLS.items():
            axis = Axis(orientation=name, parent=self)
            axis.linkToView(self.vb)
            lay.addItem(axis, *cell)
            axis.setZValue(0.5)
            axis.setFlag(QGraphicsItem.GraphicsItemFlag.ItemNegativeZStacksBehindParent)
            self.axes[name] = axis
        for i in range(2):
            lay.setRowPreferredHeight(i, 0)
            lay.setRowMinimumHeight(i, 0)
            lay.setRowSpacing(i, 0)
            lay.setRowStretchFactor(i, 1)
        for i in range(2):
            lay.setColumnPreferredWidth(i, 0)
            lay.setColumnMinimumWidth(i, 0)
            lay.setColumnSpacing(i, 0)
            lay.setColumnStretchFactor(i, 1)
        lay.setRowStretchFactor(_VIEW_CELL[0], 100)
        lay.setColumnStretchFactor(_VIEW_CELL[1], 100)

    @property
    def items(self) -> list:
        """The items added (as PlotItem.items)."""
        return list(self.vb.addedItems)

    def getAxis(self, name: str) -> pg.AxisItem:  # noqa: N802 - PlotItem's name
        return self.axes[name]

    def setLabel(self, axis: str, text: str) -> None:  # noqa: N802 - PlotItem's name
        self.axes[axis].setLabel(text)

    def addItem(self, item, ignoreBounds: bool = False) -> None:  # noqa: N802,N803 - PlotItem's names
        self.vb.addItem(item, ignoreBounds=ignoreBounds)

    def removeItem(self, item) -> None:  # noqa: N802 - PlotItem's name
        self.vb.removeItem(item)

    def plot(self, *args, **kwargs) -> pg.PlotDataItem:
        """A new data item (pyqtgraph's PlotDataItem of ``args``), added; as PlotItem.plot."""
        item = pg.PlotDataItem(*args, **kwargs)
        self.addItem(item)
        return item

    def setXLink(self, other: PlotArea) -> None:  # noqa: N802 - PlotItem's name
        self.vb.setXLink(other.vb)


class PlotView(pg.GraphicsView):
    """A widget showing one PlotArea (``area``), in place of pyqtgraph's PlotWidget."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.area = PlotArea()
        self.setCentralItem(self.area)
        self.setFocusPolicy(Qt.FocusPolicy.NoFocus)

    def event(self, e: QEvent) -> bool:
        if e.type() in (QEvent.Type.Show, QEvent.Type.DevicePixelRatioChange):  # shown, or moved to a new screen
            ratio = self.devicePixelRatioF()
            for item in self.area.vb.addedItems:
                if isinstance(item, Marker):
                    item.set_ratio(ratio)
        return super().event(e)

    def getPlotItem(self) -> PlotArea:  # noqa: N802 - PlotWidget's name
        return self.area

    def getAxis(self, name: str) -> pg.AxisItem:  # noqa: N802 - PlotWidget's name
        return self.area.getAxis(name)

    def addItem(self, item, ignoreBounds: bool = False) -> None:  # noqa: N802,N803 - PlotWidget's names
        self.area.addItem(item, ignoreBounds=ignoreBounds)

    def plot(self, *args, **kwargs) -> pg.PlotDataItem:
        return self.area.plot(*args, **kwargs)
