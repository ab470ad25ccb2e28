"""Gill irrigation for fish and aquatic amphibians: inputs, the plan, cautions and two plots, in one panel.

A self-contained view of :mod:`ventset.aquatic` (it computes nothing itself). ``install(window)`` adds it to
ventset's MainWindow through ``window.add_panel``; the panel's entries are kept in the window's settings, so
they survive a restart. Its case file and printout (open, save, PDF, print) are the row of buttons at the top,
``ventset.gui.aquatic_case.CaseBar``. Every label is plain text.
"""

from __future__ import annotations

import pyqtgraph as pg
from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtGui import QColor
from PySide6.QtWidgets import (
    QComboBox,
    QFrame,
    QGridLayout,
    QLabel,
    QLineEdit,
    QScrollArea,
    QSizePolicy,
    QVBoxLayout,
    QWidget,
)

from ventset.aquatic.data import AquaticData, aquatic_data
from ventset.aquatic.inputs import AQUATIC_FIELDS, key_of_label
from ventset.aquatic.irrigation import IrrigationPlan, plan_irrigation, request_from_texts
from ventset.aquatic.plotdata import content_curve, delivery_curve
from ventset.aquatic.report import summary_lines
from ventset.errors import InputError
from ventset.gui.aquatic_case import CaseBar
from ventset.gui.plotarea import PlotView
from ventset.gui.plots import _new_plot_widget, _pen
from ventset.gui.text import Text
from ventset.gui.theme import DAY, SEVERITY_WORD, Theme, scaled_font, severity_colours
from ventset.model import STANDING_NOTICE
from ventset.units import fmt

# key, placeholder (shown when empty: the default the plan uses)
ENTRIES = (
    ("mass", "e.g. 2 kg"), ("water-temperature", "group default"), ("salinity", "group default (0 fresh, 35 sea)"),
    ("altitude", "0 m"), ("barometric-pressure", "from altitude"), ("saturation", "100 % (or mg/L)"),
    ("duration", "60 min"), ("system-volume", "single pass"), ("vo2", "from allometry"),
    ("extraction", "group usual"), ("demand-factor", "1.5"),
)
DEFAULTS = {"species": "carp_koi", "mass": "2 kg", "water-temperature": "20", "salinity": "0"}


def _plain_label(text: str, parent: QWidget) -> QLabel:
    label = QLabel(text, parent)
    label.setTextFormat(Qt.TextFormat.PlainText)
    return label


def _plot(parent: QWidget, x_label: str, y_label: str) -> PlotView:
    w = _new_plot_widget(parent)
    w.setMinimumHeight(w.fontMetrics().height() * 14)
    for name, text in (("bottom", x_label), ("left", y_label)):
        ax = w.getAxis(name)
        ax.enableAutoSIPrefix(False)
        ax.setLabel(text)
    return w


class AquaticPanel(QWidget):
    """Plan gill irrigation: edit an input and the plan, cautions and plots follow (one replan per edit burst)."""

    plan_ready = Signal(object)     # IrrigationPlan
    plan_invalid = Signal(object)   # InputError

    def __init__(self, data: AquaticData | None = None, values: dict[str, str] | None = None,
                 parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("aquatic-panel")
        self.data = data or aquatic_data()
        self.theme: Theme = DAY
        self.plan: IrrigationPlan | None = None
        self.error: InputError | None = None
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.replan)
        self._build()
        self.set_values({**DEFAULTS, **(values or {})})
        self.replan()

    # ------------------------------------------------------------------ layout
    def _build(self) -> None:
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        scroll = QScrollArea(self)
        scroll.setWidgetResizable(True)
        scroll.setFrameShape(QFrame.Shape.NoFrame)
        scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        outer.addWidget(scroll)
        body = QWidget(scroll)
        scroll.setWidget(body)
        col = QVBoxLayout(body)  # one column: the tab is narrow beside the planner's inputs and cautions
        m = self.fontMetrics().height() // 2
        col.setContentsMargins(m, m, m, m)
        col.setSpacing(m)
        self.scope = Text("Plans gill irrigation for a fish or aquatic amphibian on its own: the settings, status "
                          "line and cautions outside this tab belong to the ventilated patient, not to the fish.",
                          body, wrap=True, name="aquatic-scope", lines=2)
        col.addWidget(self.scope)
        self.case_bar = CaseBar(self, body)  # open / save the fish case, PDF and print
        col.addWidget(self.case_bar)
        col.addWidget(self._build_form(body))
        self.error_text = Text("", body, wrap=True, name="aquatic-error", lines=1)
        col.addWidget(self.error_text)
        self.headline = Text("", body, wrap=True, name="aquatic-headline", lines=2)
        self.headline.setFont(scaled_font(self.font(), 1.35, bold=True))
        col.addWidget(self.headline)
        self.summary_box = QVBoxLayout()
        self.summary_box.setSpacing(m // 3)
        self.summary_rows: list[Text] = []
        col.addLayout(self.summary_box)
        self.cautions_box = QVBoxLayout()
        self.caution_rows: list[Text] = []
        col.addLayout(self.cautions_box)
        self.flow_plot = _plot(body, "Water flow", "O2 (mg/h)")
        self.content_plot = _plot(body, "Water temperature (°C)", "O2 in water (mg/L)")
        self.flow_caption = Text("", body, wrap=True, name="aquatic-flow-caption", lines=3)
        self.content_caption = Text("", body, wrap=True, name="aquatic-content-caption", lines=2)
        for title, plot, cap in (("O2 delivered and the fish's need, across flow", self.flow_plot, self.flow_caption),
                                 ("O2 content of the water against temperature", self.content_plot,
                                  self.content_caption)):
            head = _plain_label(title, body)
            head.setFont(scaled_font(self.font(), 1.05, bold=True))
            col.addWidget(head)
            col.addWidget(plot)
            col.addWidget(cap)
        self._make_plot_items()
        self.notice = Text(STANDING_NOTICE, body, wrap=True, name="aquatic-notice", lines=2)
        col.addWidget(self.notice)
        col.addStretch(1)
        self.set_theme(self.theme)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)

    def _build_form(self, parent: QWidget) -> QWidget:
        box = QWidget(parent)
        grid = QGridLayout(box)
        grid.setContentsMargins(0, 0, 0, 0)
        self.species = QComboBox(box)
        self.species.setObjectName("aquatic-species")
        self.species.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.species.setMinimumContentsLength(20)
        for g in self.data.groups.values():
            self.species.addItem(g.label, g.key)
        self.species.currentIndexChanged.connect(lambda _i: self._changed())
        grid.addWidget(_plain_label("Species group", box), 0, 0)
        grid.addWidget(self.species, 0, 1, 1, 3)
        name = QLineEdit(box)  # the patient's name, for the case file and the printout
        name.setObjectName("aquatic-name")
        name.setPlaceholderText("optional")
        name.setAccessibleName("Patient name")
        name.textEdited.connect(lambda _t: self._changed())
        self.edits: dict[str, QLineEdit] = {"name": name}
        self.labels: dict[str, QLabel] = {"name": _plain_label("Patient name", box)}
        self.labels["name"].setBuddy(name)
        grid.addWidget(self.labels["name"], 1, 0)
        grid.addWidget(name, 1, 1, 1, 3)
        for ix, (key, hint) in enumerate(ENTRIES):
            spec = AQUATIC_FIELDS[key]
            edit = QLineEdit(box)
            edit.setObjectName(f"aquatic-{key}")
            edit.setPlaceholderText(hint)
            edit.setToolTip(spec.help)
            edit.setAccessibleName(spec.label)
            edit.textEdited.connect(lambda _t: self._changed())
            label = _plain_label(spec.label, box)
            label.setBuddy(edit)
            self.edits[key], self.labels[key] = edit, label
            row, pair = 2 + ix // 2, ix % 2
            grid.addWidget(label, row, 2 * pair)
            grid.addWidget(edit, row, 2 * pair + 1)
        grid.setColumnStretch(1, 1)
        grid.setColumnStretch(3, 1)
        return box

    def _make_plot_items(self) -> None:
        p = self.flow_plot
        self.zone_short = pg.LinearRegionItem(movable=False)
        self.zone_margin = pg.LinearRegionItem(movable=False)
        self.zone_met = pg.LinearRegionItem(movable=False)
        for z in (self.zone_short, self.zone_margin, self.zone_met):
            for line in z.lines:
                line.setPen(_pen("#00000000", 0))
            p.addItem(z)
        self.bar_clinical = p.plot([], [])
        self.curve_usual = p.plot([], [])
        self.curve_conservative = p.plot([], [])
        self.line_need = pg.InfiniteLine(angle=0, movable=False)
        self.line_chosen = pg.InfiniteLine(angle=90, movable=False)
        self.line_high = pg.InfiniteLine(angle=90, movable=False)
        for item in (self.line_need, self.line_chosen, self.line_high):
            p.addItem(item)
        c = self.content_plot
        self.curve_fresh = c.plot([], [])
        self.curve_saturated = c.plot([], [])
        self.curve_supply = c.plot([], [])
        self.point = pg.ScatterPlotItem(size=10)
        c.addItem(self.point)

    # ------------------------------------------------------------------ values
    def values(self) -> dict[str, str]:
        """What is entered (text as typed), keyed like the CLI options; 'species' is the group key."""
        out = {key: e.text() for key, e in self.edits.items()}
        out["species"] = str(self.species.currentData())
        return out

    def set_values(self, values: dict[str, str]) -> None:
        """Fill the inputs (unknown keys ignored) and replan once."""
        ix = self.species.findData(values.get("species", ""))
        self.species.blockSignals(True)
        if ix >= 0:
            self.species.setCurrentIndex(ix)
        self.species.blockSignals(False)
        for key, edit in self.edits.items():
            if key in values:
                edit.setText(str(values[key]))
        self._changed()

    def set_field(self, key: str, text: str) -> None:
        """Set one input as if typed (tests, scripts)."""
        self.edits[key].setText(text)
        self._changed()

    def _changed(self) -> None:
        self._timer.start()

    # ------------------------------------------------------------------ plan
    def replan(self) -> None:
        """Parse every input and plan; a bad input marks its field and keeps the last plan, marked stale."""
        self._timer.stop()
        try:
            values = self.values()
            plan = plan_irrigation(request_from_texts(values, name=values.get("name", "")), self.data)
        except InputError as err:
            self._show_error(err)
            return
        self.error = None
        self._mark(None)
        self.error_text.setText("")
        self.plan = plan
        self._show(plan)
        self.plan_ready.emit(plan)

    def _show_error(self, err: InputError) -> None:
        self.error = err
        self.error_text.setText(f"Not current: {err}")
        self.error_text.setColour(self.theme.danger)
        self._mark("name" if err.field == "Patient name" else key_of_label(err.field))
        if self.plan is not None:
            self.headline.setText("STALE — the last valid plan is shown; correct the marked entry")
        self.plan_invalid.emit(err)

    def _mark(self, key: str | None) -> None:
        for k, edit in self.edits.items():
            bad = k == key
            edit.setStyleSheet(f"border: 2px solid {self.theme.danger};" if bad else "")
            edit.setAccessibleDescription("invalid entry" if bad else "")

    def _show(self, plan: IrrigationPlan) -> None:
        i, m = plan.irrigation, plan.metabolism
        unit = "mL/min" if i.flow_l_min < 0.1 else "L/min"
        k = 1000.0 if unit == "mL/min" else 1.0
        self.headline.setText(f"Flow {fmt(i.flow_l_min * k)} {unit} (range {fmt(i.flow_range_l_min[0] * k)}-"
                              f"{fmt(i.flow_range_l_min[1] * k)} {unit}) for {fmt(m.vo2_mg_h)} mg O2/h")
        self._fill_rows(self.summary_box, self.summary_rows, [(s, "") for s in summary_lines(plan)])
        self._show_cautions(plan)
        self._show_flow_plot(plan)
        self._show_content_plot(plan)

    def _fill_rows(self, box: QVBoxLayout, rows: list[Text], lines: list[tuple[str, str]]) -> None:
        """Show ``lines`` (text, colour or "") one per wrapped row, reusing the rows already made."""
        while len(rows) < len(lines):
            row = Text("", self, wrap=True, name="aquatic-row", lines=1)
            box.addWidget(row)
            rows.append(row)
        for ix, row in enumerate(rows):
            if ix < len(lines):
                text, colour = lines[ix]
                row.setText(text)
                row.setColour(colour or None)
            row.setVisible(ix < len(lines))

    def _show_cautions(self, plan: IrrigationPlan) -> None:
        self._fill_rows(self.cautions_box, self.caution_rows, [
            (f"{SEVERITY_WORD.get(c.severity, c.severity.upper())} · {c.code}: {c.message}",
             severity_colours(self.theme, c.severity)[0]) for c in plan.cautions])

    def _show_flow_plot(self, plan: IrrigationPlan) -> None:
        d = delivery_curve(plan)
        self.flow_plot.getAxis("bottom").setLabel(f"Water flow ({d.flow_unit})")
        self.curve_usual.setData(d.flow, d.delivered_usual_mg_h)
        self.curve_conservative.setData(d.flow, d.delivered_conservative_mg_h)
        self.line_need.setPos(d.need_mg_h)
        self.line_chosen.setPos(d.flow_chosen)
        self.line_high.setPos(d.high_flow)
        self.line_high.setVisible(d.high_flow <= d.x_range[1])
        self.zone_short.setRegion((d.x_range[0], d.flow_usual))
        self.zone_margin.setRegion((d.flow_usual, d.flow_conservative))
        self.zone_met.setRegion((d.flow_conservative, d.x_range[1]))
        self.bar_clinical.setVisible(d.clinical is not None)
        if d.clinical is not None:
            y = d.y_range[1] * 0.03
            self.bar_clinical.setData([d.clinical[0], d.clinical[1]], [y, y])
        self.flow_plot.getPlotItem().vb.setRange(xRange=d.x_range, yRange=d.y_range, padding=0, disableAutoRange=True)
        clinical = "" if d.clinical is None else (f" Thick bar along the axis: per-kg practice "
                                                   f"{fmt(d.clinical[0])}-{fmt(d.clinical[1])} {d.flow_unit}.")
        self.flow_caption.setText(
            f"O2 delivered at usual (solid) and conservative (dashed) extraction against the need "
            f"({fmt(d.need_mg_h)} mg/h, horizontal). Red: below {fmt(d.flow_usual)} {d.flow_unit} the gills would "
            f"have to extract more than usual; amber: met only above conservative extraction; green: met even at "
            f"conservative extraction; vertical line: the "
            f"planned {fmt(d.flow_chosen)} {d.flow_unit}; dotted: {fmt(d.high_flow)} {d.flow_unit}, where irrigated "
            f"trout stopped breathing movements.{clinical}")

    def _show_content_plot(self, plan: IrrigationPlan) -> None:
        c = content_curve(plan)
        self.curve_fresh.setData(c.temp_c, c.fresh_sea_level_mg_l)
        self.curve_saturated.setData(c.temp_c, c.saturated_mg_l)
        self.curve_supply.setData(c.temp_c, c.supply_mg_l)
        self.point.setData([c.point[0]], [c.point[1]])
        self.content_plot.getPlotItem().vb.setRange(xRange=c.x_range, yRange=c.y_range, padding=0,
                                                    disableAutoRange=True)
        w = plan.water
        self.content_caption.setText(
            f"Air-saturated water at salinity {fmt(c.salinity)} and {fmt(w.barometric_mmhg)} mmHg (solid), the "
            f"supply at {fmt(w.saturation_percent)} % (dashed), fresh water at sea level (dotted); the dot is this "
            f"water: {fmt(w.o2_mg_l)} mg/L at {fmt(w.temp_c)} °C (Garcia & Gordon 1992).")

    # ------------------------------------------------------------------ appearance
    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        for w in (self.flow_plot, self.content_plot):
            w.setBackground(theme.plot_bg)
            for name in ("left", "bottom"):
                ax = w.getAxis(name)
                ax.setPen(_pen(theme.plot_fg, 1))
                ax.setTextPen(QColor(theme.plot_fg))
        danger, caution = QColor(theme.danger_bg), QColor(theme.caution_bg)
        band = QColor(theme.band)
        self.zone_short.setBrush(danger)
        self.zone_margin.setBrush(caution)
        self.zone_met.setBrush(band)
        self.bar_clinical.setPen(_pen(theme.accent, 6))
        self.curve_usual.setPen(_pen(theme.flow, theme.line_width))
        self.curve_conservative.setPen(_pen(theme.flow, theme.line_width, Qt.PenStyle.DashLine))
        self.line_need.setPen(_pen(theme.target, theme.line_width))
        self.line_chosen.setPen(_pen(theme.point, theme.line_width))
        self.line_high.setPen(_pen(theme.muted, 1.5, Qt.PenStyle.DotLine))
        self.curve_fresh.setPen(_pen(theme.muted, 1.5, Qt.PenStyle.DotLine))
        self.curve_saturated.setPen(_pen(theme.pressure, theme.line_width))
        self.curve_supply.setPen(_pen(theme.volume, theme.line_width, Qt.PenStyle.DashLine))
        self.point.setBrush(QColor(theme.point))
        self.point.setPen(_pen(theme.point, 1))
        self.notice.setColour(theme.muted)
        self.scope.setColour(theme.info)
        if self.plan is not None:
            self._show(self.plan)


def install(window) -> AquaticPanel:
    """Add the panel to ventset's MainWindow as the tab "Fish irrigation"; entries persist in its settings."""
    panel = attach(window)
    window.add_panel("Fish irrigation", panel)
    return panel


def attach(window, parent: QWidget | None = None) -> AquaticPanel:
    """The panel wired to ``window`` as ``install`` wires it, but not added to it (for a tab that builds its
    panel when first shown: ventset.gui.ondemand)."""
    settings = getattr(window, "settings", None)
    stored: dict[str, str] = {}
    if settings is not None:
        for key in ("species", "name", *AQUATIC_FIELDS):
            value = settings.value(f"aquatic/{key}")
            if isinstance(value, str):
                stored[key] = value
    panel = AquaticPanel(None, stored, parent=parent or window)

    def save(_plan: object = None) -> None:
        if settings is not None:
            for key, value in panel.values().items():
                settings.setValue(f"aquatic/{key}", value)

    panel.plan_ready.connect(save)
    panel.plan_invalid.connect(save)
    if hasattr(window, "theme_changed"):
        window.theme_changed.connect(panel.set_theme)
        panel.set_theme(window.theme)
    return panel
