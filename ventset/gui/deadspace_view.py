"""Dead space, step by step: drag a part's volume or the tube length and watch the breath move.

Opened from View → "Dead space, step by step…" for the main window's current patient. With the settings
held (the ventilator left alone) the breath keeps its tidal volume and rate, so more dead space shows as less
gas exchanged per breath, a higher PaCO2 and a larger minute volume needed to hold the target; the point
where gas exchange stops is marked. A thin view over ``ventset.teaching`` (every number is a plan).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtGui import QBrush, QColor
from PySide6.QtWidgets import (
    QCheckBox,
    QDialog,
    QGridLayout,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QSlider,
    QVBoxLayout,
    QWidget,
)

from ventset.errors import InputError
from ventset.gui.plots import BreathPlot, PlotCard, _gas, _new_plot_widget, _pen, _set_range, _set_text, _text_item
from ventset.gui.readouts import NoticeBanner
from ventset.gui.text import Text, plain
from ventset.gui.theme import DAY, Theme
from ventset.library import Library
from ventset.model import Plan
from ventset.plotdata import nice_ceiling
from ventset.present.quantities import Units, fmt, show
from ventset.present.rows import one_line, patient_line
from ventset.teaching import Lesson, LessonInputs, axis_ml, lesson, start

STEPS = 1000  # slider positions (at least half as many) from 0 to its largest volume or length
READOUT_LINES = 9


def slider_step(top: float) -> float:
    """A round step (1, 2 or 5 × a power of ten) giving at least STEPS/2 positions up to ``top``."""
    raw = max(top, 1e-6) / STEPS
    power = 10 ** math.floor(math.log10(raw))
    return next(k * power for k in (1, 2, 5, 10) if k * power >= raw)


class VolumeSlider(QWidget):
    """A name, a slider from 0 to ``top`` in round steps and the value it holds (mL or cm)."""

    def __init__(self, name: str, unit: str, top: float, value: float, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.unit, self.step = unit, slider_step(max(top, value))
        self._exact, self._pos = 0.0, 0
        lay = QHBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.name = plain(QLabel(name, self))
        self.slider = QSlider(Qt.Orientation.Horizontal, self)
        self.slider.setRange(0, int(math.ceil(max(top, value) / self.step)))
        self.slider.setAccessibleName(name)
        self.shown = Text("", self, name="slider-value")
        lay.addWidget(self.name, 2)
        lay.addWidget(self.slider, 3)
        lay.addWidget(self.shown, 1)
        self.set_value(value)
        self.slider.valueChanged.connect(lambda _v: self._label())

    def value(self) -> float:
        """The value set (exactly, until the slider is moved), else the slider's step."""
        pos = self.slider.value()
        return self._exact if pos == self._pos else pos * self.step

    def set_value(self, value: float) -> None:
        """Move to ``value`` (shown at the nearest step; the slider grows when the value is past its end)."""
        self._exact = max(value, 0.0)
        self._pos = int(round(self._exact / self.step))
        if self._pos > self.slider.maximum():
            self.slider.setMaximum(self._pos)
        self.slider.setValue(self._pos)
        self._label()

    def _label(self) -> None:
        self.shown.setText(f"{fmt(self.value())} {self.unit}")


class LessonPlot(PlotCard):
    """PaCO2 at the held settings and the minute volume needed, against apparatus + tube dead space."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("What the dead space does", parent)
        self.zoom.hide()
        self.top_widget, self.low_widget = _new_plot_widget(self), _new_plot_widget(self)
        self.top, self.low = self.top_widget.getPlotItem(), self.low_widget.getPlotItem()
        self.low.setXLink(self.top)
        self.low.setLabel("bottom", "Apparatus + tube dead space (mL)")
        self.low.setLabel("left", "Minute volume needed (mL/min)")
        self.band = pg.LinearRegionItem(orientation="horizontal", movable=False)
        self.top.addItem(self.band)
        self.paco2 = pg.PlotCurveItem(connect="finite")
        self.top.addItem(self.paco2)
        self.minute = pg.PlotCurveItem(connect="finite")
        self.low.addItem(self.minute)
        self.now = pg.InfiniteLine(angle=90, movable=True)  # drag it: the added part takes up the difference
        self.now.setToolTip("Drag to change the added part's volume")
        self.top.addItem(self.now)
        self.now_low = pg.InfiniteLine(angle=90, movable=False)
        self.low.addItem(self.now_low)
        self.stops = [pg.InfiniteLine(angle=90, movable=False) for _ in range(2)]
        self.top.addItem(self.stops[0])
        self.low.addItem(self.stops[1])
        self.stop_label = _text_item(DAY.plot_fg, anchor=(1.05, 0))
        self.top.addItem(self.stop_label)
        self.body.addWidget(self.top_widget, 3)
        self.body.addWidget(self.low_widget, 2)
        self.body.addWidget(self.caption)
        self.cache: dict = {}
        self.cache_low: dict = {}
        self.gas_unit = "mmHg"
        self.set_theme(DAY)

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        for w, p in ((self.top_widget, self.top), (self.low_widget, self.low)):
            w.setBackground(theme.plot_bg)
            self.style_plot(p, theme)
        self.paco2.setPen(_pen(theme.accent, theme.line_width + 0.5))
        self.minute.setPen(_pen(theme.volume, theme.line_width + 0.5))
        band = QColor(theme.band)
        band.setAlpha(200)
        self.band.setBrush(QBrush(band))
        for line in (self.now, self.now_low):
            line.setPen(_pen(theme.plot_fg, 2, Qt.PenStyle.DashLine))
        self.now.setHoverPen(_pen(theme.accent, 3))
        for line in self.stops:
            line.setPen(_pen(theme.danger, 2.5, Qt.PenStyle.DotLine))
        self.stop_label.setColor(QColor(theme.danger))

    def show_lesson(self, ls: Lesson, gas_unit: str, minute_top: float) -> None:
        s = ls.sensitivity
        self.gas_unit = gas_unit
        if self.cache.get("unit") != gas_unit:
            self.cache["unit"] = gas_unit
            self.top.setLabel("left", f"PaCO2 at these settings ({gas_unit})")
        self.paco2.setData(s.apparatus_ml, _gas(s.paco2_mmhg, gas_unit))
        self.minute.setData(s.apparatus_ml, s.minute_needed_ml_min)
        self.band.setRegion((_gas(s.band_mmhg[0], gas_unit), _gas(s.band_mmhg[1], gas_unit)))
        self.now.blockSignals(True)
        self.now.setPos(ls.apparatus_ml)
        self.now.blockSignals(False)
        self.now_low.setPos(ls.apparatus_ml)
        for line in self.stops:
            line.setPos(ls.stop_ml)
        y_hi = _gas(s.y_range[1], gas_unit)
        _set_text(self.stop_label, f"gas exchange stops at {fmt(ls.stop_ml)} mL")
        self.stop_label.setPos(ls.stop_ml, y_hi * 0.98)
        _set_range(self.top.vb, s.x_range, (0.0, y_hi), self.cache)
        _set_range(self.low.vb, s.x_range, (0.0, minute_top), self.cache_low)


class DeadSpaceView(QDialog):
    """The teaching view for one patient (``set_first`` starts again from another plan)."""

    def __init__(self, library: Library, first: Plan, *, gas_unit: str = "mmHg", theme: Theme = DAY,
                 parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("deadspace-view")
        self.setWindowTitle("ventset — dead space, step by step")
        self.library, self.gas_unit, self.theme = library, gas_unit, theme
        self.current: Lesson | None = None
        self.error: InputError | None = None
        lay = QVBoxLayout(self)
        self.notice = NoticeBanner(self)
        self.patient = Text("", self, name="deadspace-patient")
        lay.addWidget(self.notice)
        lay.addWidget(self.patient)
        row = QHBoxLayout()
        self.controls = QWidget(self)
        self.grid = QGridLayout(self.controls)
        left = QVBoxLayout()
        left.addWidget(self.controls)
        self.hold = QCheckBox("Hold the settings (the ventilator left alone)", self)
        self.hold.setChecked(True)
        self.hold.toggled.connect(lambda _on: self.update_lesson())
        left.addWidget(self.hold)
        self.reset = QPushButton("Back to the patient's own volumes", self)
        self.reset.clicked.connect(lambda: self.set_first(self.first))
        left.addWidget(self.reset)
        self.readouts = [Text("", self, wrap=True, name=f"deadspace-readout-{i}") for i in range(READOUT_LINES)]
        for r in self.readouts:
            left.addWidget(r)
        left.addStretch(1)
        row.addLayout(left, 2)
        plots = QVBoxLayout()
        self.breath = BreathPlot(self)
        self.breath.zoom.hide()
        self.plot = LessonPlot(self)
        self.plot.now.sigDragged.connect(self._dragged)
        plots.addWidget(self.breath, 2)
        plots.addWidget(self.plot, 3)
        row.addLayout(plots, 3)
        lay.addLayout(row, 1)
        self.sliders: list[VolumeSlider] = []
        self.set_theme(theme)
        self.set_first(first)
        self.resize(1250, 850)

    # ------------------------------------------------------------------ inputs
    def set_first(self, first: Plan) -> None:
        """Start from ``first``: one slider per apparatus part, an added part and the tube length."""
        self.first = first
        self.inputs0 = start(first, self.library)
        self.x_max = axis_ml(first)
        for s in self.sliders:
            self.grid.removeWidget(s)
            s.deleteLater()
        parts = first.request.circuit.parts
        top = nice_ceiling(self.x_max)
        self.sliders = [VolumeSlider(one_line(p.name), "mL", max(top, 2 * v), v, self.controls)
                        for p, v in zip(parts, self.inputs0.part_volumes_ml, strict=True)]
        self.added = VolumeSlider("Added part (e.g. an HME)", "mL", top, 0.0, self.controls)
        self.tube = VolumeSlider(f"Tube beyond the incisors ({fmt(self.inputs0.tube_id_mm)} mm ID)", "cm",
                                 nice_ceiling(max(4 * self.inputs0.tube_length_cm, 10.0)),
                                 self.inputs0.tube_length_cm, self.controls)
        self.sliders += [self.added, self.tube]
        for i, s in enumerate(self.sliders):
            self.grid.addWidget(s, i, 0)
            s.slider.valueChanged.connect(lambda _v: self.update_lesson())
        v0 = lesson(first, self.inputs0, self.library, self.x_max)
        self.minute_top = nice_ceiling(max(v0.sensitivity.minute_needed_ml_min[-1], v0.minute_needed_ml_min) * 1.05)
        self.patient.setText(patient_line(first, Units(gas=self.gas_unit)) + " — starting from "
                             f"{show(first.ventilation.tidal_volume_ml, 'volume')} × "
                             f"{show(first.ventilation.rate_per_min, 'rate')}")
        self.update_lesson()

    def inputs(self) -> LessonInputs:
        parts = tuple(s.value() for s in self.sliders[:-2])
        return replace(self.inputs0, part_volumes_ml=parts, added_ml=self.added.value(),
                       tube_length_cm=self.tube.value(), hold_settings=self.hold.isChecked())

    def _dragged(self, line) -> None:
        """The dashed line dragged to x mL of apparatus + tube: the added part takes up the difference."""
        if self.current is None:
            return
        others = self.current.apparatus_ml - self.added.value()
        self.added.set_value(max(0.0, float(line.value()) - others))

    # ------------------------------------------------------------------ views
    def update_lesson(self) -> None:
        try:
            self.current = lesson(self.first, self.inputs(), self.library, self.x_max)
            self.error = None
        except InputError as err:
            self.error = err
            self._say([f"Cannot plan these volumes: {err}"])
            return
        ls = self.current
        self.breath.show_plan(ls.plan)
        self.plot.show_lesson(ls, self.gas_unit, self.minute_top)
        self._say(self.readout_lines(ls))

    def _say(self, lines: list[str]) -> None:
        lines = lines[: READOUT_LINES - 1] + ([" ".join(lines[READOUT_LINES - 1:])] if len(lines) >= READOUT_LINES
                                               else [])
        for i, r in enumerate(self.readouts):
            text = lines[i] if i < len(lines) else ""
            r.setText(text)
            r.setColour(self.theme.danger if text.startswith(("DANGER", "NO GAS", "Cannot")) else None)

    def readout_text(self) -> str:
        """Every read-out line (tests)."""
        return "\n".join(r.plainText() for r in self.readouts if r.plainText())

    def readout_lines(self, ls: Lesson) -> list[str]:
        """What the change does, in words (the reader's gas unit)."""
        v, units = ls.plan.ventilation, Units(gas=self.gas_unit)
        held = "held at" if self.hold.isChecked() else "chosen again:"
        paco2 = v.expected_paco2_mmhg
        share = fmt(ls.dead_space_share * 100, 2)
        lines = [f"Settings {held} {show(v.tidal_volume_ml, 'volume')} at the patient × "
                 f"{show(v.rate_per_min, 'rate')}.",
                 f"Apparatus + tube: {show(ls.apparatus_ml, 'volume')}; total dead space "
                 f"{show(ls.plan.dead_space.total_ml, 'volume')} = {share} % of the breath."]
        if ls.exchange_stopped:
            lines.append("NO GAS EXCHANGE: the dead space takes the whole breath. Remove apparatus or enlarge the "
                         "breath.")
        else:
            lines.append(f"Each breath exchanges {show(ls.exchange_ml, 'volume')}; expected PaCO2 "
                         f"{show(paco2, 'gas', units) if math.isfinite(paco2) else '—'} (target "
                         f"{show(v.target_paco2_mmhg, 'gas', units)}).")
        lines.append(f"Minute volume needed to hold the target at {show(v.rate_per_min, 'rate')}: "
                     f"{show(ls.minute_needed_ml_min, 'flow_ml')} (now {show(v.minute_ml_min, 'flow_ml')}).")
        lines.append(f"Gas exchange stops at {show(ls.stop_ml, 'volume')} of apparatus + tube.")
        worst = [c for c in ls.plan.cautions if c.severity == "danger"]
        lines += [f"DANGER {c.code}: {c.text(units)}" for c in worst]
        return lines

    def set_gas_unit(self, unit: str) -> None:
        self.gas_unit = unit
        self.update_lesson()

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.notice.set_theme(theme)
        self.breath.set_theme(theme)
        self.plot.set_theme(theme)

    def curve(self) -> np.ndarray:
        """The PaCO2 curve drawn (tests)."""
        return self.plot.paco2.getData()[1]


def open_deadspace(window) -> DeadSpaceView | None:
    """Open (or raise) the teaching view for the main window's current plan."""
    plan = window.controller.plan
    if plan is None:
        return None
    view = getattr(window, "_deadspace_view", None)
    gas = window.form.gas_unit() if hasattr(window, "form") else "mmHg"
    if view is None:
        view = DeadSpaceView(window.library, plan, gas_unit=gas, theme=window.theme, parent=window)
        window._deadspace_view = view
        if hasattr(window, "theme_changed"):
            window.theme_changed.connect(view.set_theme)
    elif view.first is not plan:
        view.set_first(plan)
    view.show()
    view.raise_()
    return view
