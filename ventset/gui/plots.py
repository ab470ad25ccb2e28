"""The four live plots. Every item is created once; each plan only calls setData/setPos/setText,
and the axis ranges are set here from the plan (never auto-ranged). Arrays come from ventset.plotdata."""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QRectF, Qt, Signal
from PySide6.QtGui import QBrush, QColor, QFont, QPen, QPixmapCache, QTransform
from PySide6.QtWidgets import (
    QBoxLayout,
    QFrame,
    QGraphicsItem,
    QGraphicsRectItem,
    QGraphicsSimpleTextItem,
    QHBoxLayout,
    QLabel,
    QSizePolicy,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from ventset import plotdata
from ventset.gui.plotarea import PlotArea, PlotView
from ventset.gui.plotitems import Curve, Marker, Picture
from ventset.gui.text import Text, plain
from ventset.gui.theme import DAY, Theme, scaled_font
from ventset.model import Plan
from ventset.units import fmt, mmhg_to_kpa

pg.setConfigOptions(antialias=True, background=DAY.plot_bg, foreground=DAY.plot_fg)
MAP_CELLS = 120  # cells per side of the drawn map; finer than the pixels it covers at normal sizes
# Qt's pixmap cache holds the axis images (DeviceCoordinateCache) and the style's small pieces. A re-drawn axis
# is a new entry and the old one stays until the cache is full (10 MiB by default), so the cache fills with
# stale axes as the ranges change. Kept to room for every plot's axes, per device pixel ratio squared: the
# twelve axes take about 0.4 MiB at 1400 × 900, 0.7 MiB in a window 2560 pixels wide.
AXIS_CACHE_KIB = 1024


def _gas(mmhg: float | np.ndarray, unit: str):
    return mmhg_to_kpa(mmhg) if unit == "kPa" else mmhg


def _gas_fmt(mmhg: float, unit: str) -> str:
    if not math.isfinite(mmhg):
        return "—"
    return f"{fmt(_gas(mmhg, unit), 3)} {unit}"


def _pen(colour: str, width: float = 2.0, style: Qt.PenStyle = Qt.PenStyle.SolidLine) -> QPen:
    pen = QPen(QColor(colour))
    pen.setWidthF(width)
    pen.setCosmetic(True)
    pen.setStyle(style)
    return pen


_NOTHING = object()


class PlotCard(QFrame):
    """A titled frame around one plot, with a caption that says in words what the plot shows."""

    enlarge = Signal(object)  # this card; the window shows it alone (or all four again)

    def __init__(self, title: str, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("plot-card")
        self.setFrameShape(QFrame.Shape.StyledPanel)
        lay = QVBoxLayout(self)
        m = self.fontMetrics().height() // 4
        lay.setContentsMargins(m, m, m, m)
        lay.setSpacing(m)
        self._title = title
        self.title = plain(QLabel(title, self))
        self.title.setFont(scaled_font(self.font(), 1.05, bold=True))
        self.title.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
        self.title.setWordWrap(True)  # a narrow card wraps its title instead of cutting it (after the policy)
        self.caption = Text("", self, wrap=True, name="plot-caption", lines=3, keep_whole=True)
        self.setMinimumWidth(self.fontMetrics().averageCharWidth() * 30)  # narrower, no plot is legible
        self.caption.setFont(scaled_font(self.font(), 0.9))
        head = QHBoxLayout()
        head.setContentsMargins(0, 0, 0, 0)
        head.addWidget(self.title, 1)
        self.zoom = QToolButton(self)
        self.zoom.setText("Enlarge")
        self.zoom.setCheckable(True)
        self.zoom.setAutoRaise(True)
        self.zoom.setToolTip("Show this plot alone, larger (click again for all four)")
        self.zoom.setAccessibleName(f"Enlarge {title}")
        self.zoom.toggled.connect(self._zoom)
        head.addWidget(self.zoom)
        lay.addLayout(head)
        self.body = lay
        self.theme = DAY
        self.stale = False
        self._parts: dict[str, object] = {}

    def _zoom(self, on: bool) -> None:
        self.zoom.setText("All plots" if on else "Enlarge")
        self.enlarge.emit(self if on else None)

    def add_plot(self, widget: QWidget) -> None:
        self.body.addWidget(widget, 1)
        self.body.addWidget(self.caption)

    def set_stale(self, stale: bool) -> None:
        if stale != self.stale:
            self.stale = stale
            self.title.setText(f"{self._title} — ⚠ stale (last valid plan)" if stale else self._title)

    def set_caption(self, text: str) -> None:
        if self.caption.text() != text:
            self.caption.setText(text)

    def changed(self, part: str, value: object) -> bool:
        """True (and ``value`` remembered) when ``part`` of the plot is to show something new
        (plotdata.same): a part given the same data again is not set, so it is not redrawn."""
        last = self._parts.get(part, _NOTHING)
        if last is not _NOTHING and plotdata.same(last, value):
            return False
        self._parts[part] = value
        return True

    def style_plot(self, plot: PlotArea, theme: Theme) -> None:
        ratio = max(1.0, self.devicePixelRatioF())
        QPixmapCache.setCacheLimit(int(AXIS_CACHE_KIB * ratio * ratio))
        for name in ("left", "bottom"):
            ax = plot.getAxis(name)
            ax.setPen(_pen(theme.plot_fg, 1))
            ax.setTextPen(QColor(theme.plot_fg))
            ax.setStyle(tickFont=self.font())
            ax.label.setFont(self.font())
            # A mouse's volumes are read as 0.1 mL, not as "100 (mL) (x0.001)" (a prefix the label may not fit).
            ax.enableAutoSIPrefix(False)
            # Axes change only when their range does: keep them as a pixmap instead of redrawing the text.
            ax.setCacheMode(QGraphicsItem.CacheMode.DeviceCoordinateCache)


class PlotPage(QWidget):
    """The plot cards in two columns, or stacked in one when the page is too narrow for two legible plots
    (each card then keeps the height it would have had); a card enlarged hides the others."""

    COLUMN_CHARS = 36  # a plot narrower than this many characters cannot show its axes and labels whole

    def __init__(self, parent: QWidget | None = None, spacing: int = 4) -> None:
        super().__init__(parent)
        self.row = QBoxLayout(QBoxLayout.Direction.LeftToRight, self)
        self.row.setContentsMargins(0, spacing, 0, 0)
        self.row.setSpacing(spacing)
        self.columns = (QWidget(self), QWidget(self))
        for column in self.columns:
            lay = QVBoxLayout(column)
            lay.setContentsMargins(0, 0, 0, 0)
            lay.setSpacing(spacing)
            self.row.addWidget(column, 1)
        self.cards: list[PlotCard] = []
        self.base_height = self.fontMetrics().lineSpacing() * 34
        self.stacked = False
        self.setMinimumHeight(self.base_height)

    def add(self, column: int, card: PlotCard, stretch: int) -> None:
        self.columns[column].layout().addWidget(card, stretch)
        self.cards.append(card)

    def enlarge(self, card: PlotCard | None) -> None:
        """Show ``card`` alone over the whole page, or every card (None)."""
        for column in self.columns:
            column.setVisible(card is None or column.isAncestorOf(card))
        for c in self.cards:
            c.setVisible(card is None or c is card)
        self._fit(self.width())

    def _fit(self, width: int) -> None:
        alone = sum(1 for c in self.cards if not c.isHidden()) == 1
        stacked = not alone and width < 2 * self.COLUMN_CHARS * self.fontMetrics().averageCharWidth()
        if stacked != self.stacked:
            self.stacked = stacked
            self.row.setDirection(QBoxLayout.Direction.TopToBottom if stacked else QBoxLayout.Direction.LeftToRight)
        self.setMinimumHeight(self.base_height * (2 if stacked else 1))

    def resizeEvent(self, e) -> None:  # noqa: N802 - Qt override
        super().resizeEvent(e)
        self._fit(self.width())


def _new_plot_widget(parent: QWidget) -> PlotView:
    w = PlotView(parent)  # no menus, buttons or control panel: not built at all (ventset.gui.plotarea)
    w.setMinimumHeight(w.fontMetrics().height() * 6)
    return w


def _set_range(vb: pg.ViewBox, xr: tuple[float, float], yr: tuple[float, float], cache: dict) -> None:
    key = (xr, yr)
    if cache.get("range") != key:
        cache["range"] = key
        vb.setRange(xRange=xr, yRange=yr, padding=0, update=True, disableAutoRange=True)


class PlotLabel(QGraphicsSimpleTextItem):
    """A label in a plot, at a point in the plot's units, upright and at the screen's size whatever the axes'
    scale, with ``anchor`` the fraction of its box that sits on the point (0, 0: top left; 1, 1: bottom
    right) and ``angle`` degrees anticlockwise about it. Plain text only: what it is given is never read as
    markup. Drawn by Qt itself, at a fraction of the cost of a text document (the item pyqtgraph offers); the
    box keeps that item's 4-pixel margin round the text, so labels sit where they did."""

    MARGIN = 4.0

    def __init__(self, text: str = "", color: str | QColor | None = None, anchor=(0.0, 0.0),
                 angle: float = 0.0) -> None:
        super().__init__()
        self.setFlag(QGraphicsItem.GraphicsItemFlag.ItemIgnoresTransformations)
        self._anchor = (float(anchor[0]), float(anchor[1]))
        self._angle = float(angle)
        if color is not None:
            self.setColor(color)
        self.setText(text)

    def setText(self, text: str) -> None:  # noqa: N802 - Qt's name
        super().setText(text)
        self._place()

    def setFont(self, font: QFont) -> None:  # noqa: N802 - Qt's name
        super().setFont(font)
        self._place()

    def setColor(self, color: str | QColor) -> None:  # noqa: N802 - pyqtgraph's name for the same
        self.setBrush(QBrush(QColor(color)))

    def setAnchor(self, anchor) -> None:  # noqa: N802 - pyqtgraph's name for the same
        self._anchor = (float(anchor[0]), float(anchor[1]))
        self._place()

    def toPlainText(self) -> str:  # noqa: N802 - as a text document says it
        return self.text()

    def _place(self) -> None:
        r = super().boundingRect()
        m = self.MARGIN
        w, h = r.width() + 2 * m, r.height() + 2 * m
        t = QTransform()
        t.rotate(-self._angle)
        t.translate(m - self._anchor[0] * w, m - self._anchor[1] * h)
        self.setTransform(t)


def _set_text(item: PlotLabel, text: str, bold: bool = False) -> None:
    """Change a plot label only when its text (or weight) changes (a new text re-lays it out)."""
    if getattr(item, "_shown", None) != (text, bold):
        item._shown = (text, bold)
        if item.font().bold() != bold:
            f = item.font()
            f.setBold(bold)
            item.setFont(f)
        item.setText(text)


def _show(item, on: bool) -> None:
    """Show or hide a plot item only when that changes (showing a label recomputes its transform)."""
    if getattr(item, "_on", None) != on:
        item._on = on
        item.setVisible(on)


def _anchor(item: PlotLabel, anchor: tuple[float, float]) -> None:
    """Move a label's anchor only when it changes (a new anchor re-lays the label out)."""
    if getattr(item, "_anchored", None) != anchor:
        item._anchored = anchor
        item.setAnchor(anchor)


def _text_item(colour: str, anchor=(0, 0), angle: float = 0.0) -> PlotLabel:
    return PlotLabel("", QColor(colour), anchor=anchor, angle=angle)


# ---------------------------------------------------------------------------------------------


class BreathPlot(PlotCard):
    """One set breath laid out in the order the gas travels, one row per stretch: the circuit, each
    apparatus part, the tube, the airway, alveolar dead space and the volume that exchanges gas."""

    POOL = 14

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Where one breath goes", parent)
        self.setObjectName("plot-breath")
        self.setToolTip("<b>Where one breath goes</b><br>The set breath in the order the gas travels. Anatomical "
                        "dead space: Stahl 1967 allometry, intubated share from the species; tube: π·(ID/2)²·length; "
                        "alveolar dead space: species fraction of VT; compression: compressible volume × (peak − "
                        "PEEP).")
        self.widget = _new_plot_widget(self)
        self.plot = self.widget.getPlotItem()
        self.plot.setLabel("bottom", "mL along the set breath")
        self.rects: list[QGraphicsRectItem] = []
        self.labels: list[PlotLabel] = []
        for _ in range(self.POOL):
            r = QGraphicsRectItem()
            r.setVisible(False)
            self.plot.addItem(r)
            self.rects.append(r)
            t = _text_item(DAY.plot_fg, anchor=(0, 0.5))
            t.setVisible(False)
            self.plot.addItem(t)
            self.labels.append(t)
        self.end_line = pg.InfiniteLine(angle=90, movable=False)
        self.plot.addItem(self.end_line)
        self.add_plot(self.widget)
        self.cache: dict = {}
        self._ticks: list = []
        self.plot.vb.sigResized.connect(self._resized)
        self.data: plotdata.BreathComposition | None = None
        self.set_theme(DAY)

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.widget.setBackground(theme.plot_bg)
        self.style_plot(self.plot, theme)
        self.end_line.setPen(_pen(theme.plot_fg, 2, Qt.PenStyle.DashLine))
        for t in self.labels:
            t.setColor(QColor(theme.plot_fg))
        if self.data is not None:
            self._draw(self.data)

    def show_plan(self, plan: Plan) -> None:
        b = plotdata.breath_composition(plan)
        if not self.changed("shown", b):
            return  # nothing this plot shows has changed (a new name, say): not drawn again
        self.data = b
        self._draw(self.data)
        b = self.data
        tot = b.total_by_category()
        patient = b.patient_end_ml - b.patient_start_ml
        share = b.exchange_ml / patient * 100 if patient > 0 else 0.0
        app = tot["apparatus"]
        lead = (f"Apparatus {fmt(app)} mL = {fmt(app / patient * 100, 2)} % of each breath. " if app > 0 and
                patient > 0 else "")
        if b.exchange_ml > 0:
            self.set_caption(f"{lead}{fmt(b.exchange_ml)} mL ({fmt(share, 2)} % of what reaches the patient) "
                             "exchanges gas. Dashed line: end of the breath.")
        else:
            self.set_caption(f"{lead}NOTHING exchanges gas: the dead space (bars past the dashed end of the "
                             "breath) is larger than the breath.")

    def _draw(self, b: plotdata.BreathComposition) -> None:
        t = self.theme
        segs = b.segments[: self.POOL]
        n = max(1, len(segs))
        x_hi = plotdata.nice_ceiling(max(b.set_ml, b.patient_start_ml + b.dead_space_ml) * 1.12)
        ticks = []
        ppm = max(1.0, self.plot.vb.width()) / x_hi  # pixels per mL
        fm = self.fontMetrics()
        for i, r in enumerate(self.rects):
            lab = self.labels[i]
            if i >= len(segs):
                _show(r, False)
                _show(lab, False)
                continue
            s = segs[i]
            y = n - 1 - i
            r.setRect(QRectF(s.start_ml, y - 0.34, max(s.volume_ml, 1e-9), 0.68))
            look = (t.breath.get(s.category, t.muted), t.plot_fg)
            if getattr(r, "_look", None) != look:
                r._look = look
                r.setBrush(QBrush(QColor(look[0])))
                r.setPen(_pen(look[1], 0.8))
            _show(r, True)
            text = f"{fmt(s.volume_ml)} mL"
            _set_text(lab, text)
            need = fm.horizontalAdvance(text) + fm.averageCharWidth()
            colour = t.plot_fg
            if (x_hi - s.end_ml) * ppm >= need:
                _anchor(lab, (0, 0.5))  # after the bar
                lab.setPos(s.end_ml, y)
            elif s.start_ml * ppm >= need:
                _anchor(lab, (1, 0.5))  # before the bar, in the room the waterfall leaves
                lab.setPos(s.start_ml, y)
            elif s.volume_ml * ppm >= need:
                _anchor(lab, (0.5, 0.5))  # inside a wide bar
                lab.setPos((s.start_ml + s.end_ml) / 2, y)
                colour = t.plot_bg
            else:
                _anchor(lab, (0, 0.5))
                lab.setPos(s.end_ml, y)
            if getattr(lab, "_colour", None) != colour:
                lab._colour = colour
                lab.setColor(QColor(colour))
            _show(lab, True)
            ticks.append((y, _short(s.label)))
        if ticks != self._ticks:
            self._ticks = ticks
            ax = self.plot.getAxis("left")
            ax.setTicks([ticks, []])
            # Room for every row's name at the current font size (the layout takes it from the map below).
            self.widget.setMinimumHeight((len(ticks) + 3) * fm.lineSpacing())
            ax.setWidth(max(fm.horizontalAdvance(x) for _, x in ticks) + fm.height() if ticks else fm.height())
        self.end_line.setPos(b.patient_end_ml)
        _set_range(self.plot.vb, (0.0, x_hi), (-0.6, n + 0.4), self.cache)

    def _resized(self) -> None:  # labels choose their side from the pixel width
        if self.data is not None:
            self._draw(self.data)

    def curve_data(self) -> list[tuple[float, float]]:
        return [(r.rect().left(), r.rect().right()) for r in self.rects if r.isVisible()]


_SHORT = (("Heat and moisture exchanging filter (HMEF)", "HMEF"), ("Heat and moisture exchanger (HME)", "HME"),
          ("Mainstream CO2 airway adapter", "CO2 adapter"), ("Endotracheal tube connector", "Connector"),
          ("Sidestream sampling adapter", "Sampling adapter"), ("Flexible corrugated extension (catheter mount)",
                                                                "Catheter mount"),
          ("Right-angle elbow connector", "Elbow"), ("Tube beyond the incisors", "Tube"),
          ("Circuit compression", "Circuit (compression)"), ("Airway (intubated)", "Airway"),
          ("Unperfused alveoli", "Alveolar dead space"))


def _short(name: str) -> str:
    """A part name short enough for an axis label."""
    n = name
    for long, short in _SHORT:
        n = n.replace(long, short)
    n = " ".join(n.split()).strip(" ,")
    return n if len(n) <= 24 else n[:23] + "…"


# ---------------------------------------------------------------------------------------------


class SettingsMapPlot(PlotCard):
    """Tidal volume × rate with lines of equal predicted PaCO2, the target band, the pressure limit,
    the species' usual range and the recommended point. Click anywhere to read that alternative."""

    probed = Signal(object)  # plotdata.PointSummary
    N_LINES = 9

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Settings map: tidal volume × rate", parent)
        self.setObjectName("plot-map")
        self.setToolTip("<b>Settings map</b><br>Lines of equal PaCO2 = VCO2·K(T) / (f·(VT·(1 − f_alv) − VD)) "
                        "(alveolar ventilation equation). Plateau = VT/C + PEEP; peak = plateau + R·VT/Ti "
                        "(equation of motion). Click a point to read it.")
        self.widget = _new_plot_widget(self)
        self.plot = self.widget.getPlotItem()
        self.plot.setLabel("bottom", "Tidal volume at the patient (mL)")
        self.plot.setLabel("left", "Rate (/min)")
        self.image = Picture()
        self.plot.addItem(self.image)
        # All lines of equal PaCO2 but the target in one item (NaN between them), the target in another.
        self.iso_other = Curve(connect="finite")
        self.iso_target = Curve(connect="finite")
        self.iso = [self.iso_other, self.iso_target]
        for c in self.iso:
            self.plot.addItem(c)
        self.iso_labels: list[PlotLabel] = []
        for _ in range(self.N_LINES):
            t = _text_item(DAY.plot_fg, anchor=(1, 1))
            self.plot.addItem(t)
            self.iso_labels.append(t)
        self.box = Curve()
        self.plot.addItem(self.box)
        self.box_label = _text_item(DAY.plot_fg, anchor=(0, 1))
        self.plot.addItem(self.box_label)
        self.peak_curve = Curve(connect="finite")
        self.plot.addItem(self.peak_curve)
        self.peak_label = _text_item(DAY.plot_fg, anchor=(0, 0), angle=90)
        self.plot.addItem(self.peak_label)
        self.plateau_line = pg.InfiniteLine(angle=90, movable=False)
        self.plot.addItem(self.plateau_line)
        self.plateau_label = _text_item(DAY.plot_fg, anchor=(0, 0), angle=90)
        self.plot.addItem(self.plateau_label)
        self.dead_line = pg.InfiniteLine(angle=90, movable=False)
        self.plot.addItem(self.dead_line)
        self.dead_label = _text_item(DAY.plot_fg, anchor=(1, 0))
        self.plot.addItem(self.dead_label)
        self.trap_line = pg.InfiniteLine(angle=0, movable=False)
        self.plot.addItem(self.trap_line)
        self.trap_label = _text_item(DAY.plot_fg, anchor=(0, 1))
        self.plot.addItem(self.trap_label)
        self.point = Marker("o", self.fontMetrics().height() * 1.1)
        self.plot.addItem(self.point)
        self.probe = Marker("+", self.fontMetrics().height() * 1.1)
        self.plot.addItem(self.probe)
        self.readout = Text("", self, wrap=True, name="map-readout", lines=2)
        self.add_plot(self.widget)
        self.body.addWidget(self.readout)
        self.widget.scene().sigMouseClicked.connect(self._clicked)
        self.plot.vb.sigResized.connect(lambda *_: self._fit_dead_label())
        self.cache: dict = {}
        self.plan: Plan | None = None
        self.gas_unit = "mmHg"
        self.map: plotdata.SettingsMap | None = None
        self.probe_at: tuple[float, float] | None = None
        self.lut = np.zeros((2 * plotdata.N_ZONES, 4), dtype=np.uint8)
        self.set_theme(DAY)

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self._parts.clear()  # new colours: every part is set again
        self.widget.setBackground(theme.plot_bg)
        self.style_plot(self.plot, theme)
        band = QColor(theme.band)
        for z, col in enumerate(theme.zones):
            c = QColor(col)
            self.lut[z] = (c.red(), c.green(), c.blue(), 255)
            mix = QColor(int(c.red() * 0.45 + band.red() * 0.55), int(c.green() * 0.45 + band.green() * 0.55),
                         int(c.blue() * 0.45 + band.blue() * 0.55))
            self.lut[plotdata.N_ZONES + z] = (mix.red(), mix.green(), mix.blue(), 255)
        self.dead_line.setPen(_pen(theme.danger, 1.5, Qt.PenStyle.DotLine))
        for t in (*self.iso_labels, self.box_label, self.peak_label, self.plateau_label, self.trap_label,
                  self.dead_label):
            t.setColor(QColor(theme.plot_fg))
        self.box.setPen(_pen(theme.plot_fg, 1.5, Qt.PenStyle.DashLine))
        self.iso_other.setPen(_pen(theme.muted, 1.2, Qt.PenStyle.DotLine))
        self.iso_target.setPen(_pen(theme.target, 3.0))
        self.peak_curve.setPen(_pen(theme.caution if theme.key != "day" else "#b25d00", 2.5))
        self.plateau_line.setPen(_pen(theme.danger, 2.5))
        self.trap_line.setPen(_pen(theme.caution if theme.key != "day" else "#8a6a00", 2, Qt.PenStyle.DashDotLine))
        self.point.setBrush(QBrush(QColor(theme.point)))
        self.point.setPen(_pen(theme.plot_bg, 2))
        self.probe.setPen(_pen(theme.plot_fg, 3))
        self.probe.setBrush(QBrush(QColor(theme.plot_fg)))
        if self.plan is not None:
            self.show_plan(self.plan, self.gas_unit)

    def show_plan(self, plan: Plan, gas_unit: str) -> None:
        self.plan, self.gas_unit = plan, gas_unit
        ranges = plotdata.map_ranges(plan)
        (v0, v1), (r0, r1) = ranges
        m = plotdata.settings_map(plan, MAP_CELLS, MAP_CELLS, ranges=ranges)
        self.map = m
        if self.changed("image", (m.cell, ranges)):
            self.image.setImage(self.lut[m.cell], autoLevels=False)
            self.image.setRect(QRectF(v0, r0, v1 - v0, r1 - r0))
        lines = plotdata.isolines(plan, gas_unit, ranges=ranges)
        gap = np.array([np.nan])
        others = [x for x in lines if not x.is_target]
        if others and self.changed("isolines", tuple(others)):
            self.iso_other.setData(np.concatenate([a for x in others for a in (x.vt_ml, gap)]),
                                   np.concatenate([a for x in others for a in (x.rate_per_min, gap)]))
        target = next((x for x in lines if x.is_target), None)
        if target is not None and self.changed("target", target):
            self.iso_target.setData(target.vt_ml, target.rate_per_min)
        for i, lab in enumerate(self.iso_labels):
            line = lines[i] if i < len(lines) else None
            if line is None or line.label_at is None:
                _show(lab, False)
                continue
            num = fmt(_gas(line.level_mmhg, gas_unit), 3)
            _set_text(lab, f"{num} target" if line.is_target else num, bold=line.is_target)
            left = line.label_at[0] < v0 + 0.3 * (v1 - v0)  # near the left axis: write to the right
            _anchor(lab, (0, 1) if left else (1, 1))
            lab.setPos(*line.label_at)
            _show(lab, True)
        lim = plan.limits
        if self.changed("box", (lim.vt_min_ml, lim.vt_max_ml, lim.rate_min_per_min, lim.rate_max_per_min)):
            self.box.setData([lim.vt_min_ml, lim.vt_max_ml, lim.vt_max_ml, lim.vt_min_ml, lim.vt_min_ml],
                             [lim.rate_min_per_min, lim.rate_min_per_min, lim.rate_max_per_min,
                              lim.rate_max_per_min, lim.rate_min_per_min])
        _set_text(self.box_label, "usual range")
        self.box_label.setPos(lim.vt_min_ml, lim.rate_max_per_min)
        rates = np.linspace(max(r0, 0.25), r1, 120)
        pv = plotdata.pressure_boundary_vt(plan, rates)
        pv[(pv > v1) | (pv < v0)] = np.nan
        if self.changed("peak", (pv, rates)):
            self.peak_curve.setData(pv, rates)
        finite = np.nonzero(np.isfinite(pv))[0]
        peak_name = "inspiratory pressure" if plan.resolved.mode == "pressure" else "peak"
        if finite.size:
            j = finite[0]
            _set_text(self.peak_label, f"{peak_name} > limit")
            self.peak_label.setPos(pv[j], r0 + 0.03 * (r1 - r0))
            _show(self.peak_label, True)
        else:
            _show(self.peak_label, False)
        vt_plat = lim.vt_pressure_max_ml
        self.plateau_line.setPos(vt_plat)
        _show(self.plateau_line, v0 < vt_plat < v1)
        _set_text(self.plateau_label, "plateau > limit")
        self.plateau_label.setPos(vt_plat, r0 + 0.03 * (r1 - r0))
        _show(self.plateau_label, v0 < vt_plat < v1)
        vd = plotdata.all_dead_space_vt_ml(plan)
        self.dead_line.setPos(vd)
        _show(self.dead_line, v0 < vd < v1)
        _set_text(self.dead_label, "no gas exchange")
        self.dead_label.setPos(vd, r0 + 0.5 * (r1 - r0))
        self._dead_at = (vd, v0, v1)  # shown or not by _fit_dead_label below
        trap = plotdata.trapping_rate_per_min(plan, rate_hi=r1)
        self.trap_line.setPos(trap if math.isfinite(trap) else r1 * 2)
        _show(self.trap_line, math.isfinite(trap) and r0 < trap < r1)
        _set_text(self.trap_label, "↑ expiration under 3 τ")
        self.trap_label.setPos(v0 + (v1 - v0) * 0.02, trap if math.isfinite(trap) else r1 * 2)
        _show(self.trap_label, math.isfinite(trap) and r0 < trap < r1)
        v = plan.ventilation
        if self.changed("point", (v.tidal_volume_ml, v.rate_per_min)):
            self.point.setData([v.tidal_volume_ml], [v.rate_per_min])
        _set_range(self.plot.vb, (v0, v1), (r0, r1), self.cache)
        self._fit_dead_label()
        lo, hi = m.band_mmhg
        self.set_caption(
            f"Lines: PaCO2 in {gas_unit}, bold = target; green band {fmt(_gas(lo, gas_unit), 3)}–"
            f"{fmt(_gas(hi, gas_unit), 3)}. Shaded: grey outside the dashed usual range, yellow expiration "
            f"< 3 τ, orange {peak_name} > limit, red plateau > limit, dark: all dead space. ● plan.")
        if self.probe_at is not None:
            self._show_probe(*self.probe_at)
        else:
            if self.probe.data.size:
                self.probe.setData([], [])
            self.readout.setText("Click any point to read its PaCO2 and pressures.")

    def _fit_dead_label(self) -> None:
        """Show the 'no gas exchange' label only where the dark zone is wide enough to hold it."""
        vd, v0, v1 = getattr(self, "_dead_at", (0.0, 0.0, 1.0))
        vb = self.plot.vb
        (x0, x1), _ = vb.viewRange()
        px = (vd - v0) * vb.width() / (x1 - x0) if x1 > x0 else 0.0  # the view's scale, as it maps to pixels
        _show(self.dead_label, px > self.fontMetrics().horizontalAdvance("no gas exchange") + 6)

    def _clicked(self, ev) -> None:
        if self.plan is None or ev.button() != Qt.MouseButton.LeftButton:
            return
        pos = ev.scenePos()
        if not self.plot.vb.sceneBoundingRect().contains(pos):
            return
        pt = self.plot.vb.mapSceneToView(pos)
        self.probe_point(pt.x(), pt.y())

    def probe_point(self, vt_ml: float, rate: float) -> plotdata.PointSummary | None:
        if self.plan is None or vt_ml <= 0 or rate <= 0:
            return None
        self.probe_at = (vt_ml, rate)
        return self._show_probe(vt_ml, rate)

    def _show_probe(self, vt_ml: float, rate: float) -> plotdata.PointSummary:
        s = plotdata.point_summary(self.plan, vt_ml, rate)
        self.probe.setData([vt_ml], [rate])
        u = self.gas_unit
        if math.isfinite(s.paco2_mmhg):
            gas_txt = f"PaCO2 ≈ {_gas_fmt(s.paco2_mmhg, u)} (EtCO2 ≈ {_gas_fmt(s.etco2_mmhg, u)})"
        else:
            gas_txt = "NO alveolar ventilation (breath smaller than the dead space)"
        zone = "" if s.zone == plotdata.ZONE_USUAL else f" — {plotdata.ZONE_LABELS[s.zone]}"
        self.readout.setText(
            f"+ {fmt(s.vt_ml)} mL ({fmt(s.vt_ml_kg)} mL/kg) × {fmt(s.rate_per_min)}/min: {gas_txt}; plateau "
            f"{fmt(s.plateau_cmh2o)}, {s.top_name} {fmt(s.top_cmh2o)} cmH2O; expiration {fmt(s.te_tau, 2)} τ"
            f"{zone}.")
        self.probed.emit(s)
        return s


# ---------------------------------------------------------------------------------------------


class WaveformPlot(PlotCard):
    """Airway pressure, flow and volume over three breaths at the recommended settings."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Airway pressure, flow and volume (3 breaths)", parent)
        self.setObjectName("plot-waves")
        self.setToolTip("<b>Airway waveforms</b><br>Passive single-compartment lung, P = V/C + R·V̇ + PEEP; "
                        "expiration empties as e^(−t/τ) with τ = R·C.")
        self.widget = pg.GraphicsLayoutWidget(self)
        self.widget.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        self.widget.setMinimumHeight(self.fontMetrics().height() * 12)
        self.plots: list[PlotArea] = []
        for i, unit in enumerate(("cmH2O", "L/min", "mL")):
            p = PlotArea()
            self.widget.addItem(p, row=i, col=0)
            p.setLabel("left", unit)
            p.getAxis("left").enableAutoSIPrefix(False)  # tiny patients: no "(x0.001)" over the unit label
            if i < 2:
                p.getAxis("bottom").setStyle(showValues=False)
            self.plots.append(p)
        self.plots[-1].setLabel("bottom", "Time (s)")
        fm = self.fontMetrics()
        for p in self.plots:  # equal axis widths keep the three time axes aligned
            p.getAxis("left").setWidth(fm.height() * 2 + fm.horizontalAdvance("00 limit"))
        self.curves = [Curve() for _ in self.plots]
        for p, c in zip(self.plots, self.curves, strict=True):
            p.addItem(c)
        self.limit_line = pg.InfiniteLine(angle=0, movable=False)
        self.peep_line = pg.InfiniteLine(angle=0, movable=False)
        self.plots[0].addItem(self.limit_line)
        self.plots[0].addItem(self.peep_line)
        self.zero_flow = pg.InfiniteLine(pos=0, angle=0, movable=False)
        self.plots[1].addItem(self.zero_flow)
        self.left_line = pg.InfiniteLine(angle=0, movable=False)
        self.plots[2].addItem(self.left_line)
        self.add_plot(self.widget)
        self.caches = [{}, {}, {}]
        self.data: plotdata.Waveforms | None = None
        self.set_theme(DAY)

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.widget.setBackground(theme.plot_bg)
        for p in self.plots:
            self.style_plot(p, theme)
        w = theme.line_width
        for c, col in zip(self.curves, (theme.pressure, theme.flow, theme.volume), strict=True):
            c.setPen(_pen(col, w))
        self.limit_line.setPen(_pen(theme.danger, 1.5, Qt.PenStyle.DashLine))
        self.peep_line.setPen(_pen(theme.muted, 1, Qt.PenStyle.DotLine))
        self.zero_flow.setPen(_pen(theme.muted, 1))
        self.left_line.setPen(_pen(theme.caution, 1.5, Qt.PenStyle.DashLine))

    def show_plan(self, plan: Plan) -> None:
        w = plotdata.waveforms(plan)
        p = plan.pressures
        if not self.changed("shown", (w, p.pressure_limit_cmh2o, p.peep_cmh2o, p.time_constant_s,
                                      plan.ventilation.te_s)):
            return  # nothing this plot shows has changed: not drawn again
        self.data = w
        for c, y in zip(self.curves, (w.pressure_cmh2o, w.flow_l_min, w.volume_ml), strict=True):
            c.setData(w.time_s, y)
        p = plan.pressures
        self.limit_line.setPos(p.pressure_limit_cmh2o)
        self.peep_line.setPos(p.peep_cmh2o)
        # Ticks only at the numbers that matter (PEEP, the limit, the tidal volume): small plots stay legible.
        # Ticks only at PEEP, the limit and half-scale marks: they change rarely, so the axes are not redrawn
        # on every edit, and small plots stay legible.
        h_q, h_v = w.flow_range[1] / 2, w.volume_range[1] / 2
        ticks = (sorted({(p.peep_cmh2o, fmt(p.peep_cmh2o)),
                         (p.pressure_limit_cmh2o, f"{fmt(p.pressure_limit_cmh2o)} limit")}),
                 [(-h_q, fmt(-h_q)), (h_q, fmt(h_q))],
                 [(0.0, "0"), (h_v, fmt(h_v))])
        for plot, tk, cache in zip(self.plots, ticks, self.caches, strict=True):
            if cache.get("ticks") != tk:
                cache["ticks"] = tk
                plot.getAxis("left").setTicks([tk, []])
        self.left_line.setPos(w.end_expiratory_ml)
        _show(self.left_line, not w.complete)
        for plot, cache, yr in zip(self.plots, self.caches, (w.pressure_range, w.flow_range, w.volume_range),
                                   strict=True):
            _set_range(plot.vb, w.time_range, yr, cache)
        if w.complete:
            self.set_caption(f"Expiration complete: Te {fmt(plan.ventilation.te_s)} s = {fmt(w.te_tau, 2)} time "
                             f"constants (τ {fmt(p.time_constant_s)} s); flow returns to zero before the next breath.")
        else:
            self.set_caption(f"EXPIRATION INCOMPLETE: Te {fmt(plan.ventilation.te_s)} s is only {fmt(w.te_tau, 2)} "
                             f"τ; {fmt(w.end_expiratory_ml)} mL ({fmt(w.end_expiratory_fraction * 100, 2)} % of the "
                             f"breath) is still in the lung when the next breath starts (auto-PEEP ≈ "
                             f"{fmt(w.auto_peep_cmh2o, 2)} cmH2O). Dashed line: that volume.")

    def curve_data(self) -> list[np.ndarray]:
        return [c.getData()[1] for c in self.curves]


# ---------------------------------------------------------------------------------------------


class SensitivityPlot(PlotCard):
    """Predicted PaCO2 against apparatus dead space at the recommended tidal volume and rate."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Dead-space sensitivity", parent)
        self.setObjectName("plot-sensitivity")
        self.setToolTip("<b>Dead-space sensitivity</b><br>PaCO2 at the recommended VT and rate as apparatus dead "
                        "space changes (alveolar ventilation equation).")
        self.widget = _new_plot_widget(self)
        self.plot = self.widget.getPlotItem()
        self.plot.setLabel("bottom", "Apparatus + tube dead space (mL)")
        self.band = pg.LinearRegionItem(orientation="horizontal", movable=False)
        self.plot.addItem(self.band)
        self.curve = Curve(connect="finite")
        self.plot.addItem(self.curve)
        self.now_line = pg.InfiniteLine(angle=90, movable=False)
        self.plot.addItem(self.now_line)
        self.now = Marker("o", self.fontMetrics().height() * 0.9)
        self.plot.addItem(self.now)
        self.now_label = _text_item(DAY.plot_fg, anchor=(1.15, 0.5))
        self.plot.addItem(self.now_label)
        self.add_plot(self.widget)
        self.cache: dict = {}
        self.data: plotdata.Sensitivity | None = None
        self.gas_unit = "mmHg"
        self.set_theme(DAY)

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.widget.setBackground(theme.plot_bg)
        self.style_plot(self.plot, theme)
        self.curve.setPen(_pen(theme.accent, theme.line_width + 0.5))
        band = QColor(theme.band)
        band.setAlpha(200)
        self.band.setBrush(QBrush(band))
        for line in self.band.lines:
            line.setPen(_pen(theme.ok, 1))
        self.now_line.setPen(_pen(theme.plot_fg, 1.5, Qt.PenStyle.DashLine))
        self.now.setBrush(QBrush(QColor(theme.point)))
        self.now.setPen(_pen(theme.plot_bg, 2))
        self.now_label.setColor(QColor(theme.plot_fg))

    def show_plan(self, plan: Plan, gas_unit: str) -> None:
        s = plotdata.dead_space_sensitivity(plan)
        v = plan.ventilation
        if not self.changed("shown", (s, gas_unit, v.tidal_volume_ml, v.rate_per_min)):
            return  # nothing this plot shows has changed: not drawn again
        self.data, self.gas_unit = s, gas_unit
        if self.cache.get("label") != gas_unit:  # a new label redraws the axis: only on a unit change
            self.cache["label"] = gas_unit
            self.plot.setLabel("left", f"PaCO2 ({gas_unit})")
        self.curve.setData(s.apparatus_ml, _gas(s.paco2_mmhg, gas_unit))
        self.band.setRegion((_gas(s.band_mmhg[0], gas_unit), _gas(s.band_mmhg[1], gas_unit)))
        self.now_line.setPos(s.current_ml)
        y_hi = _gas(s.y_range[1], gas_unit)
        cur = s.current_paco2_mmhg
        shown = _gas(min(cur, s.y_range[1]) if math.isfinite(cur) else s.y_range[1], gas_unit)
        shown = min(shown, 0.96 * y_hi)
        self.now.setData([s.current_ml], [shown])
        _set_text(self.now_label, "now" if math.isfinite(cur) and cur <= s.y_range[1] else "now (off the scale)")
        _anchor(self.now_label, (-0.15, 0.5) if s.current_ml < 0.5 * s.x_range[1] else (1.1, 0.5))
        self.now_label.setPos(s.current_ml, shown)
        _set_range(self.plot.vb, s.x_range, (0.0, y_hi), self.cache)
        if math.isfinite(cur):
            slope = _gas(s.slope_mmhg_per_ml, gas_unit)
            i = int(np.argmin(np.abs(s.apparatus_ml - s.current_ml)))
            self.set_caption(
                f"At {fmt(v.tidal_volume_ml)} mL × {fmt(v.rate_per_min)}/min, the {fmt(s.current_ml)} mL of apparatus "
                f"now fitted gives PaCO2 ≈ {_gas_fmt(cur, gas_unit)}; each further mL adds about "
                f"{fmt(slope, 2)} {gas_unit}. No gas exchange at all beyond {fmt(s.no_exchange_ml)} mL. To hold the "
                f"target at this rate, minute volume must be {fmt(s.minute_needed_ml_min[i] / 1000)} L/min.")
        else:
            self.set_caption(f"The {fmt(s.current_ml)} mL of apparatus fitted leaves no alveolar ventilation at "
                             f"{fmt(v.tidal_volume_ml)} mL per breath: remove apparatus first.")

    def curve_data(self) -> np.ndarray:
        return self.curve.getData()[1]
