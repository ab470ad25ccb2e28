"""Compare setups side by side: the current patient as entered and up to three changed setups.

Opened from Case → "Compare with…". Each setup is a spec (``ventset.compare``: 'add=hme_paediatric',
'circuit=non_rebreathing', any input as key=value). The table shows every compared number with the rows
that differ marked; the cautions each setup adds or loses are listed; the breath composition (on one
shared scale) and the settings maps are paired below. A thin view: every number comes from
``ventset.compare`` (plans by ``plan()``).
"""

from __future__ import annotations

from PySide6.QtCore import Qt, QTimer
from PySide6.QtGui import QBrush, QColor, QFont, QGuiApplication
from PySide6.QtWidgets import (
    QComboBox,
    QDialog,
    QGridLayout,
    QHBoxLayout,
    QHeaderView,
    QPlainTextEdit,
    QPushButton,
    QSplitter,
    QTableWidget,
    QTableWidgetItem,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from ventset import plotdata
from ventset.compare import MAX_SETUPS, Comparison, Setup, compare_plans, plan_setup, spec_help
from ventset.errors import InputError
from ventset.gui.plots import BreathPlot, SettingsMapPlot
from ventset.gui.readouts import NoticeBanner
from ventset.gui.text import Text, plain_tip
from ventset.gui.theme import DAY, Theme
from ventset.library import Library
from ventset.model import Request
from ventset.present.quantities import Units, show
from ventset.present.rows import one_line, patient_line

# Changes offered in each setup's list (any other spec may be typed).
SUGGESTIONS = ("add=hme_paediatric", "add=hme_neonatal", "apparatus=none", "circuit=non_rebreathing",
               "circuit=rebreathing_paediatric", "circuit=rebreathing_small_animal", "mode=pressure",
               "strategy=least_work", "peep=5", "fio2=0.5", "tube=default")
FIRST_CHANGE = "add=hme_paediatric"
DIFFERS = "≠ "


class SharedBreathPlot(BreathPlot):
    """The breath composition drawn on a scale shared with the setups beside it (mL along the set breath)."""

    def __init__(self, parent: QWidget | None = None) -> None:
        self.shared_x_ml: float | None = None
        super().__init__(parent)

    def _draw(self, b: plotdata.BreathComposition) -> None:
        super()._draw(b)
        if self.shared_x_ml:
            n = max(1, len(b.segments[: self.POOL]))
            self.plot.vb.setRange(xRange=(0.0, self.shared_x_ml), yRange=(-0.6, n + 0.4), padding=0)


class SetupEditor(QWidget):
    """One setup: its number, the spec (typed or picked) and the reason it cannot be planned."""

    def __init__(self, number: int, text: str, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.number = number
        self.spec = QComboBox(self)
        self.spec.setEditable(True)
        self.spec.setInsertPolicy(QComboBox.InsertPolicy.NoInsert)
        self.spec.addItems(["", *SUGGESTIONS])
        self.spec.setEditText(text)
        self.spec.setObjectName(f"setup-spec-{number}")
        self.spec.setAccessibleName(f"Setup {number}")
        self.spec.lineEdit().setPlaceholderText("a change, e.g. add=hme_paediatric")
        self.spec.setToolTip(plain_tip(f"Setup {number}: {spec_help()} Leave empty to leave it out."))
        self.error = Text("", self, wrap=True, name=f"setup-error-{number}", lines=1)
        lay.addWidget(self.spec)
        lay.addWidget(self.error)

    def text(self) -> str:
        return self.spec.currentText().strip()


class CompareView(QDialog):
    """The comparison window for one patient (``set_base`` follows the main window's current request)."""

    def __init__(self, library: Library, base: Request | None = None, *, gas_unit: str = "mmHg",
                 theme: Theme = DAY, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("compare-view")
        self.setWindowTitle("ventset — compare setups")
        self.library, self.base, self.gas_unit, self.theme = library, base, gas_unit, theme
        self.comparison: Comparison | None = None
        self.errors: dict[int, InputError] = {}
        self.numbers: list[int] = []
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(150)
        self._timer.timeout.connect(self.replan)
        self._build()
        self.resize(1300, 900)
        if base is not None:
            self.replan()

    # ------------------------------------------------------------------ layout
    def _build(self) -> None:
        lay = QVBoxLayout(self)
        self.notice = NoticeBanner(self)
        self.patient = Text("", self, name="compare-patient")
        lay.addWidget(self.notice)
        lay.addWidget(self.patient)
        grid = QGridLayout()
        first = Text("[1] the patient as entered", self, name="setup-first")
        grid.addWidget(first, 0, 0, Qt.AlignmentFlag.AlignTop)
        self.editors = [SetupEditor(i, FIRST_CHANGE if i == 2 else "", self) for i in range(2, MAX_SETUPS + 1)]
        for k, ed in enumerate(self.editors, start=1):
            grid.addWidget(ed, 0, k)
            ed.spec.editTextChanged.connect(lambda _t: self._timer.start())
        lay.addLayout(grid)
        self.status = Text("", self, wrap=True, name="compare-status")
        lay.addWidget(self.status)
        split = QSplitter(Qt.Orientation.Vertical, self)
        top = QSplitter(Qt.Orientation.Horizontal, split)
        self.table = QTableWidget(top)
        self.table.setObjectName("compare-table")
        self.table.setEditTriggers(QTableWidget.EditTrigger.NoEditTriggers)
        self.table.verticalHeader().setVisible(False)
        self.cautions = QPlainTextEdit(top)
        self.cautions.setObjectName("compare-cautions")
        self.cautions.setReadOnly(True)
        self.tabs = QTabWidget(split)
        self.breath_plots = [SharedBreathPlot() for _ in range(MAX_SETUPS)]
        self.map_plots = [SettingsMapPlot() for _ in range(MAX_SETUPS)]
        for title, plots in (("Where one breath goes", self.breath_plots), ("Settings maps", self.map_plots)):
            page = QWidget(self.tabs)
            row = QHBoxLayout(page)
            for plot in plots:
                plot.setParent(page)
                plot.zoom.hide()
                row.addWidget(plot, 1)
            self.tabs.addTab(page, title)
        top.setStretchFactor(0, 3)
        top.setStretchFactor(1, 2)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 2)
        lay.addWidget(split, 1)
        buttons = QHBoxLayout()
        self.copy_button = QPushButton("Copy as text", self)
        self.copy_button.clicked.connect(self.copy_text)
        close = QPushButton("Close", self)
        close.clicked.connect(self.close)
        buttons.addStretch(1)
        buttons.addWidget(self.copy_button)
        buttons.addWidget(close)
        lay.addLayout(buttons)
        self.set_theme(self.theme)

    # ------------------------------------------------------------------ data
    def set_base(self, base: Request | None) -> None:
        """Compare from this request (the main window's current patient); replans."""
        self.base = base
        self.replan()

    def set_gas_unit(self, unit: str) -> None:
        self.gas_unit = unit
        self._show()

    def flush(self) -> None:
        """Run a pending replan now (tests)."""
        if self._timer.isActive():
            self._timer.stop()
            self.replan()

    def replan(self) -> None:
        """Plan every setup; a setup that cannot be planned says why under its entry and is left out."""
        self.errors = {}
        if self.base is None:
            self.comparison = None
            self.status.setText("The current inputs cannot be planned: correct them in the main window first.")
            self._show()
            return
        setups: list[Setup] = []
        for number, text in [(1, "none"), *((ed.number, ed.text()) for ed in self.editors)]:
            if not text:
                continue
            try:
                setups.append(plan_setup(self.base, text, number, self.library))
            except InputError as err:
                self.errors[number] = err
        for ed in self.editors:
            ed.error.setText(str(self.errors[ed.number]) if ed.number in self.errors else "")
        self.comparison = compare_plans(setups) if len(setups) >= 2 else None
        self.numbers = [n for n in (1, *(ed.number for ed in self.editors)) if n not in self.errors and
                        (n == 1 or self.editors[n - 2].text())]
        self.status.setText("" if self.comparison else "Enter a change in setup 2 (or pick one from its list) "
                                                        "to compare it with the patient as entered.")
        self._show()

    # ------------------------------------------------------------------ views
    def _show(self) -> None:
        c = self.comparison
        if self.base is not None and c is not None:
            self.patient.setText(patient_line(c.setups[0].plan, Units(gas=self.gas_unit)))
        self._fill_table(c)
        self.cautions.setPlainText(self.cautions_text(c))
        n = len(c.setups) if c else 0
        shared = max((plotdata.nice_ceiling(max(b.set_ml, b.patient_start_ml + b.dead_space_ml) * 1.12)
                      for b in (plotdata.breath_composition(s.plan) for s in c.setups)), default=0.0) if c else 0.0
        for i in range(MAX_SETUPS):
            for plot in (self.breath_plots[i], self.map_plots[i]):
                plot.setVisible(i < n)
            if i < n and c is not None:
                s = c.setups[i]
                title = f"[{self.numbers[i]}] {one_line(s.label)}"
                self.breath_plots[i].shared_x_ml = shared
                self.breath_plots[i].show_plan(s.plan)
                self.map_plots[i].show_plan(s.plan, self.gas_unit)
                for plot in (self.breath_plots[i], self.map_plots[i]):
                    plot.title.setText(title)

    def _fill_table(self, c: Comparison | None) -> None:
        t = self.table
        t.clear()
        if c is None:
            t.setRowCount(0)
            t.setColumnCount(0)
            return
        units = Units(gas=self.gas_unit)
        rows = [(q.label, [show(v, q.kind, units) for v in q.values]) for q in c.quantities]
        rows += [(label, [one_line(v) for v in vals]) for _, label, vals in c.texts]
        t.setColumnCount(len(c.setups) + 1)
        t.setRowCount(len(rows))
        t.setHorizontalHeaderLabels(["", *(f"[{n}] {one_line(s.label)}" for n, s in zip(self.numbers, c.setups,
                                                                                        strict=True))])
        bold = QFont(t.font())
        bold.setBold(True)
        mark = QBrush(QColor(self.theme.caution_bg))
        for r, (label, cells) in enumerate(rows):
            differs = len(set(cells)) > 1
            head = QTableWidgetItem((DIFFERS if differs else "  ") + label)
            if differs:
                head.setFont(bold)
            t.setItem(r, 0, head)
            for k, text in enumerate(cells, start=1):
                item = QTableWidgetItem(text)
                item.setToolTip(plain_tip(text))
                if differs and text != cells[0]:
                    item.setBackground(mark)
                    item.setFont(bold)
                t.setItem(r, k, item)
        for k, (n, s) in enumerate(zip(self.numbers, c.setups, strict=True), start=1):
            t.horizontalHeaderItem(k).setToolTip(plain_tip(f"[{n}] {one_line(s.label)}"))
        head = t.horizontalHeader()
        head.setDefaultAlignment(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter)
        head.setTextElideMode(Qt.TextElideMode.ElideRight)
        head.setSectionResizeMode(0, QHeaderView.ResizeMode.ResizeToContents)
        for k in range(1, len(c.setups) + 1):
            head.setSectionResizeMode(k, QHeaderView.ResizeMode.Stretch)
        t.resizeRowsToContents()

    def cautions_text(self, c: Comparison | None) -> str:
        """The cautions each setup adds to or loses from the first, then every setup's own (plain text)."""
        if c is None:
            return ""
        units = Units(gas=self.gas_unit)
        lines: list[str] = []
        for ch in c.cautions:
            n = self.numbers[ch.setup]
            lines += [f"[{n}] adds: [{x.severity.upper()}] {x.code}: {x.text(units)}" for x in ch.added]
            lines += [f"[{n}] no longer has: [{x.severity.upper()}] {x.code}" for x in ch.removed]
        if not lines:
            lines = ["No setup adds or removes a caution."]
        for n, s in zip(self.numbers, c.setups, strict=True):
            lines += ["", f"[{n}] {one_line(s.label)}: every caution"]
            lines += [f"  [{x.severity.upper()}] {x.code}: {x.text(units)}" for x in s.plan.cautions] or ["  none"]
            lines += [f"  note: {one_line(x)}" for x in s.notes]
        lines += ["", "NOTICE: " + c.setups[0].plan.standing_notice]
        return "\n".join(lines)

    def copy_text(self) -> str:
        """The comparison as plain text on the clipboard (as `ventset compare` prints it)."""
        from ventset.compare_text import comparison_to_text

        if self.comparison is None:
            return ""
        text = comparison_to_text(self.comparison, self.gas_unit)
        QGuiApplication.clipboard().setText(text)
        return text

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.notice.set_theme(theme)
        for plot in (*self.breath_plots, *self.map_plots):
            plot.set_theme(theme)
        for ed in self.editors:
            ed.error.setColour(theme.danger)
        if self.comparison is not None:
            self._fill_table(self.comparison)


def open_compare(window) -> CompareView:
    """Open (or raise) the comparison for the main window's current patient; it follows later edits."""
    view = getattr(window, "_compare_view", None)
    if view is None:
        gas = window.form.gas_unit() if hasattr(window, "form") else "mmHg"
        view = CompareView(window.library, _current(window), gas_unit=gas, theme=window.theme, parent=window)
        window._compare_view = view
        window.controller.plan_ready.connect(lambda _p: view.set_base(_current(window)))
        window.controller.plan_invalid.connect(lambda _e: view.set_base(None))
        if hasattr(window, "theme_changed"):
            window.theme_changed.connect(view.set_theme)
        if hasattr(window, "form"):
            window.form.gas_unit_changed.connect(view.set_gas_unit)
    view.show()
    view.raise_()
    return view


def _current(window) -> Request | None:
    ctl = window.controller
    return None if ctl.plan is None or ctl.stale else ctl.plan.request

