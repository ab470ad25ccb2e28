"""The anaesthetic record: enter measurements as they come, see the proposed next settings, set them.

A self-contained panel. It needs a callable that returns the current Request and, optionally, a callable
that applies accepted settings to the window; ``install(window)`` wires it to ventset's MainWindow through
its hook points (``window.controller`` and ``window.add_panel``). The record itself is the Qt-free
``tuple[ventset.titrate.TimelineEntry, ...]`` (``entries``; ``record_changed`` after every change).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime

import pyqtgraph as pg
from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QColor, QPen
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QComboBox,
    QFrame,
    QGridLayout,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPushButton,
    QScrollArea,
    QSizePolicy,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from ventset.errors import InputError
from ventset.evaluate import evaluate, vt_at_patient
from ventset.gui.record_card import card_parts
from ventset.gui.record_card import gas_text as _gas
from ventset.gui.record_card import settings_text as _settings_text
from ventset.gui.text import esc, plain, plain_tip
from ventset.gui.theme import DAY, Theme, scaled_font, severity_colours
from ventset.library import Library, load_library
from ventset.model import Plan, Request
from ventset.planner import plan
from ventset.present.quantities import Units, show
from ventset.textpolicy import check_text
from ventset.titrate import (
    MEASURED_FIELDS,
    PREFERENCE_LABELS,
    Measurement,
    Settings,
    TimelineEntry,
    accept,
    load_titration_data,
    measurement_at_set,
    parse_measured,
    parse_time,
    patient_tidal_volume,
    record_measurement,
    settings_in_use,
)
from ventset.titrate.apply import metabolic_rate_from_vco2_w, request_with_settings
from ventset.units import fmt, mmhg_to_kpa

# key, label, unit shown, placeholder; VT and rate are the settings in use, the rest is what was measured.
ENTRY_FIELDS = (
    ("time", "Time", "", "now, HH:MM or minutes"),
    ("tidal-volume", "Tidal volume set", "mL", "on the ventilator (or exhaled, at the machine)"),
    ("rate", "Rate in use", "/min", ""),
    ("etco2", "EtCO2", "gas", ""),
    ("paco2", "PaCO2", "gas", "blood gas"),
    ("pao2", "PaO2", "gas", "blood gas"),
    ("spo2", "SpO2", "%", ""),
    ("fio2", "FiO2", "", "0.21-1 or 50 %"),
    ("note", "Note", "", "optional"),
)
GAS_KEYS = ("etco2", "paco2", "pao2")


@dataclass(frozen=True)
class AppliedSettings:
    """What the panel hands to the window when the clinician sets a proposal.

    ``metabolic_rate_w`` is the rate the measurement implies (from its CO2 output), or None when the clinician
    chose not to plan from the measured CO2 output.
    """

    settings: Settings
    which: str
    metabolic_rate_w: float | None
    time_min: float


class TimelinePanel(QWidget):
    """Record measurements over the anaesthetic, propose the next settings, keep what was set."""

    record_changed = Signal(tuple)      # tuple[TimelineEntry, ...] after each record / accept / load
    settings_applied = Signal(object)   # AppliedSettings

    def __init__(self, get_request: Callable[[], Request | None],
                 apply_settings: Callable[[AppliedSettings], None] | None = None, library: Library | None = None,
                 gas_unit: Callable[[], str] | None = None, now: Callable[[], datetime] | None = None,
                 parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("timeline-panel")
        self._get_request = get_request
        self._apply = apply_settings
        self.library = library or load_library()
        self._gas_unit = gas_unit or (lambda: "mmHg")
        self._now = now or datetime.now
        self.theme: Theme = DAY
        self._entries: tuple[TimelineEntry, ...] = ()
        self._plan: Plan | None = None
        self._errors: dict[str, str] = {}
        self._autofill: dict[str, str] = {}
        self._exact: dict[str, float] = {}
        self._shown = -1
        self._build()
        self.refresh()

    # ------------------------------------------------------------------ building
    def _build(self) -> None:
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        scroll = QScrollArea(self)
        scroll.setWidgetResizable(True)
        scroll.setFrameShape(QFrame.Shape.NoFrame)
        scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        body = QWidget(scroll)
        scroll.setWidget(body)
        outer.addWidget(scroll)
        lay = QVBoxLayout(body)
        m = self.fontMetrics().height() // 3
        lay.setContentsMargins(m, m, m, m)
        lay.setSpacing(m)

        head = QLabel("Record each measurement with the settings in use; ventset proposes the next settings "
                      "from it. Setting a proposal makes it the settings in use.", body)
        plain(head).setWordWrap(True)
        lay.addWidget(head)

        form = QGridLayout()
        form.setHorizontalSpacing(m)
        form.setVerticalSpacing(max(1, m // 2))
        self.edits: dict[str, QLineEdit] = {}
        self.error_labels: dict[str, QLabel] = {}
        self.unit_labels: dict[str, QLabel] = {}
        row = 0
        for key, label, unit, hint in ENTRY_FIELDS:
            lab = plain(QLabel(label, body))
            edit = QLineEdit(body)
            edit.setObjectName(f"record-{key}")
            edit.setAccessibleName(label)
            edit.setPlaceholderText(hint)
            if key in MEASURED_FIELDS:
                edit.setToolTip(f"<b>{esc(label)}</b><br>{esc(MEASURED_FIELDS[key].help)}")
            lab.setBuddy(edit)
            unit_lab = plain(QLabel(unit, body))
            err = plain(QLabel(body))
            err.setObjectName(f"record-error-{key}")
            err.setWordWrap(True)
            err.setVisible(False)
            form.addWidget(lab, row, 0)
            form.addWidget(edit, row, 1)
            form.addWidget(unit_lab, row, 2)
            form.addWidget(err, row + 1, 1, 1, 2)
            edit.textEdited.connect(lambda _t, k=key: self._clear_mark(k))
            edit.returnPressed.connect(self.record)
            self.edits[key], self.error_labels[key], self.unit_labels[key] = edit, err, unit_lab
            row += 2
            if key == "tidal-volume":  # what the patient receives of the set volume, as it is typed
                self.vt_note = plain(QLabel(body))
                self.vt_note.setObjectName("record-vt-at-patient")
                self.vt_note.setWordWrap(True)
                form.addWidget(self.vt_note, row, 1, 1, 2)
                row += 1
        for key in ("tidal-volume", "rate"):
            self.edits[key].textEdited.connect(lambda _t: self._show_patient_volume())
        form.setColumnStretch(1, 1)
        lay.addLayout(form)

        line = QHBoxLayout()
        line.addWidget(plain(QLabel("Change", body)))
        self.prefer = QComboBox(body)
        self.prefer.setAccessibleName("What to change")
        for key, text in PREFERENCE_LABELS.items():
            self.prefer.addItem(text, key)
        line.addWidget(self.prefer, 1)
        lay.addLayout(line)
        self.record_button = QPushButton("Record measurement", body)
        self.record_button.setObjectName("record-button")
        self.record_button.setDefault(True)
        self.record_button.clicked.connect(self.record)
        lay.addWidget(self.record_button)
        self.status = plain(QLabel(body))
        self.status.setObjectName("record-status")
        self.status.setWordWrap(True)
        self.status.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        lay.addWidget(self.status)

        # The proposal of the entry shown (the latest unless a row is picked in the table).
        self.card = QFrame(body)
        self.card.setObjectName("proposal-card")
        self.card.setFrameShape(QFrame.Shape.StyledPanel)
        card = QVBoxLayout(self.card)
        card.setContentsMargins(m, m, m, m)
        self.card_title = plain(QLabel(self.card))
        self.card_title.setFont(scaled_font(self.font(), 1.05, bold=True))
        self.proposal_text = QLabel(self.card)  # rich text built here, every value in it escaped
        self.proposal_text.setObjectName("proposal-text")
        self.proposal_text.setWordWrap(True)
        self.proposal_text.setTextFormat(Qt.TextFormat.RichText)
        self.proposal_text.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.proposal_text.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
        card.addWidget(self.card_title)
        card.addWidget(self.proposal_text)
        buttons = QHBoxLayout()
        self.set_full = QPushButton("Set the proposal", self.card)
        self.set_full.setObjectName("set-proposal")
        self.set_full.clicked.connect(lambda: self.accept_latest("proposal"))
        self.set_partial = QPushButton("Set the part-way step", self.card)
        self.set_partial.setObjectName("set-partial")
        self.set_partial.clicked.connect(lambda: self.accept_latest("partial_step"))
        buttons.addWidget(self.set_full)
        buttons.addWidget(self.set_partial)
        card.addLayout(buttons)
        own = QHBoxLayout()
        own.addWidget(plain(QLabel("Or set", self.card)))
        self.own_vt = QLineEdit(self.card)
        self.own_vt.setObjectName("own-tidal-volume")
        self.own_vt.setAccessibleName("Tidal volume set")
        self.own_vt.setPlaceholderText("mL set")
        self.own_rate = QLineEdit(self.card)
        self.own_rate.setObjectName("own-rate")
        self.own_rate.setAccessibleName("Rate set")
        self.own_rate.setPlaceholderText("/min")
        for w in (self.own_vt, self.own_rate):
            w.textEdited.connect(lambda _t, e=w: self._mark_edit(e, ""))
        self.set_own = QPushButton("Set these", self.card)
        self.set_own.setObjectName("set-own")
        self.set_own.clicked.connect(self._accept_own)
        own.addWidget(self.own_vt, 1)
        own.addWidget(self.own_rate, 1)
        own.addWidget(self.set_own)
        card.addLayout(own)
        self.plan_from_measured = QCheckBox("Plan from the measured CO2 output", self.card)
        self.plan_from_measured.setObjectName("plan-from-measured")
        self.plan_from_measured.setChecked(True)
        self.plan_from_measured.setToolTip("When a proposal is set, also enter the metabolic rate the measurement "
                                           "implies, so the window's plan uses the patient's measured CO2 output.")
        card.addWidget(self.plan_from_measured)
        lay.addWidget(self.card)

        self.table = QTableWidget(0, 7, body)
        self.table.setObjectName("record-table")
        self.table.setHorizontalHeaderLabels(["Time", "In use", "EtCO2", "PaCO2", "PaO2 / SpO2", "Proposed",
                                              "Set"])
        self.table.verticalHeader().setVisible(False)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setWordWrap(False)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.itemSelectionChanged.connect(self._row_picked)
        lay.addWidget(self.table)

        self.plots = pg.GraphicsLayoutWidget(body)
        self.plots.setObjectName("record-plot")
        self.plots.setMinimumHeight(self.fontMetrics().height() * 22)
        self.co2_plot = self.plots.addPlot(row=0, col=0)
        self.rate_plot = self.plots.addPlot(row=1, col=0)
        self.vt_plot = self.plots.addPlot(row=2, col=0)
        self.plots.ci.layout.setRowStretchFactor(0, 2)
        for p in (self.rate_plot, self.vt_plot):
            p.setXLink(self.co2_plot)
        axis_w = self.fontMetrics().averageCharWidth() * 9
        for p in (self.co2_plot, self.rate_plot, self.vt_plot):
            p.getAxis("left").setWidth(axis_w)
            p.showGrid(x=True, y=True, alpha=0.25)
            p.setMouseEnabled(x=False, y=False)
            p.hideButtons()
        self.vt_plot.setLabel("bottom", "time", units="min")
        self.rate_plot.setLabel("left", "rate /min")
        self.vt_plot.setLabel("left", "VT at patient mL")
        self.co2_legend = self.co2_plot.addLegend(offset=(-1, 1))
        self.curves = {
            "target": self.co2_plot.plot(name="target PaCO2"),
            "paco2": self.co2_plot.plot(name="PaCO2 measured"),
            "etco2": self.co2_plot.plot(name="EtCO2 measured"),
            "expected": self.co2_plot.plot(name="PaCO2 expected from what was set"),
            "rate": self.rate_plot.plot(),
            "rate_proposed": self.rate_plot.plot(),
            "vt": self.vt_plot.plot(),
            "vt_proposed": self.vt_plot.plot(),
        }
        self.empty_text = pg.TextItem("No measurements yet", anchor=(0.5, 0.5))
        self.co2_plot.addItem(self.empty_text)
        lay.addWidget(self.plots)
        self.plot_caption = QLabel("Rate and tidal volume: filled dots are the settings in use at each "
                                   "measurement and what was set after it (the vertical steps); hollow triangles are "
                                   "proposals not set. Expected PaCO2 is drawn at the next measurement (or "
                                   "at the time to re-measure a blood gas), to compare with what was measured.", body)
        plain(self.plot_caption).setWordWrap(True)
        self.plot_caption.setFont(scaled_font(self.font(), 0.9))
        lay.addWidget(self.plot_caption)
        self.set_theme(self.theme)

    # ------------------------------------------------------------------ the record
    @property
    def entries(self) -> tuple[TimelineEntry, ...]:
        return self._entries

    def set_entries(self, entries: tuple[TimelineEntry, ...]) -> None:
        """Replace the record (e.g. from a case file) and show it."""
        self._entries = tuple(entries)
        self._shown = -1
        self._prefill_settings()
        self.refresh()
        self.record_changed.emit(self._entries)

    def show_plan(self, plan: Plan) -> None:
        """The window's plan changed: before the first record, offer its settings as the settings in use."""
        self._plan = plan
        self._prefill_settings()
        self._refresh_units()

    def _prefill_settings(self) -> None:
        """Offer the settings in use (the set volume, as dialled) unless the user has typed over them."""
        s = settings_in_use(self._entries)
        v = self._plan.ventilation if self._plan is not None else None
        if s is None and v is not None:
            s = Settings(v.tidal_volume_ml, v.rate_per_min, v.set_tidal_volume_ml)
        if s is None:
            return
        for key, value in (("tidal-volume", self._set_volume(s)), ("rate", s.rate_per_min)):
            edit = self.edits[key]
            text = fmt(value, 4)
            if not edit.text().strip() or edit.text() == self._autofill.get(key):  # never over the user's typing
                edit.setText(text)
                self._autofill[key] = text
                self._exact[key] = value  # the value behind the rounded text, used while it is not edited
                self._clear_mark(key)
        self._show_patient_volume()

    def _set_volume(self, s: Settings) -> float:
        """The volume to dial for ``s``: as recorded, else what the model sets for the patient's volume."""
        if s.set_tidal_volume_ml is not None:
            return s.set_tidal_volume_ml
        subject = self._plan.subject if self._plan is not None else None
        return evaluate(subject, s.tidal_volume_ml, s.rate_per_min).set_vt_ml if subject else s.tidal_volume_ml

    def _show_patient_volume(self) -> None:
        """Under the set volume: what the patient receives of it through the circuit's compression."""
        subject = self._plan.subject if self._plan is not None else None
        try:
            set_vt = parse_measured("tidal-volume", self.edits["tidal-volume"].text())
            rate = parse_measured("rate", self.edits["rate"].text())
        except InputError:
            set_vt = rate = None
        if subject is None or set_vt is None or rate is None:
            self.vt_note.setText("")
            self.vt_note.setVisible(False)
            return
        vt = vt_at_patient(subject, set_vt, rate)
        self.vt_note.setText(f"= {show(vt, 'volume')} at the patient ({show(set_vt - vt, 'volume')} taken by the "
                             "circuit's compression)" if set_vt - vt >= 0.05 else "= the same at the patient")
        self.vt_note.setVisible(True)

    def _parse_form(self) -> tuple[Measurement | None, dict[str, str]]:
        errors: dict[str, str] = {}
        values: dict[str, float | None] = {}
        for key, _label, _unit, _hint in ENTRY_FIELDS:
            if key in ("time", "note"):
                continue
            text = self.edits[key].text().strip()
            if not text:
                values[key] = None
                if key in ("tidal-volume", "rate"):
                    errors[key] = "is needed: the setting in use now"
                continue
            if key in self._exact and text == self._autofill.get(key):
                values[key] = self._exact[key]
                continue
            try:
                values[key] = parse_measured(key, text)
            except InputError as err:
                errors[key] = err.reason
        if not errors and all(values[k] is None for k in ("etco2", "paco2", "pao2", "spo2")):
            errors["etco2"] = "enter at least one measured value (EtCO2, PaCO2, PaO2 or SpO2)"
        earlier = tuple(e.measurement for e in self._entries)
        time_text = self.edits["time"].text().strip() or self._now().strftime("%H:%M")
        try:
            time_min, clock = parse_time(time_text, earlier)
        except InputError as err:
            errors["time"] = err.reason
            time_min, clock = 0.0, ""
        note = self.edits["note"].text().strip()
        try:
            check_text("record-note", note)
        except InputError as err:
            errors["note"] = err.reason
        if errors:
            return None, errors
        return Measurement(time_min, values["tidal-volume"], values["rate"], values["paco2"], values["etco2"],
                           values["pao2"], values["spo2"], values["fio2"], clock, note,
                           set_tidal_volume_ml=values["tidal-volume"]), {}

    def record(self) -> bool:
        """Read the entry fields, add the measurement and its proposal to the record. False if invalid."""
        m, errors = self._parse_form()
        if m is None:
            self._show_errors(errors)
            return False
        request = self._get_request()
        if request is None:
            self._set_status("The patient's inputs are incomplete: finish the form first. Nothing was recorded; "
                             "the values stay here.", "caution")
            return False
        try:
            m = measurement_at_set(request, m, self.library)  # the set volume → the patient's
            entries = record_measurement(self._entries, request, m, self.prefer.currentData(), self.library)
        except InputError as err:
            key = err.key if err.key in self.edits else None
            if key is not None:
                self._show_errors({key: err.reason})
            else:
                self._set_status(f"Not recorded: {err}. The values stay here.", "caution")
            return False
        self._entries = entries
        self._shown = -1
        for key in ("time", "etco2", "paco2", "pao2", "spo2", "note"):
            self.edits[key].clear()
        self._show_errors({})
        e = entries[-1]
        self._set_status(f"Recorded at {self._time_text(e.measurement)}." + (f" {e.error}" if e.error else ""),
                         "info")
        self.refresh()
        self.record_changed.emit(self._entries)
        return True

    def accept_latest(self, which: str, own: Settings | None = None) -> bool:
        """Set the latest entry's 'proposal', 'partial_step' or 'own' settings as the settings in use."""
        if not self._entries:
            return False
        index = len(self._entries) - 1
        try:
            entries = accept(self._entries, index, which, own)
        except InputError as err:
            self._set_status(f"Not set: {err}", "caution")
            return False
        self._entries = entries
        e = entries[index]
        s = e.settings_set
        power = None
        if self.plan_from_measured.isChecked() and e.vco2_ml_min:
            rq = self._rq()
            power = None if rq is None else metabolic_rate_from_vco2_w(e.vco2_ml_min, rq)
        applied = AppliedSettings(s, which, power, e.measurement.time_min)
        words = {"proposal": "the proposal", "partial_step": "the part-way step", "own": "your own settings"}[which]
        msg = f"Set {words}: {_settings_text(s)} is now the settings in use."
        if power is not None:
            msg += (f" The plan uses the CO2 output measured at {self._time_text(e.measurement)} "
                    f"({fmt(e.vco2_ml_min)} mL/min, metabolic rate {fmt(power)} W).")
        msg += " The window's plan now shows exactly these settings and what they are expected to give."
        self._set_status(msg, "info")
        for key, value in (("tidal-volume", self._set_volume(s)), ("rate", s.rate_per_min)):
            self.edits[key].setText(fmt(value, 4))
            self._autofill[key] = self.edits[key].text()
            self._exact[key] = value
            self._clear_mark(key)
        self._show_patient_volume()
        self.refresh()
        self.record_changed.emit(self._entries)
        if self._apply is not None:
            self._apply(applied)
        self.settings_applied.emit(applied)
        return True

    def _rq(self) -> float | None:
        if self._plan is not None:
            return self._plan.metabolism.rq
        request = self._get_request()
        try:
            return None if request is None else plan(request, self.library).metabolism.rq
        except InputError:
            return None

    def _accept_own(self) -> None:
        vt = rate = None
        try:
            vt = parse_measured("tidal-volume", self.own_vt.text())
            self._mark_edit(self.own_vt, "")
        except InputError as err:
            self._mark_edit(self.own_vt, err.reason)
        try:
            rate = parse_measured("rate", self.own_rate.text())
            self._mark_edit(self.own_rate, "")
        except InputError as err:
            self._mark_edit(self.own_rate, err.reason)
        if vt is None or rate is None:
            self._set_status("Not set: the tidal volume and rate to set are marked; the values stay there.",
                             "caution")
            return
        request = self._get_request()
        try:  # typed as dialled: the patient receives the set volume less the circuit's compression
            at_patient = patient_tidal_volume(request, vt, rate, self.library) if request is not None else vt
        except InputError as err:
            self._set_status(f"Not set: {err}", "caution")
            return
        if self.accept_latest("own", Settings(at_patient, rate, vt)):
            self.own_vt.clear()
            self.own_rate.clear()

    # ------------------------------------------------------------------ marks and messages
    def _mark_edit(self, edit: QLineEdit, reason: str) -> None:
        edit.setProperty("invalid", bool(reason))
        edit.setStyleSheet(f"QLineEdit {{ border: 2px solid {self.theme.danger}; }}" if reason else "")
        edit.setToolTip(plain_tip(f"⚠ {reason}") if reason else "")

    def _show_errors(self, errors: dict[str, str]) -> None:
        self._errors = dict(errors)
        for key in self.edits:
            reason = errors.get(key, "")
            self._mark_edit(self.edits[key], reason)
            if key in MEASURED_FIELDS and not reason:
                spec = MEASURED_FIELDS[key]
                self.edits[key].setToolTip(f"<b>{esc(spec.label)}</b><br>{esc(spec.help)}")
            lab = self.error_labels[key]
            lab.setText(f"⚠ {reason}" if reason else "")
            lab.setStyleSheet(f"color: {self.theme.danger}; font-weight: bold;" if reason else "")
            lab.setVisible(bool(reason))
        if errors:
            first = next(k for k, *_ in ENTRY_FIELDS if k in errors)
            label = next(lab for k, lab, *_ in ENTRY_FIELDS if k == first)
            self._set_status(f"Not recorded: {label} {errors[first]}. Everything entered is kept.", "caution")
            self.edits[first].setFocus()

    def _clear_mark(self, key: str) -> None:
        if key in self._errors:
            errors = dict(self._errors)
            errors.pop(key)
            self._errors = errors
            self._mark_edit(self.edits[key], "")
            self.error_labels[key].setVisible(False)
            self.error_labels[key].setText("")

    def invalid_keys(self) -> set[str]:
        """The entry fields marked invalid now."""
        return set(self._errors)

    def _set_status(self, text: str, severity: str) -> None:
        fg, bg = severity_colours(self.theme, severity)
        self.status.setText(text)
        self.status.setStyleSheet(f"color: {fg}; background: {bg}; padding: 3px;" if text else "")

    # ------------------------------------------------------------------ showing the record
    def _time_text(self, m: Measurement) -> str:
        return f"{m.clock} ({fmt(m.time_min)} min)" if m.clock else f"{fmt(m.time_min)} min"

    def _refresh_units(self) -> None:
        unit = self._gas_unit()
        for key in GAS_KEYS:
            self.unit_labels[key].setText(f"{unit} (or kPa)" if unit == "mmHg" else f"{unit} (or mmHg)")
            self.edits[key].setPlaceholderText("" if key == "etco2" else "blood gas")

    def refresh(self) -> None:
        """Redraw the table, the proposal card and the plots from the record."""
        self._refresh_units()
        unit = self._gas_unit()
        self.table.blockSignals(True)
        self.table.setRowCount(len(self._entries))
        for i, e in enumerate(self._entries):
            m = e.measurement
            o2 = " / ".join(x for x in (_gas(m.pao2_mmhg, unit) if m.pao2_mmhg is not None else "",
                                        f"{fmt(m.spo2_percent)} %" if m.spo2_percent is not None else "") if x)
            proposed = _settings_text(e.proposal.settings) if e.proposal else "—"
            if e.partial_step:
                proposed += f" (part-way {_settings_text(e.partial_step.settings)})"
            set_text = "—"
            if e.settings_set:
                set_text = _settings_text(e.settings_set) + {"proposal": " (proposal)", "partial_step": " (part-way)",
                                                             "own": " (own)"}[e.accepted]
            cells = (self._time_text(m), _settings_text(m.settings),
                     _gas(m.etco2_mmhg, unit) if m.etco2_mmhg is not None else "—",
                     _gas(m.paco2_mmhg, unit) if m.paco2_mmhg is not None else "—", o2 or "—", proposed, set_text)
            for col, text in enumerate(cells):
                item = QTableWidgetItem(text)
                if col == 0 and m.note:
                    item.setToolTip(plain_tip(m.note))
                self.table.setItem(i, col, item)
        self.table.blockSignals(False)
        self.table.resizeRowsToContents()
        shown = range(max(0, len(self._entries) - 6), len(self._entries))
        rows_h = sum(self.table.rowHeight(i) for i in shown) or self.table.verticalHeader().defaultSectionSize()
        bar = self.table.horizontalScrollBar().sizeHint().height()
        self.table.setFixedHeight(self.table.horizontalHeader().sizeHint().height() + rows_h + bar + 6)
        if self._entries:
            self.table.scrollToBottom()
        self._show_entry(self._shown if 0 <= self._shown < len(self._entries) else len(self._entries) - 1)
        self._draw_plots()

    def _row_picked(self) -> None:
        rows = self.table.selectionModel().selectedRows()
        self._shown = rows[0].row() if rows else -1
        self._show_entry(self._shown if self._shown >= 0 else len(self._entries) - 1)

    def _show_entry(self, index: int) -> None:
        latest = index == len(self._entries) - 1
        if index < 0:
            self.card_title.setText("No measurement yet")
            self.proposal_text.setText("Enter the settings in use and a measured EtCO2 or PaCO2, then "
                                       "<b>Record measurement</b>.")
            for w in (self.set_full, self.set_partial, self.set_own, self.own_vt, self.own_rate):
                w.setEnabled(False)
            return
        e = self._entries[index]
        unit, t = self._gas_unit(), self.theme
        self.card_title.setText(f"Proposal from the measurement at {self._time_text(e.measurement)}"
                                + ("" if latest else " (earlier entry)"))
        parts = self._card_parts(e, Units(gas=unit), t)
        self.proposal_text.setText("<br><br>".join(parts))
        can = latest and e.proposal is not None
        self.set_full.setEnabled(can)
        self.set_partial.setEnabled(can and e.partial_step is not None)
        self.set_partial.setVisible(e.partial_step is not None)
        for w in (self.set_own, self.own_vt, self.own_rate):
            w.setEnabled(latest)

    def _card_parts(self, e: TimelineEntry, units: Units, t: Theme) -> list[str]:
        request = self._get_request()
        key = self._plan.resolved.species if self._plan is not None else request.patient.species if request else ""
        sp = self.library.find_species(key) if key else None
        return card_parts(e, units, t, {n.code for n in sp.notes} if sp is not None else set())

    def _draw_plots(self) -> None:
        unit = self._gas_unit()
        g = (lambda x: mmhg_to_kpa(x)) if unit == "kPa" else (lambda x: x)
        self.co2_plot.setLabel("left", f"CO2 {unit}")
        ents = sorted(self._entries, key=lambda e: e.measurement.time_min)
        self.empty_text.setVisible(not ents)

        def series(get):
            pts = [(e.measurement.time_min, get(e)) for e in ents]
            pts = [(x, y) for x, y in pts if y is not None and math.isfinite(y)]
            return [x for x, _ in pts], [y for _, y in pts]

        tx, ty = series(lambda e: e.target_paco2_mmhg)
        self.curves["target"].setData(tx, [g(y) for y in ty], stepMode=None)
        for key in ("paco2", "etco2"):
            x, y = series(lambda e, k=key: getattr(e.measurement, f"{k}_mmhg"))
            self.curves[key].setData(x, [g(v) for v in y])

        later = load_titration_data().defaults["remeasure_blood_gas_min"].value
        ex, ey = [], []
        for i, e in enumerate(ents):
            chosen = {"proposal": e.proposal, "partial_step": e.partial_step}.get(e.accepted)
            if chosen is not None and math.isfinite(chosen.expected_paco2_mmhg):
                ex.append(ents[i + 1].measurement.time_min if i + 1 < len(ents) else e.measurement.time_min + later)
                ey.append(g(chosen.expected_paco2_mmhg))
        self.curves["expected"].setData(ex, ey)
        for key, attr in (("rate", "rate_per_min"), ("vt", "tidal_volume_ml")):
            xs, ys = [], []
            for e in ents:
                xs.append(e.measurement.time_min)
                ys.append(getattr(e.measurement, attr))
                if e.settings_set:
                    xs.append(e.measurement.time_min)
                    ys.append(getattr(e.settings_set, attr))
            self.curves[key].setData(xs, ys)
            px, py = series(lambda e, a=attr: getattr(e.proposal, a) if e.proposal and not e.settings_set else None)
            self.curves[f"{key}_proposed"].setData(px, py)
        if ents:
            x0, x1 = ents[0].measurement.time_min, max([ents[-1].measurement.time_min, *ex])
            pad = max(2.0, (x1 - x0) * 0.08)
            self.co2_plot.setXRange(x0 - pad, x1 + pad, padding=0)
            self.co2_plot.enableAutoRange(axis="y")
            for plot, key in ((self.rate_plot, "rate"), (self.vt_plot, "vt")):
                ys = [y for k in (key, f"{key}_proposed") for y in (self.curves[k].yData if self.curves[k].yData
                                                                    is not None else ())]
                lo, hi = min(ys), max(ys)
                margin = max((hi - lo) * 0.15, hi * 0.1)
                plot.setYRange(max(0.0, lo - margin), hi + margin, padding=0)
        else:
            self.co2_plot.setXRange(0, 60, padding=0)
            self.co2_plot.setYRange(0, 1, padding=0)
            self.empty_text.setPos(30, 0.5)

    # ------------------------------------------------------------------ appearance
    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        lw = theme.line_width

        def pen(colour: str, style=Qt.PenStyle.SolidLine) -> QPen:
            p = QPen(QColor(colour))
            p.setWidthF(lw)
            p.setCosmetic(True)
            p.setStyle(style)
            return p

        self.plots.setBackground(theme.plot_bg)
        for p in (self.co2_plot, self.rate_plot, self.vt_plot):
            for name in ("left", "bottom"):
                ax = p.getAxis(name)
                ax.setPen(theme.plot_fg)
                ax.setTextPen(theme.plot_fg)
        c = self.curves
        c["target"].setPen(pen(theme.target, Qt.PenStyle.DashLine))
        c["paco2"].setPen(pen(theme.pressure))
        c["paco2"].setSymbol("s")
        c["paco2"].setSymbolBrush(theme.pressure)
        c["paco2"].setSymbolPen(theme.pressure)
        c["etco2"].setPen(pen(theme.flow))
        c["etco2"].setSymbol("o")
        c["etco2"].setSymbolBrush(theme.flow)
        c["etco2"].setSymbolPen(theme.flow)
        c["expected"].setPen(None)
        c["expected"].setSymbol("o")
        c["expected"].setSymbolBrush(None)
        c["expected"].setSymbolPen(pen(theme.pressure))
        for key in ("rate", "vt"):
            c[key].setPen(pen(theme.volume))
            c[key].setSymbol("o")
            c[key].setSymbolBrush(theme.volume)
            c[key].setSymbolPen(theme.volume)
            c[f"{key}_proposed"].setPen(None)
            c[f"{key}_proposed"].setSymbol("t")
            c[f"{key}_proposed"].setSymbolBrush(None)
            c[f"{key}_proposed"].setSymbolPen(pen(theme.volume))
        self.co2_legend.setLabelTextColor(theme.plot_fg)
        self.empty_text.setColor(theme.muted)
        if self._errors:
            self._show_errors(self._errors)
        if self._entries:
            self._show_entry(self._shown if 0 <= self._shown < len(self._entries) else len(self._entries) - 1)


def install(window) -> TimelinePanel:
    """Add the record to ventset's MainWindow as a panel, wired through ``window.controller``.

    Setting a proposal sets the window's strategy rate and tidal volume per kg (and, when "Plan from the
    measured CO2 output" is ticked, the metabolic rate the measurement implies) with one ``set_request``.
    """
    panel = attach(window)
    window.add_panel("Anaesthetic record", panel)
    return panel


def attach(window, parent: QWidget | None = None) -> TimelinePanel:
    """The record panel wired to ``window`` as ``install`` wires it, but not added to it (for a tab that builds
    its panel when first shown: ventset.gui.ondemand)."""
    ctl = window.controller

    def current_request() -> Request | None:
        return ctl.request

    def apply(applied: AppliedSettings) -> None:
        req, plan = ctl.request, ctl.plan
        if req is None or plan is None:
            return
        s = applied.settings
        ctl.set_request(request_with_settings(req, plan, s.tidal_volume_ml, s.rate_per_min, applied.metabolic_rate_w))

    gas = getattr(getattr(window, "form", None), "gas_unit", None)
    panel = TimelinePanel(current_request, apply, ctl.library, gas_unit=gas, parent=parent or window)
    ctl.plan_ready.connect(panel.show_plan)
    if ctl.plan is not None:
        panel.show_plan(ctl.plan)
    if hasattr(window, "theme_changed"):
        window.theme_changed.connect(panel.set_theme)
        panel.set_theme(window.theme)
    if hasattr(window, "form") and hasattr(window.form, "gas_unit_changed"):
        window.form.gas_unit_changed.connect(lambda _u: panel.refresh())
    return panel
