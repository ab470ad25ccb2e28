"""Read-outs: the standing notice, the status line, the large settings, cautions, derived values and
the assumptions trail. Widgets are created once; each plan only changes their text."""

from __future__ import annotations

import re

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QFrame,
    QGridLayout,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QScrollArea,
    QSizePolicy,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from ventset.errors import InputError, one_line
from ventset.glossary import tooltip
from ventset.gui.scrollbar import RememberedScrollBar
from ventset.gui.text import Reading, Text, plain, plain_tip
from ventset.gui.theme import DAY, SEVERITY_WORD, Theme, scaled_font, severity_colours, severity_pixmap
from ventset.model import STANDING_NOTICE, Plan
from ventset.present.quantities import Units
from ventset.present.rows import Row, assumption_rows, derived_sections, expectation_line, patient_line, setting_rows

_WARNING = re.compile(r"(⚠[^·]*)")


def reader_units(gas_unit: str = "mmHg", mass_unit: str = "kg") -> Units:
    """The reader's units as the presentation layer takes them (gas 'mmHg'/'kPa', mass 'kg'/'g'/'lb')."""
    return Units(gas=gas_unit if gas_unit in ("mmHg", "kPa") else "mmHg",
                 mass=mass_unit if mass_unit in ("kg", "g", "lb") else "kg")


def _label(parent: QWidget, text: str = "", factor: float = 1.0, bold: bool = False, wrap: bool = False,
           name: str = "") -> QLabel:
    lab = plain(QLabel(text, parent))
    if factor != 1.0 or bold:
        lab.setFont(scaled_font(parent.font(), factor, bold))
    lab.setWordWrap(wrap)
    if name:
        lab.setObjectName(name)
    lab.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
    return lab


def _text(parent: QWidget, text: str = "", factor: float = 1.0, bold: bool = False, wrap: bool = False,
          name: str = "", align: Qt.AlignmentFlag = Qt.AlignmentFlag.AlignLeft, lines: int = 1,
          markup: bool = False) -> Text:
    t = Text(text, parent, wrap=wrap, align=align, name=name, lines=lines, markup=markup)
    if factor != 1.0 or bold:
        t.setFont(scaled_font(parent.font(), factor, bold))
    return t


def _heading_row(outer: QVBoxLayout, title: QWidget, right: QWidget, title_stretch: int = 1) -> None:
    """Add a panel's heading row to ``outer``: the title on the left, ``right`` (wrapping, right-aligned) taking
    the rest, so a narrow panel wraps the words instead of cutting them."""
    head = QHBoxLayout()
    head.addWidget(title, title_stretch, Qt.AlignmentFlag.AlignTop)
    head.addWidget(right, 1)
    outer.addLayout(head)


class NoticeBanner(QFrame):
    """The standing notice, always on screen."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("standing-notice")
        self.setFrameShape(QFrame.Shape.StyledPanel)
        lay = QHBoxLayout(self)
        m = self.fontMetrics().height() // 3
        lay.setContentsMargins(m * 2, m, m * 2, m)
        self.icon = plain(QLabel(self))
        self.text = _label(self, STANDING_NOTICE, 0.95, wrap=True, name="standing-notice-text")
        self.text.setAccessibleName("Standing notice")
        lay.addWidget(self.icon, 0, Qt.AlignmentFlag.AlignTop)
        lay.addWidget(self.text, 1)
        self.set_theme(DAY)

    def set_theme(self, theme: Theme) -> None:
        self.icon.setPixmap(severity_pixmap(theme, "info", self.font()))
        self.setStyleSheet(f"#standing-notice {{ background: {theme.info_bg}; border: 1px solid {theme.info}; "
                           f"border-radius: 4px; }} #standing-notice QLabel {{ color: {theme.text}; }}")


class StatusStrip(QFrame):
    """Who the plan is for, whether it is current, what to expect on the monitor, and the caution count."""

    go_to_field = Signal(str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("status-strip")
        lay = QGridLayout(self)
        m = self.fontMetrics().height() // 3
        lay.setContentsMargins(m * 2, m, m * 2, m)
        self.badge = _label(self, "", 1.0, bold=True, name="plan-state")
        self.patient = _text(self, "", 1.15, bold=True, wrap=True, name="patient-summary")
        self.expect = _text(self, "", 1.0, wrap=True, name="expect-line", markup=True)  # numbers only
        self.counts = _text(self, "", 1.0, bold=True, name="caution-counts", align=Qt.AlignmentFlag.AlignRight)
        self.problem = _text(self, "", 1.0, bold=True, wrap=True, name="stale-reason")
        self.fix = QPushButton("Go to the field", self)
        self.fix.setObjectName("go-to-field")
        self.fix.clicked.connect(lambda: self.go_to_field.emit(self._key))
        self._key = ""
        lay.addWidget(self.badge, 0, 0)
        lay.addWidget(self.patient, 0, 1)
        lay.addWidget(self.counts, 0, 2)
        lay.addWidget(self.expect, 1, 0, 1, 3)
        lay.addWidget(self.problem, 2, 0, 1, 2)
        lay.addWidget(self.fix, 2, 2, Qt.AlignmentFlag.AlignRight)
        lay.setColumnStretch(1, 1)
        self.theme = DAY
        self._stale = None
        self.set_current(True)

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.expect.setColour(None, theme.danger)
        s, self._stale = self._stale, None
        self.set_current(not s if s is not None else True, self.problem.text())

    def set_current(self, current: bool, problem: str = "", key: str = "") -> None:
        self._key = key
        t = self.theme
        if self._stale != (not current):
            self._stale = not current
            if current:
                self.badge.setText("✓ CURRENT")
                self.setStyleSheet(f"#status-strip {{ background: {t.base}; border: 1px solid {t.border}; "
                                   f"border-radius: 4px; }} #plan-state {{ color: {t.ok}; }}")
                self.problem.setColour(None)
            else:
                self.badge.setText("⚠ NOT UPDATED")
                self.setStyleSheet(f"#status-strip {{ background: {t.danger_bg}; border: 2px solid {t.danger}; "
                                   f"border-radius: 4px; }} #plan-state {{ color: {t.danger}; }}")
                self.problem.setColour(t.danger)
        self.problem.setText(problem)
        self.problem.setVisible(not current)
        self.fix.setVisible(not current and bool(key))

    def clear(self) -> None:
        """No plan (a new case): nothing of an earlier patient is shown."""
        self.patient.setText("New patient: no plan yet")
        self.expect.setText("")
        self.counts.setText("")

    def show_plan(self, plan: Plan, gas_unit: str, mass_unit: str) -> None:
        units = reader_units(gas_unit, mass_unit)
        self.patient.setText(patient_line(plan, units))
        # The project's own sentence (no user text): its warnings drawn bold in the danger colour.
        self.expect.setText(_WARNING.sub(lambda m: f"<b>{m.group(1).strip()}</b> ", expectation_line(plan, units))
                            .strip())
        n = {s: sum(1 for c in plan.cautions if c.severity == s) for s in ("danger", "caution", "info")}
        self.counts.setText(f"{n['danger']} danger · {n['caution']} caution · {n['info']} info")


class _UnitOf:
    """The unit half of a Reading, read like a label (``tile.unit.text()``)."""

    def __init__(self, reading: Reading) -> None:
        self.reading = reading

    def text(self) -> str:
        return self.reading.unit()

    def setColour(self, colour) -> None:  # noqa: N802 - drawn with the number
        pass


class Tile(QFrame):
    """One recommended setting: its name, a large number with its unit beside it, and a detail line."""

    def __init__(self, key: str, name: str, unit: str, parent: QWidget | None = None, lines: int = 2) -> None:
        super().__init__(parent)
        self.key = key
        self.setObjectName(f"tile-{key}")
        self.setProperty("tile", True)
        self.setFrameShape(QFrame.Shape.StyledPanel)
        lay = QVBoxLayout(self)
        m = self.fontMetrics().height() // 3
        lay.setContentsMargins(m, m, m, m)
        lay.setSpacing(0)
        self.name = _text(self, name, 0.95, bold=True, wrap=True, name=f"tile-{key}-name")
        row = QHBoxLayout()
        row.setSpacing(m)
        self.value = Reading(self, name=f"tile-{key}-value")
        self.value.set_reading("—", unit)
        self.unit = _UnitOf(self.value)
        row.addWidget(self.value, 1)
        self.detail = _text(self, "", 0.9, wrap=True, name=f"tile-{key}-detail", lines=lines)
        lay.addWidget(self.name)
        lay.addLayout(row)
        lay.addWidget(self.detail)
        lay.addStretch(1)
        self.setToolTip(tooltip(key))
        self.setAccessibleName(name)

    def needed_width(self) -> int:
        """The narrowest this tile can be with nothing cut: the reading at its smallest comfortable size, and
        the longest word (or number) of its name and detail."""
        m = self.layout().contentsMargins()
        inner = max(self.value.width_at(Reading.MIN_SCALE), self.name.longest_unbroken(),
                    self.detail.longest_unbroken())
        return inner + m.left() + m.right() + 2 * self.frameWidth()

    def display(self, name: str, value: str, unit: str, detail: str) -> None:
        if self.name.text() != name:
            self.name.setText(name)
        self.value.set_reading(value, unit)
        if self.detail.text() != detail:
            self.detail.setText(detail)
        self.setAccessibleDescription(f"{name}: {value} {unit}. {detail}")


class SettingsPanel(QFrame):
    """The recommended settings, large and read at a glance."""

    TILES = (("set_vt", "Set tidal volume", "mL"), ("rate", "Rate", "/min"), ("ti", "Inspiratory time", "s"),
             ("flow", "Inspiratory flow", "L/min"), ("peep", "PEEP", "cmH2O"),
             ("limit", "Pressure limit", "cmH2O"), ("fio2", "FiO2", ""), ("fresh_gas", "Fresh gas flow", "L/min"))

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("settings-panel")
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        self.title = _label(self, "Recommended starting settings", 1.2, bold=True, wrap=True, name="settings-title")
        self.stale_tag = _label(self, "", 1.0, bold=True, wrap=True, name="settings-stale")
        self.stale_tag.setAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        _heading_row(outer, self.title, self.stale_tag)
        grid = QGridLayout()
        sp = self.fontMetrics().height() // 3
        grid.setSpacing(sp)
        self.grid = grid
        self.tiles: dict[str, Tile] = {}
        for key, name, unit in self.TILES:
            self.tiles[key] = Tile(key, name, unit, self, lines=3 if key == "fresh_gas" else 2)
        self.grid_tiles = dict(self.tiles)  # the eight settings; the machine strip lays out its own
        self.columns = 0
        self._place(4)
        outer.addLayout(grid)
        from ventset.gui.machine_tiles import MachineStrip

        self.machine = MachineStrip(self, lambda key, name, unit, parent: Tile(key, name, unit, parent, lines=2))
        self.tiles.update(self.machine.tiles)
        outer.addWidget(self.machine)
        self.theme = DAY
        self._stale: bool | None = None
        self.set_stale(False)

    COLUMN_CHOICES = (4, 3, 2, 1)

    def _place(self, columns: int) -> None:
        """Lay the tiles out in ``columns`` columns (rows as needed)."""
        if columns == self.columns:
            return
        for tile in self.grid_tiles.values():
            self.grid.removeWidget(tile)
        for c in range(max(self.columns, columns)):
            self.grid.setColumnStretch(c, 1 if c < columns else 0)
        for i, tile in enumerate(self.grid_tiles.values()):
            self.grid.addWidget(tile, i // columns, i % columns)
        self.columns = columns

    def reflow(self) -> None:
        """As many columns as keep every tile's number, name and detail whole at this width."""
        width = self.width()
        need = max(t.needed_width() for t in self.grid_tiles.values())
        sp = self.grid.horizontalSpacing()
        fits = [c for c in self.COLUMN_CHOICES if (width - (c - 1) * sp) / c >= need]
        self._place(fits[0] if fits else 1)

    def resizeEvent(self, e) -> None:  # noqa: N802 - Qt override
        super().resizeEvent(e)
        self.reflow()

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        s, self._stale = self._stale, None
        self.set_stale(bool(s))

    def set_stale(self, stale: bool) -> None:
        if stale == self._stale:
            return
        self._stale = stale
        t = self.theme
        value_colour = t.muted if stale else t.text
        bg = t.stale if stale else t.tile
        border = f"2px dashed {t.danger}" if stale else f"1px solid {t.border}"
        self.setStyleSheet(f"QFrame[tile=\"true\"] {{ background: {bg}; border: {border}; border-radius: 6px; }}"
                           f" #settings-stale {{ color: {t.danger}; }}")
        for tile in self.tiles.values():
            for w in (tile.name, tile.value, tile.unit, tile.detail):
                w.setColour(value_colour)
        self.stale_tag.setText("⚠ STALE: last valid plan, not the current input" if stale else "")

    def clear(self) -> None:
        """No plan (a new case): every tile shows a dash."""
        for key, name, unit in self.TILES:
            self.tiles[key].display(name, "—", unit, "")
        self.reflow()

    def show_plan(self, plan: Plan, gas_unit: str, mass_unit: str = "kg") -> None:
        """The eight settings as the presentation layer writes them (ventset.present.rows.setting_rows)."""
        for row in setting_rows(plan, reader_units(gas_unit, mass_unit)):
            self.tiles[row.key].display(row.name, row.value, row.unit, row.detail)
        self.machine.show_plan(plan, gas_unit)
        self.reflow()


class CautionRow(QFrame):
    def __init__(self, parent: QWidget) -> None:
        super().__init__(parent)
        self.setObjectName("caution-row")
        lay = QGridLayout(self)
        m = self.fontMetrics().height() // 3
        lay.setContentsMargins(m * 2, m, m * 2, m)
        lay.setHorizontalSpacing(m * 2)
        lay.setVerticalSpacing(0)
        self.icon = plain(QLabel(self))
        self.word = _label(self, "", 1.0, bold=True)
        self.code = _text(self, "", 0.8)  # small, and shown only where it fits whole (always in the tooltip)
        self.message = _text(self, "", 1.0, wrap=True)
        lay.addWidget(self.icon, 0, 0, 2, 1, Qt.AlignmentFlag.AlignTop)
        head = QHBoxLayout()
        head.setSpacing(m * 2)
        head.addWidget(self.word)
        head.addWidget(self.code)
        head.addStretch(1)
        lay.addLayout(head, 0, 1)
        lay.addWidget(self.message, 1, 1)
        lay.setColumnStretch(1, 1)
        self.severity = ""
        self.theme_key = ""

    def show_caution(self, severity: str, code: str, message: str, theme: Theme) -> None:
        if severity != self.severity or theme.key != self.theme_key:
            self.severity, self.theme_key = severity, theme.key
            fg, bg = severity_colours(theme, severity)
            self.icon.setPixmap(severity_pixmap(theme, severity, self.font()))
            self.word.setText(SEVERITY_WORD.get(severity, severity.upper()))
            width = 4 if severity == "danger" else 2
            self.setStyleSheet(f"#caution-row {{ background: {bg}; border-left: {width * 2}px solid {fg}; "
                               f"border-top: 1px solid {fg}; border-radius: 3px; }} "
                               f"#caution-row QLabel {{ color: {theme.text}; background: transparent; }}")
            self.word.setStyleSheet(f"color: {fg};")
            self.code.setColour(theme.text)
            self.message.setColour(theme.text)
        if self.code.text() != code:
            self.code.setText(code)
            self.setToolTip(plain_tip(f"{SEVERITY_WORD.get(severity, severity)} {code}"))
            self._fit_code()
        if self.message.text() != message:
            self.message.setText(message)
        self.setAccessibleName(f"{SEVERITY_WORD.get(severity, severity)}: {message}")


    def _fit_code(self) -> None:
        room = self.message.width() - self.word.sizeHint().width() - self.layout().horizontalSpacing()
        self.code.setVisible(self.code.longest_unbroken() + 2 <= room)

    def resizeEvent(self, e) -> None:  # noqa: N802 - Qt override
        super().resizeEvent(e)
        self._fit_code()


class CautionsPanel(QFrame):
    """Every caution of the plan, danger first, always visible."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("cautions-panel")
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        self.title = _label(self, "Cautions", 1.2, bold=True, name="cautions-title")
        self.summary = _text(self, "", 1.0, wrap=True, name="cautions-summary", align=Qt.AlignmentFlag.AlignRight)
        _heading_row(outer, self.title, self.summary, title_stretch=0)  # one word: never needs to wrap
        self.stale = _label(self, "", 0.95, bold=True, wrap=True, name="cautions-stale")
        self.stale.setVisible(False)
        outer.addWidget(self.stale)
        self.scroll = QScrollArea(self)
        self.scroll.setWidgetResizable(True)
        self.scroll.setFrameShape(QFrame.Shape.NoFrame)
        # Redrawn on most edits, as the list's height changes: shown from remembered images (gui/scrollbar.py)
        self.scroll.setVerticalScrollBar(RememberedScrollBar(Qt.Orientation.Vertical, self.scroll))
        self.body = QWidget(self.scroll)
        self.list = QVBoxLayout(self.body)
        self.list.setContentsMargins(0, 0, 0, 0)
        self.list.setSpacing(self.fontMetrics().height() // 3)
        self.list.addStretch(1)
        self.scroll.setWidget(self.body)
        outer.addWidget(self.scroll, 1)
        self.rows: list[CautionRow] = []
        self.theme = DAY

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.stale.setStyleSheet(f"color: {theme.danger};")

    def show_plan(self, plan: Plan, gas_unit: str = "mmHg") -> None:
        cautions = plan.cautions
        while len(self.rows) < len(cautions):
            row = CautionRow(self.body)
            self.list.insertWidget(len(self.rows), row)
            self.rows.append(row)
        self._reorder([c.code for c in cautions])
        for row, c in zip(self.rows, cautions, strict=False):
            row.show_caution(c.severity, c.code, c.text(reader_units(gas_unit)), self.theme)
            row.setVisible(True)
        for row in self.rows[len(cautions):]:
            row.setVisible(False)
        n = {s: sum(1 for c in cautions if c.severity == s) for s in ("danger", "caution", "info")}
        self.summary.setText(f"{n['danger']} danger · {n['caution']} caution · {n['info']} info")

    def clear(self) -> None:
        """No plan (a new case): no cautions from an earlier patient."""
        for row in self.rows:
            row.setVisible(False)
        self.summary.setText("")

    def _reorder(self, codes: list[str]) -> None:
        """Give each caution the row that showed it last time (moved into place), so that a caution added or
        removed above it does not restyle and re-lay out every row below."""
        kept = {r.code.text(): r for r in self.rows if not r.isHidden()}
        wanted = [kept.pop(code, None) for code in codes]
        spare = [r for r in self.rows if all(r is not w for w in wanted)]
        rows = [w if w is not None else spare.pop(0) for w in wanted] + spare
        if any(r is not old for r, old in zip(rows, self.rows, strict=True)):
            for i, row in enumerate(rows):
                if self.list.indexOf(row) != i:
                    self.list.removeWidget(row)
                    self.list.insertWidget(i, row)
            self.rows = rows

    def set_stale(self, stale: bool) -> None:
        self.stale.setText("⚠ These cautions belong to the last valid plan." if stale else "")
        self.stale.setVisible(stale)

    def shown(self) -> list[tuple[str, str, str]]:
        return [(r.severity, r.code.text(), r.message.text()) for r in self.rows if not r.isHidden()]


class DerivedPanel(QScrollArea):
    """Derived values with units: metabolism, ventilation, each dead-space part, mechanics, gases."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("derived-panel")
        self.setWidgetResizable(True)
        self.setFrameShape(QFrame.Shape.NoFrame)
        body = QWidget(self)
        self.grid = QGridLayout(body)
        self.grid.setColumnStretch(0, 1)
        self.grid.setHorizontalSpacing(self.fontMetrics().height())
        self.setWidget(body)
        self.body = body
        self.values: dict[str, tuple[QLabel, QLabel, QLabel]] = {}
        self.part_rows: list[tuple[QLabel, QLabel, QLabel]] = []
        self._row = 0
        self._built = False  # the rows are made when the tab is first shown (hidden at start: 4 ms of start-up)

    def showEvent(self, e) -> None:  # noqa: N802 - Qt override; sent before the tab is first painted
        self._build()
        super().showEvent(e)

    def _build(self) -> None:
        if self._built:
            return
        self._built = True
        layout = (
            ("Metabolism", [("metabolic_rate", "Metabolic rate"), ("vo2", "O2 consumption (VO2)"),
                            ("vco2", "CO2 output (VCO2)"), ("rq", "Respiratory quotient")]),
            ("Ventilation", [("alveolar_ventilation", "Alveolar ventilation"),
                             ("minute_ventilation", "Minute ventilation"), ("patient_vt", "Tidal volume at patient"),
                             ("vt_per_kg", "Tidal volume per kg lean mass"), ("te", "Expiratory time")]),
            ("Dead space", [("anatomical", "Anatomical (airway, intubated)")]),
        )
        for title, items in layout:
            self._section(title)
            for key, name in items:
                self._value_row(key, name)
        self._parts_at = self._row
        self._row += 40  # room for part rows
        for key, name in (("tube", "Tube beyond the incisors"), ("alveolar_ds", "Alveolar dead space"),
                          ("total_ds", "Total dead space")):
            self._value_row(key, name)
        self._section("Mechanics (predicted)")
        for key, name in (("plateau", "Plateau pressure"), ("peak", "Peak airway pressure"),
                          ("driving", "Driving pressure (plateau − PEEP)"), ("compliance", "Compliance"),
                          ("resistance", "Resistance"), ("tau", "Time constant τ = R·C"),
                          ("te_tau", "Expiration in time constants"), ("compressed", "Circuit compression")):
            self._value_row(key, name)
        self._section("Gases")
        for key, name in (("target_paco2", "Target PaCO2"), ("paco2", "Expected PaCO2"),
                          ("etco2", "Expected EtCO2"), ("gradient", "PaCO2 − EtCO2 gradient"),
                          ("pao2", "Alveolar PO2 (PAO2)"), ("pb", "Barometric pressure"),
                          ("ph2o", "Water vapour pressure"), ("min_o2", "Minimum O2 flow"),
                          ("reservoir_bag", "Reservoir bag")):
            self._value_row(key, name)
        self.grid.setRowStretch(self._row, 1)

    def _section(self, title: str) -> None:
        lab = _label(self.body, title, 1.05, bold=True)
        self.grid.addWidget(lab, self._row, 0, 1, 3)
        self._row += 1

    def _value_row(self, key: str, name: str, row: int | None = None) -> tuple[QLabel, Text, Text]:
        r = self._row if row is None else row
        n = _label(self.body, name)
        n.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
        n.setWordWrap(True)  # after the policy, which would clear its height-for-width
        n.setMinimumWidth(self.fontMetrics().averageCharWidth() * 12)
        v = _text(self.body, "—", 1.0, bold=True, name=f"derived-{key}", align=Qt.AlignmentFlag.AlignRight)
        v.setMinimumWidth(self.fontMetrics().horizontalAdvance("00000.0"))
        u = _text(self.body, "")
        u.setMinimumWidth(self.fontMetrics().horizontalAdvance("mL/cmH2O (0.75 mL/cmH2O)"))
        tip = tooltip(key)
        if tip:
            for w in (n, v, u):
                w.setToolTip(tip)
        self.grid.addWidget(n, r, 0)
        self.grid.addWidget(v, r, 1)
        self.grid.addWidget(u, r, 2)
        if row is None:
            self._row += 1
            self.values[key] = (n, v, u)
        return n, v, u

    def _set(self, key: str, value: str, unit: str) -> None:
        _, v, u = self.values[key]
        if v.text() != value:
            v.setText(value)
        if u.text() != unit:
            u.setText(unit)

    def show_plan(self, plan: Plan, gas_unit: str, mass_unit: str = "kg") -> None:
        """Every derived value as the presentation layer writes it (ventset.present.rows.derived_sections)."""
        self._build()
        parts: list[Row] = []
        for _title, rows in derived_sections(plan, reader_units(gas_unit, mass_unit)):
            for row in rows:
                if row.key.startswith("part"):
                    parts.append(row)
                elif row.key in self.values:
                    self._set(row.key, row.value, f"{row.unit} ({row.detail})".strip() if row.detail else row.unit)
        while len(self.part_rows) < len(parts):
            self.part_rows.append(self._value_row(f"part{len(self.part_rows)}", "",
                                                  self._parts_at + len(self.part_rows)))
        for (n, val, u), row in zip(self.part_rows, parts, strict=False):
            n.setText(row.name)
            n.setToolTip(plain_tip(f"{row.name.strip()}: {row.text} — {row.detail}"))
            val.setText(row.value)
            u.setText(row.unit)
            for w in (n, val, u):
                w.setVisible(True)
        for widgets in self.part_rows[len(parts):]:
            for w in widgets:
                w.setVisible(False)

    def clear(self) -> None:
        """No plan (a new case): every value a dash."""
        for _n, v, u in self.values.values():
            v.setText("—")
            u.setText("")
        for row in self.part_rows:
            for w in row:
                w.setVisible(False)

    def texts(self) -> list[str]:
        return [w.text() for w in self.body.findChildren(QLabel)] + [w.text() for w in self.body.findChildren(Text)]


class AssumptionsPanel(QTableWidget):
    """Every default the plan used, with its value and source."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(0, 3, parent)
        self.setObjectName("assumptions-panel")
        self.setHorizontalHeaderLabels(["Assumption", "Value", "Source"])
        self.verticalHeader().setVisible(False)
        self.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.setWordWrap(True)
        self.setAlternatingRowColors(True)
        h = self.horizontalHeader()
        h.setSectionResizeMode(0, QHeaderView.ResizeMode.Interactive)
        h.setSectionResizeMode(1, QHeaderView.ResizeMode.Interactive)
        h.setSectionResizeMode(2, QHeaderView.ResizeMode.Stretch)
        fm = self.fontMetrics()
        self._widths = (fm.horizontalAdvance("Anatomical dead space (unintubated)"),
                        fm.horizontalAdvance("29.3 cmH2O/(L/s)") + fm.height())
        self.setColumnWidth(0, self._widths[0])
        self.setColumnWidth(1, self._widths[1])
        self.setTextElideMode(Qt.TextElideMode.ElideNone)  # cells wrap; nothing is cut to '…'
        self.verticalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self._last: tuple = ()

    def resizeEvent(self, e) -> None:  # noqa: N802 - Qt override
        super().resizeEvent(e)
        w = self.viewport().width()  # a narrow table shares its width, the source keeping at least 40 %
        self.setColumnWidth(0, min(self._widths[0], int(w * 0.36)))
        self.setColumnWidth(1, min(self._widths[1], int(w * 0.24)))

    def clear(self) -> None:
        """No plan (a new case): no assumptions."""
        self._last = ()
        self.setRowCount(0)

    def show_plan(self, plan: Plan, gas_unit: str = "mmHg") -> None:
        """Every assumption as the presentation layer writes it, gas pressures in the reader's unit."""
        rows = tuple((r.name, r.value, r.detail) for r in assumption_rows(plan, reader_units(gas_unit)))
        if rows == self._last:
            return
        self._last = rows
        self.setRowCount(len(rows))
        for i, row in enumerate(rows):
            for j, text in enumerate(row):
                item = self.item(i, j)
                if item is None:
                    item = QTableWidgetItem()
                    self.setItem(i, j, item)
                if item.text() != text:
                    item.setText(text)
                    item.setToolTip(plain_tip(text))


def first_error_text(errors: list[InputError], shown: bool = True) -> str:
    """'Fix: field — reason', and whether the numbers on screen are from the last valid input (``shown``)."""
    if not errors:
        return ""
    e = errors[0]
    more = f" (and {len(errors) - 1} more)" if len(errors) > 1 else ""
    tail = " The numbers shown are from the last valid input." if shown else " Nothing is planned until then."
    return one_line(f"Fix: {e.field} — {e.reason}{more}.{tail}")

