"""The input form, built from ventset.fields.FIELDS and grouped the way a clinician thinks:
the patient, the breathing system, the targets, and how to choose tidal volume and rate.

Every edit goes through the undo stack as a change of the form state (ventset.gui.formstate),
and every change rebuilds the Request and hands it to the PlanController at once.
"""

from __future__ import annotations

from PySide6.QtCore import QEvent, QStringListModel, Qt, QTimer, Signal
from PySide6.QtGui import QKeySequence, QUndoCommand, QUndoStack
from PySide6.QtWidgets import (
    QAbstractItemView,
    QButtonGroup,
    QComboBox,
    QCompleter,
    QFrame,
    QGridLayout,
    QGroupBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPushButton,
    QRadioButton,
    QTableWidget,
    QTableWidgetItem,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from ventset.errors import InputError
from ventset.fields import FIELDS, FieldSpec
from ventset.gui import formstate as fs
from ventset.gui.situations import SituationPicker
from ventset.gui.text import esc, plain, plain_tip
from ventset.gui.theme import DAY, Theme, scaled_font
from ventset.library import TAXON_PREFIX, Library
from ventset.model import STRATEGIES, STRATEGY_LABELS, Assumption, Plan, Request
from ventset.present.quantities import show
from ventset.units import fmt

# Where each field sits: (group, shown at once, under "More ..."). Fields added to FIELDS later
# appear at the end of their group's first list without any change here.
LAYOUT: dict[str, tuple[list[str], list[str]]] = {
    "patient": (["mass", "lean-mass", "body-temperature", "metabolic-rate"],
                ["rq", "alveolar-dead-space", "compliance", "resistance"]),
    "circuit": (["tube-id", "tube-length", "compressible-volume"], ["sampling-flow", "oxygen-supply", "duration"]),
    "targets": (["target-paco2", "target-etco2", "gradient", "peep", "ie", "ti", "inspiratory-pause",
                 "pressure-limit", "fio2", "altitude", "barometric-pressure"], []),
    "strategy": (["vt-per-kg", "rate"], []),
}
GROUP_TITLES = {"patient": "Patient", "circuit": "Breathing system", "targets": "Targets",
                "strategy": "Choosing tidal volume and rate"}
MORE_TITLES = {"patient": "More: lungs and gas exchange", "circuit": "More: gas sampling, oxygen supply"}
PAIR_LABELS = {"target": "Aim for", "timing": "Timing by"}

# Assumption names in a plan that give the source of a field's default (for the tooltip).
FIELD_ASSUMPTION = {
    "lean-mass": "Lean mass", "body-temperature": "Body temperature", "rq": "Respiratory quotient",
    "metabolic-rate": "Metabolic constant K", "alveolar-dead-space": "Alveolar dead-space fraction",
    "compliance": "Respiratory-system compliance per kg", "resistance": "Airway resistance",
    "compressible-volume": "Circuit compressible volume", "target-paco2": "Target PaCO2",
    "gradient": "PaCO2 − EtCO2 gradient", "peep": "PEEP", "ie": "I:E", "ti": "Inspiratory time",
    "inspiratory-pause": "Inspiratory pause",
    "pressure-limit": "Pressure limit", "fio2": "FiO2", "barometric-pressure": "Barometric pressure",
    "vt-per-kg": "Starting tidal volume", "rate": "Rate of least work",
}
# How a default is shown in an empty field ({} is the number). Grey text = the value in use, not typed.
DEFAULT_WORD = {"metabolic-rate": "≈ {} (estimate)", "rate": "{} (solved)", "lean-mass": "= body mass",
                "altitude": "{} (sea level)"}
NO_DEFAULT = {"mass": "required", "tube-id": "not entered", "tube-length": "not entered",
              "oxygen-supply": "a full cylinder", "duration": "2 h"}
# A number being typed that cannot be planned yet ('4' of a horse's '450') is said to be wrong only once the typing
# pauses this long (or on Enter); a typed number that can be planned is planned at once.
TYPING_PAUSE_MS = 250


def compact(combo: QComboBox, chars: int = 10) -> QComboBox:
    """Let a combo box shrink to ``chars`` characters (its popup still shows whole entries)."""
    combo.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
    combo.setMinimumContentsLength(chars)
    combo.view().setTextElideMode(Qt.TextElideMode.ElideNone)
    return combo


def _layout_keys() -> dict[str, tuple[list[str], list[str]]]:
    placed = {k for main, more in LAYOUT.values() for k in (*main, *more)}
    out = {g: (list(main), list(more)) for g, (main, more) in LAYOUT.items()}
    for key, spec in FIELDS.items():
        if key not in placed:
            out.setdefault(spec.group, ([], []))[0].append(key)
    for g, (main, more) in out.items():
        out[g] = ([k for k in main if k in FIELDS], [k for k in more if k in FIELDS])
    return out


class FieldEdit(QLineEdit):
    """A line edit that leaves Undo/Redo to the window, so one history covers the whole form."""

    def event(self, e: QEvent) -> bool:
        if e.type() == QEvent.Type.ShortcutOverride and (
                e.matches(QKeySequence.StandardKey.Undo) or e.matches(QKeySequence.StandardKey.Redo)):
            e.ignore()
            return False
        return super().event(e)

    def keyPressEvent(self, e) -> None:  # noqa: N802 - Qt override
        if e.matches(QKeySequence.StandardKey.Undo) or e.matches(QKeySequence.StandardKey.Redo):
            e.ignore()
            return
        super().keyPressEvent(e)


class StateCommand(QUndoCommand):
    """One user edit: a set of state keys, each from an old to a new value. Typing merges."""

    MERGE_ID = 1701

    def __init__(self, form: InputForm, changes: dict[str, tuple[object, object]], text: str,
                 merge_key: object = None, applied: bool = False) -> None:
        super().__init__(text)
        self.form = form
        self.changes = dict(changes)
        self.merge_key = merge_key
        self._skip_redo = applied  # the change is already on screen (a loaded request)

    def id(self) -> int:
        return self.MERGE_ID if self.merge_key is not None else -1

    def mergeWith(self, other: QUndoCommand) -> bool:  # noqa: N802 - Qt override
        if not isinstance(other, StateCommand) or other.merge_key != self.merge_key or self.merge_key is None:
            return False
        for k, (_, new) in other.changes.items():
            old = self.changes[k][0] if k in self.changes else other.changes[k][0]
            self.changes[k] = (old, new)
        return True

    def redo(self) -> None:
        if self._skip_redo:
            self._skip_redo = False
            return
        self.form._apply({k: new for k, (_, new) in self.changes.items()})

    def undo(self) -> None:
        self.form._apply({k: old for k, (old, _) in self.changes.items()})


class FieldRow:
    """Label (or either-or radio), entry, unit chooser and the in-place error line for one field."""

    def __init__(self, form: InputForm, spec: FieldSpec, parent: QWidget) -> None:
        self.spec = spec
        self.key = spec.key
        pair = fs.pair_of(spec.key)
        self.label: QLabel | QRadioButton
        if pair:
            self.label = QRadioButton(spec.label, parent)
        else:
            self.label = plain(QLabel(spec.label, parent))
            self.label.setWordWrap(True)
        self.edit = FieldEdit(parent)
        self.edit.setObjectName(f"field-{spec.key}")
        self.edit.setAccessibleName(spec.label)
        self.edit.setAccessibleDescription(spec.help)
        self.edit.setClearButtonEnabled(False)
        if isinstance(self.label, QLabel):
            self.label.setBuddy(self.edit)
        self.unit: QComboBox | QLabel
        if len(spec.units) > 1:
            self.unit = QComboBox(parent)
            for u in spec.units:
                self.unit.addItem(fs.shown_unit(u, spec.key), u)
            self.unit.setAccessibleName(f"{spec.label} unit")
            self.unit.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        else:
            self.unit = plain(QLabel(fs.shown_unit(spec.units[0], spec.key), parent))
        self.error = plain(QLabel(parent))
        self.error.setWordWrap(True)
        self.error.setVisible(False)
        self.error.setObjectName(f"error-{spec.key}")
        self.invalid = False
        self._tooltip = ""
        self.said: tuple | None = None  # the default in use the tooltip names (value, unit, source)
        self.set_tooltip(f"<b>{esc(spec.label)}</b><br>{esc(spec.help)}")

    def set_tooltip(self, text: str) -> None:
        if text != self._tooltip:
            self._tooltip = text
            for w in (self.label, self.edit, self.unit):
                w.setToolTip(text)

    def widgets(self) -> list[QWidget]:
        return [self.label, self.edit, self.unit, self.error]


class SpeciesPicker(QComboBox):
    """Species with type-to-search over names and aliases ("budgie" finds the parrot entry)."""

    picked = Signal(str)  # species key, or the raw text when it matches nothing

    def __init__(self, library: Library, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.library = library
        self.setEditable(True)
        self.setInsertPolicy(QComboBox.InsertPolicy.NoInsert)
        self.setObjectName("species")
        self.setAccessibleName("Species")
        compact(self, 12)
        self.lookup: dict[str, str] = {}
        entries = []
        listed = sorted(library.species.values(), key=lambda s: s.label)
        for sp in (*listed, *library.taxa.values()):  # then "not listed: by group" (key taxon:<group>)
            label = sp.label if sp.key in library.species else f"Not listed — by group: {sp.group.label}"
            self.addItem(label, sp.key)
            self.lookup[label.lower()] = sp.key
            entries.append(label)
            for alias in (*sp.aliases, *sp.young_aliases):
                text = f"{alias} — {sp.label}"
                self.lookup[text.lower()] = sp.key
                self.lookup.setdefault(alias.lower(), sp.key)
                entries.append(text)
        comp = QCompleter(QStringListModel(entries, self), self)
        comp.setFilterMode(Qt.MatchFlag.MatchContains)
        comp.setCaseSensitivity(Qt.CaseSensitivity.CaseInsensitive)
        comp.setCompletionMode(QCompleter.CompletionMode.PopupCompletion)
        comp.setMaxVisibleItems(12)
        self.setCompleter(comp)
        comp.activated[str].connect(self._completed)
        self.activated.connect(self._index_picked)
        self.lineEdit().editingFinished.connect(self._typed)
        self._key = ""

    def key_for(self, text: str) -> str | None:
        t = text.strip().lower()
        if t in self.lookup:
            return self.lookup[t]
        sp = self.library.find_species(text) if text.strip() else None
        return sp.key if sp else None

    def _completed(self, text: str) -> None:
        key = self.key_for(text)
        if key:
            self.show_key(key)
            self.picked.emit(key)

    def _index_picked(self, index: int) -> None:
        key = self.itemData(index)
        if key and key != self._key:
            self.picked.emit(key)

    def _typed(self) -> None:
        text = self.currentText()
        key = self.key_for(text)
        if key:
            if key != self._key:
                self.picked.emit(key)
            self.show_key(key)
        elif text.strip() and text != self._key:
            self.picked.emit(text)

    def show_key(self, key: str) -> None:
        self._key = key
        i = self.findData(key)
        self.blockSignals(True)
        if i >= 0:
            self.setCurrentIndex(i)
            self.setEditText(self.itemText(i))
        else:
            self.setEditText(key)
        self.blockSignals(False)


class PartsEditor(QWidget):
    """Apparatus between the Y-piece and the incisors: catalogue parts or measured ones, volumes editable."""

    changed = Signal(tuple)  # new parts tuple

    def __init__(self, library: Library, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.library = library
        self.parts: tuple = ()
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.table = QTableWidget(0, 2, self)
        self.table.setObjectName("parts-table")
        self.table.setAccessibleName("Apparatus parts")
        self.table.setHorizontalHeaderLabels(["Part between Y-piece and incisors", "mL"])
        self.table.horizontalHeader().setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        self.table.horizontalHeader().setSectionResizeMode(1, QHeaderView.ResizeMode.ResizeToContents)
        self.table.verticalHeader().setVisible(False)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.DoubleClicked
                                   | QAbstractItemView.EditTrigger.EditKeyPressed
                                   | QAbstractItemView.EditTrigger.AnyKeyPressed)
        self.table.setToolTip("Each part's internal volume is dead space. Edit a volume to enter the stated or "
                              "measured volume of the actual device (double-click or F2). Delete removes a part.")
        self.table.itemChanged.connect(self._item_changed)
        lay.addWidget(self.table)
        row = QHBoxLayout()
        self.catalogue = QComboBox(self)
        self.catalogue.setObjectName("parts-catalogue")
        self.catalogue.setAccessibleName("Apparatus catalogue")
        for part in sorted(library.parts.values(), key=lambda p: p.label):
            self.catalogue.addItem(f"{part.label} — {fmt(part.volume_ml.value)} mL", part.key)
            self.catalogue.setItemData(self.catalogue.count() - 1, plain_tip(f"{fmt(part.volume_ml.value)} mL: "
                                       f"{part.volume_ml.source}"), Qt.ItemDataRole.ToolTipRole)
        compact(self.catalogue, 12)
        self.add_button = QPushButton("Add", self)
        self.add_button.setObjectName("parts-add")
        self.add_button.setToolTip("Add the catalogue part shown (typical volume; edit it to the real device)")
        self.add_button.clicked.connect(self.add_catalogue)
        row.addWidget(self.catalogue, 1)
        row.addWidget(self.add_button)
        lay.addLayout(row)
        row2 = QHBoxLayout()
        self.own_name = QLineEdit(self)
        self.own_name.setPlaceholderText("Other part (name)")
        self.own_name.setAccessibleName("Other part name")
        self.own_volume = QLineEdit(self)
        self.own_volume.setPlaceholderText("mL")
        self.own_volume.setAccessibleName("Other part volume in mL")
        self.own_volume.setMaximumWidth(self.fontMetrics().horizontalAdvance("00000 mL") + 12)
        self.own_add = QPushButton("Add measured", self)
        self.own_add.setObjectName("parts-add-measured")
        self.own_add.clicked.connect(self.add_measured)
        self.own_volume.returnPressed.connect(self.add_measured)
        self.remove_button = QPushButton("Remove", self)
        self.remove_button.setObjectName("parts-remove")
        self.remove_button.setToolTip("Remove the selected part (Delete)")
        self.remove_button.clicked.connect(self.remove_selected)
        row2.addWidget(self.own_name, 1)
        row2.addWidget(self.own_volume)
        row2.addWidget(self.own_add)
        lay.addLayout(row2)
        row3 = QHBoxLayout()
        self.message = plain(QLabel(self))
        self.message.setWordWrap(True)
        row3.addWidget(self.message, 1)
        row3.addWidget(self.remove_button)
        lay.addLayout(row3)
        self.table.installEventFilter(self)

    def eventFilter(self, obj, e) -> bool:  # noqa: N802 - Qt override
        if obj is self.table and e.type() == QEvent.Type.KeyPress and e.key() in (Qt.Key.Key_Delete,
                                                                                  Qt.Key.Key_Backspace):
            if self.table.state() != QAbstractItemView.State.EditingState:
                self.remove_selected()
                return True
        return super().eventFilter(obj, e)

    def show_parts(self, parts: tuple) -> None:
        self.parts = tuple(parts)
        self.table.blockSignals(True)
        self.table.setRowCount(len(parts))
        for i, part in enumerate(parts):
            name = QTableWidgetItem(part[0])
            name.setFlags(name.flags() & ~Qt.ItemFlag.ItemIsEditable)
            name.setToolTip(plain_tip(f"{part[0]}: {part[2]}"))
            vol = QTableWidgetItem(part[1])
            vol.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            vol.setToolTip(plain_tip(f"Volume in mL ({part[2]}). Edit to the real device's volume."))
            self.table.setItem(i, 0, name)
            self.table.setItem(i, 1, vol)
        self.table.blockSignals(False)
        rows = max(1, len(parts))
        h = self.table.horizontalHeader().sizeHint().height() + rows * self.table.verticalHeader().defaultSectionSize()
        self.table.setFixedHeight(h + 2 * self.table.frameWidth() + 2)
        self.remove_button.setEnabled(bool(parts))

    def _item_changed(self, item: QTableWidgetItem) -> None:
        if item.column() != 1:
            return
        i = item.row()
        if i >= len(self.parts):
            return
        old = self.parts[i]
        text = item.text().strip()
        if text == old[1]:
            return
        source = old[2] if old[2].startswith("entered") else f"entered by the user (catalogue value {old[1]} mL)"
        new = (old[0], text, source, None)
        self.changed.emit(self.parts[:i] + (new,) + self.parts[i + 1:])

    def add_catalogue(self) -> None:
        key = self.catalogue.currentData()
        part = self.library.parts.get(key)
        if part is None:
            return
        v = part.volume_ml.value
        self.changed.emit(self.parts + ((part.label, fs.edit_text(v), part.volume_ml.source, v),))

    def add_measured(self) -> None:
        name = self.own_name.text().strip() or "Other part"
        text = self.own_volume.text().strip()
        if not text:
            self.message.setText("Enter the part's volume in mL, then Add measured.")
            return
        self.changed.emit(self.parts + ((name, text, "entered by the user", None),))
        self.own_name.clear()
        self.own_volume.clear()

    def remove_selected(self) -> None:
        rows = sorted({i.row() for i in self.table.selectedIndexes()}, reverse=True)
        if not rows and self.table.currentRow() >= 0:
            rows = [self.table.currentRow()]
        if not rows:
            return
        parts = list(self.parts)
        for r in rows:
            if r < len(parts):
                del parts[r]
        self.changed.emit(tuple(parts))

    def mark(self, message: str, theme: Theme) -> None:
        self.message.setText(f"⚠ {message}" if message else "")
        self.message.setStyleSheet(f"color: {theme.danger}; font-weight: bold;" if message else "")


class InputForm(QWidget):
    """All inputs. Owns the form state; pushes every change through the undo stack."""

    units_changed = Signal()           # any unit choice changed (the window remembers them)
    gas_unit_changed = Signal(str)

    def __init__(self, controller, library: Library, undo: QUndoStack, units: dict[str, str] | None = None,
                 parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.controller = controller
        self.library = library
        self.undo = undo
        self.theme: Theme = DAY
        self.state: dict = fs.blank_state(units)
        self.rows: dict[str, FieldRow] = {}
        self._session = 0
        self._loading = False
        self._assumption_sources: dict[str, str] = {}
        self._errors: dict[str, str] = {}
        # Every keystroke that gives a plan is planned at once (the numbers follow the box within a frame). One
        # that does not ('4' of a horse's '450', an empty box) puts the settled plan back on screen and is said
        # to be wrong once the typing pauses, so the plan kept stale is never a half-typed one. Settled: what
        # stood for the pause, or came by Enter, focus-out, undo, a file or any other change.
        self._typing = False
        self._settled: Request | None = None
        self._submit_timer = QTimer(self)
        self._submit_timer.setSingleShot(True)
        self._submit_timer.setInterval(TYPING_PAUSE_MS)
        self._submit_timer.timeout.connect(self._pause_ended)
        self._build_ui()
        controller.add_flush_hook(self.flush_typing)
        controller.request_changed.connect(self.load_request)
        controller.plan_ready.connect(self.show_plan)
        controller.plan_invalid.connect(self.show_errors)

    # ---------------------------------------------------------------- layout
    def _build_ui(self) -> None:
        outer = QVBoxLayout(self)
        outer.setSpacing(max(6, self.fontMetrics().height() // 2))
        keys = _layout_keys()
        hint = QLabel("Grey numbers are the defaults in use: type to override, empty a field to return to the "
                      "default. Hover over any label for its definition and source.", self)
        plain(hint).setWordWrap(True)
        hint.setFont(scaled_font(self.font(), 0.9))
        hint.setObjectName("form-hint")
        outer.addWidget(hint)
        for group in ("patient", "circuit", "targets", "strategy", *[g for g in keys if g not in GROUP_TITLES]):
            box = QGroupBox(GROUP_TITLES.get(group, group.title()), self)
            box.setObjectName(f"group-{group}")
            box.setFont(scaled_font(self.font(), 1.1, bold=True))
            grid = QGridLayout(box)
            grid.setColumnStretch(1, 1)
            grid.setVerticalSpacing(max(2, self.fontMetrics().height() // 4))
            self._r = 0
            body_font = self.font()
            if group == "patient":
                self._patient_header(box, grid)
            elif group == "circuit":
                self._circuit_header(box, grid)
            elif group == "strategy":
                self._strategy_header(box, grid)
            main, more = keys.get(group, ([], []))
            for key in main:
                self._add_row(box, grid, key)
            if more:
                toggle = QToolButton(box)
                toggle.setText(MORE_TITLES.get(group, "More"))
                toggle.setCheckable(True)
                toggle.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextBesideIcon)
                toggle.setArrowType(Qt.ArrowType.RightArrow)
                toggle.setAutoRaise(True)
                toggle.setObjectName(f"more-{group}")
                grid.addWidget(toggle, self._r, 0, 1, 3)
                self._r += 1
                sub = QFrame(box)
                sub_grid = QGridLayout(sub)
                sub_grid.setContentsMargins(0, 0, 0, 0)
                sub_grid.setColumnStretch(1, 1)
                r0 = self._r
                self._r = 0
                for key in more:
                    self._add_row(sub, sub_grid, key)
                self._r = r0
                grid.addWidget(sub, self._r, 0, 1, 3)
                self._r += 1
                sub.setVisible(False)

                def flip(on: bool, sub=sub, toggle=toggle) -> None:
                    sub.setVisible(on)
                    toggle.setArrowType(Qt.ArrowType.DownArrow if on else Qt.ArrowType.RightArrow)

                toggle.toggled.connect(flip)
                setattr(self, f"more_{group}", toggle)
            for w in box.findChildren(QWidget):
                w.setFont(body_font)
            outer.addWidget(box)
        self._pairs()
        outer.addStretch(1)
        self._sync_all()

    def _add_row(self, parent: QWidget, grid: QGridLayout, key: str) -> None:
        row = FieldRow(self, FIELDS[key], parent)
        self.rows[key] = row
        grid.addWidget(row.label, self._r, 0)
        if key == "ie":
            box = QWidget(parent)
            h = QHBoxLayout(box)
            h.setContentsMargins(0, 0, 0, 0)
            h.addWidget(plain(QLabel("1 :", box)))
            h.addWidget(row.edit, 1)
            grid.addWidget(box, self._r, 1)
        else:
            grid.addWidget(row.edit, self._r, 1)
        grid.addWidget(row.unit, self._r, 2)
        grid.addWidget(row.error, self._r + 1, 0, 1, 3)
        self._r += 2
        row.edit.textEdited.connect(lambda text, k=key: self._typed(k, text))
        row.edit.editingFinished.connect(lambda k=key: self._finished(k))
        if isinstance(row.unit, QComboBox):
            row.unit.activated.connect(lambda i, k=key: self._unit_picked(k, i))

    def _label_row(self, parent: QWidget, grid: QGridLayout, text: str, widget: QWidget, tip: str = "") -> QLabel:
        lab = plain(QLabel(text, parent))
        lab.setBuddy(widget)
        grid.addWidget(lab, self._r, 0)
        grid.addWidget(widget, self._r, 1, 1, 2)
        if tip:
            lab.setToolTip(tip)
            widget.setToolTip(tip)
        self._r += 1
        return lab

    def _patient_header(self, box: QGroupBox, grid: QGridLayout) -> None:
        self.name_edit = FieldEdit(box)
        self.name_edit.setObjectName("patient-name")
        self.name_edit.setPlaceholderText("e.g. the patient's name and case number")
        self.name_edit.setAccessibleName("Patient name")
        self._label_row(box, grid, "Name", self.name_edit, "Printed on the plan; not used in any calculation.")
        self.name_edit.textEdited.connect(lambda t: self._push({"name": t}, "Edit name", ("name", self._session)))
        self.name_edit.editingFinished.connect(self._seal)
        self.species = SpeciesPicker(self.library, box)
        self._label_row(box, grid, "Species", self.species,
                        "Type any part of a name or alias (e.g. 'budgie', 'pony', 'bearded dragon') and pick "
                        "from the list. Every default below comes from this entry of the species library. For a "
                        "species not listed, pick 'Not listed — by group' to plan from its metabolic group alone.")
        self.species.picked.connect(self.change_species)
        self.species_error = plain(QLabel(box))
        self.species_error.setWordWrap(True)
        self.species_error.setVisible(False)
        grid.addWidget(self.species_error, self._r, 0, 1, 3)
        self._r += 1
        self.species_notice = plain(QLabel(box))
        self.species_notice.setObjectName("species-notice")
        self.species_notice.setWordWrap(True)
        self.species_notice.setVisible(False)
        grid.addWidget(self.species_notice, self._r, 0, 1, 3)
        self._r += 1
        self.custom_edit = FieldEdit(box)
        self.custom_edit.setObjectName("custom-species")
        self.custom_edit.setPlaceholderText("only if the species is not listed")
        self.custom_edit.setAccessibleName("Species not listed")
        self._label_row(box, grid, "Not listed? Name", self.custom_edit,
                        "A species that is not in the library: name it here, choose the closest listed species "
                        "above as its base, then enter every value you know below (temperature, metabolic rate, "
                        "compliance, tidal volume per kg …). Anything left empty comes from the base species.")
        self.custom_edit.textEdited.connect(
            lambda t: self._push({"custom_species": t}, "Name custom species", ("custom", self._session)))
        self.custom_edit.editingFinished.connect(self._seal)
        self.situations = SituationPicker(self.library, box)
        tip = ("Surgery, disease or physiology that changes the plan (several at once): each one's effects and "
               "sources appear in the plan's assumptions and cautions.")
        lab = plain(QLabel("Situation (tick any)", box))
        lab.setBuddy(self.situations.list)
        lab.setToolTip(tip)
        grid.addWidget(lab, self._r, 0, 1, 3)
        grid.addWidget(self.situations, self._r + 1, 0, 1, 3)
        self._r += 2
        self.situations.changed.connect(lambda keys: self._push({"situations": keys}, "Change situations"))
        self.age_combo = QComboBox(box)
        self.age_combo.setObjectName("age")
        for value, text in (("", "By body mass"), ("adult", "Adult"), ("juvenile", "Juvenile (growing)"),
                            ("neonate", "Neonate")):
            self.age_combo.addItem(text, value)
        compact(self.age_combo)
        self._label_row(box, grid, "Age", self.age_combo,
                        "Growing animals use more oxygen per kg than the adult line: a juvenile or neonate is planned "
                        "at the species' own published level, or the placental default (see the assumptions). "
                        "'By body mass' uses the species' mass thresholds where it has them.")
        self.age_combo.activated.connect(
            lambda i: self._push({"age": self.age_combo.itemData(i)}, "Change age"))
        self.state_combo = QComboBox(box)
        self.state_combo.setObjectName("state")
        for value, text in (("fasted", "Fasted (standard rate)"), ("fed", "Recently fed"), ("gravid", "Gravid")):
            self.state_combo.addItem(text, value)
        compact(self.state_combo)
        self._label_row(box, grid, "Reptile state", self.state_combo,
                        "For reptiles and other ectotherms: a meal raises metabolism several-fold for days, "
                        "gestation by about a third (published multipliers in the assumptions).")
        self.state_combo.activated.connect(
            lambda i: self._push({"state": self.state_combo.itemData(i)}, "Change physiological state"))

    def _circuit_header(self, box: QGroupBox, grid: QGridLayout) -> None:
        self.mode_combo = QComboBox(box)
        self.mode_combo.setObjectName("mode")
        compact(self.mode_combo)
        for value, text in (("", "Species default"), ("volume", "Volume-controlled"),
                            ("pressure", "Pressure-controlled")):
            self.mode_combo.addItem(text, value)
        self._label_row(box, grid, "Mode", self.mode_combo,
                        "Volume-controlled: the ventilator delivers a set volume at constant flow. "
                        "Pressure-controlled: it holds a set pressure for the inspiratory time.")
        self.mode_combo.activated.connect(
            lambda i: self._push({"mode": self.mode_combo.itemData(i)}, "Change mode"))
        self.circuit_combo = QComboBox(box)
        self.circuit_combo.setObjectName("circuit")
        compact(self.circuit_combo)
        self.circuit_combo.addItem("By body mass", "")
        for c in self.library.circuits.values():
            self.circuit_combo.addItem(c.label, c.key)
        self._label_row(box, grid, "System", self.circuit_combo,
                        "The breathing system sets the fresh gas flow and how much volume the tubing absorbs "
                        "by compression.")
        self.circuit_combo.activated.connect(
            lambda i: self._push({"circuit": self.circuit_combo.itemData(i)}, "Change breathing system"))
        self._machine_row(box, grid)
        self.parts_editor = PartsEditor(self.library, box)
        grid.addWidget(self.parts_editor, self._r, 0, 1, 3)
        self._r += 1
        self.parts_editor.changed.connect(lambda parts: self._push({"parts": parts}, "Change apparatus"))

    def _machine_row(self, box: QGroupBox, grid: QGridLayout) -> None:
        """The ventilator class the plan is also dialled on (ventset.machines); none: ideal settings only."""
        from ventset.gui import machine_choice

        self.machine_combo = QComboBox(box)
        self.machine_combo.setObjectName("machine")
        compact(self.machine_combo)
        machine_choice.fill_when_used(self.machine_combo)  # the list is read from disk when first used
        self._label_row(box, grid, "Ventilator", self.machine_combo,
                        "The kind of ventilator in use: the plan is also given as the settings its controls can "
                        "be turned to, and re-evaluated as dialled.")
        self.machine_combo.activated.connect(
            lambda i: self._push({"machine": self.machine_combo.itemData(i)}, "Change ventilator"))

    def _strategy_header(self, box: QGroupBox, grid: QGridLayout) -> None:
        self.strategy_combo = QComboBox(box)
        self.strategy_combo.setObjectName("strategy")
        for s in STRATEGIES:
            self.strategy_combo.addItem(STRATEGY_LABELS[s], s)
        compact(self.strategy_combo)
        self._label_row(box, grid, "Method", self.strategy_combo,
                        "Both methods reach the same alveolar ventilation; they differ in how it is split between "
                        "tidal volume and rate. Entering a rate below holds that rate.")
        self.strategy_combo.activated.connect(
            lambda i: self._push({"strategy": self.strategy_combo.itemData(i)}, "Change method"))

    def _pairs(self) -> None:
        self.pair_groups: dict[str, QButtonGroup] = {}
        for name, members in fs.PAIRS.items():
            if not all(m in self.rows for m in members):
                continue
            group = QButtonGroup(self)
            group.setExclusive(True)
            for m in members:
                radio = self.rows[m].label
                group.addButton(radio)
                radio.setToolTip(f"{PAIR_LABELS.get(name, 'Use')} {FIELDS[m].label}: only the chosen one of "
                                 f"{' / '.join(FIELDS[x].label for x in members)} is used.")
                radio.toggled.connect(lambda on, n=name, k=m: on and self._choose(n, k))
            self.pair_groups[name] = group

    # ---------------------------------------------------------------- edits → undo stack
    def _seal(self) -> None:
        """End a typing run: the next keystroke starts a new undo step."""
        self._session += 1

    def _push(self, new: dict, text: str, merge_key: object = None) -> None:
        if self._loading:
            return
        changes = {k: (self.state.get(k), v) for k, v in new.items() if self.state.get(k) != v}
        if not changes:
            return
        self.undo.push(StateCommand(self, changes, text, merge_key))

    def change_species(self, key: str) -> None:
        """Make ``key`` the species: one undo step that also starts the previous patient's values afresh."""
        sp = self.library.species.get(key)
        if sp is None and key.startswith(TAXON_PREFIX):  # a species not listed, by its metabolic group
            sp = self.library.taxa.get(key.removeprefix(TAXON_PREFIX))
        # Text that names no species (a typo being corrected) is marked, and resets nothing yet.
        changes = fs.species_change(self.state, key, sp.label) if sp is not None else {"species": key}
        self._push(changes, f"Change species to {sp.label if sp else key}")
        self._seal()

    def new_patient(self) -> None:
        """An empty form for a new patient: the species and the units stay, everything else is cleared. Not an
        undo step (a new case starts a new history) and no plan until the body mass is entered."""
        fresh = fs.blank_state(self.units())
        fresh["species"] = self.state.get("species", "")
        self._loading = True
        try:
            self.state.clear()
            self.state.update(fresh)
            self._sync_all()
        finally:
            self._loading = False
        for key, row in self.rows.items():
            row.edit.setPlaceholderText(NO_DEFAULT.get(key, ""))
        self._seal()
        self.controller.clear()
        self._submit()

    def _typed(self, key: str, text: str) -> None:
        self._typing = True
        try:
            self._push({fs.TEXT + key: text, fs.EXACT + key: None}, f"Edit {FIELDS[key].label}",
                       (key, self._session))
        finally:
            self._typing = False

    def flush_typing(self) -> None:
        """Plan what is typed now, if the typing pause has not come yet."""
        if self._submit_timer.isActive():
            self._submit_timer.stop()
            self._pause_ended()

    def _finished(self, key: str) -> None:
        """Enter or focus out: a unit typed with the number ('35 g') moves the unit chooser (and the related
        fields) to it, in the same undo step as the typing; the next keystroke starts a new step."""
        typed = fs.typed_unit(key, self.state.get(fs.TEXT + key, ""))
        if typed is not None and typed[1] != self.state.get(fs.UNIT + key):
            number, unit = typed
            changes = self._unit_changes(key, unit)
            changes.update({fs.TEXT + key: number, fs.EXACT + key: None})
            self._push(changes, f"Edit {FIELDS[key].label}", (key, self._session))
        self.flush_typing()
        self._seal()

    def _unit_changes(self, key: str, unit: str) -> dict:
        """State changes that show ``key`` and its related fields (formstate.related) in ``unit``."""
        changes: dict = {}
        for k in (key, *fs.related(key)):
            if unit in FIELDS[k].units:
                changes.update(fs.convert_field(self.state, k, unit))
        return changes

    def _unit_picked(self, key: str, index: int) -> None:
        unit = self.rows[key].unit.itemData(index)
        if key in fs.GAS_FIELDS:
            self.set_gas_unit(unit)
            return
        self._push(self._unit_changes(key, unit), f"Show {FIELDS[key].label} in {fs.shown_unit(unit, key)}")
        self._seal()

    def set_gas_unit(self, unit: str) -> None:
        """Show every gas pressure field in mmHg or kPa (one undo step; no value changes)."""
        changes: dict = {}
        for key in fs.GAS_FIELDS:
            if unit in FIELDS[key].units:
                changes.update(fs.convert_field(self.state, key, unit))
        self._push(changes, f"Show gas pressures in {unit}")
        self._seal()

    def gas_unit(self) -> str:
        return self.state.get(fs.UNIT + "target-paco2", "mmHg")

    def units(self) -> dict[str, str]:
        return {k: self.state[fs.UNIT + k] for k in FIELDS}

    def _choose(self, pair: str, key: str) -> None:
        self._push({fs.CHOICE + pair: key}, f"Use {FIELDS[key].label}")

    def set_text(self, key: str, text: str) -> None:
        """Type ``text`` into field ``key`` and press Enter, as the user would (one undo step)."""
        self._seal()
        self._typed(key, text)
        self._finished(key)

    # ---------------------------------------------------------------- state → widgets → request
    def _apply(self, values: dict) -> None:
        units_before = {k: self.state.get(fs.UNIT + k) for k in FIELDS}
        self.state.update(values)
        for k in values:
            self._sync(k)
        if any(self.state.get(fs.UNIT + k) != units_before[k] for k in FIELDS):
            self.units_changed.emit()
            if self.state.get(fs.UNIT + "target-paco2") != units_before.get("target-paco2"):
                self.gas_unit_changed.emit(self.gas_unit())
        if self._typing:
            self._submit_timer.start()  # restarted by each keystroke
            self._submit_typed()
        else:
            self._submit_timer.stop()
            self._submit()

    def _submit_typed(self) -> None:
        """A keystroke: plan what is typed at once if it can be planned, else put the settled plan back."""
        request, errors = fs.request_from_state(self.state, self.library)
        if errors:
            request = self._settled  # does not parse: the settled plan goes back on screen
        if request is not None and (request != self.controller.request or self.controller.stale):  # not for '18.'
            self.controller.set_request(request, from_form=True, fallback=self._settled, now=True)

    def _submit(self) -> None:
        """Plan the form as it stands and settle it (errors are said now)."""
        request, errors = fs.request_from_state(self.state, self.library)
        if errors:
            self.controller.set_invalid(errors)
        else:
            self._settled = request
            self.controller.set_request(request, from_form=True)

    def _pause_ended(self) -> None:
        """The typing paused: what is typed settles (already planned if it could be), or its errors are said."""
        request, errors = fs.request_from_state(self.state, self.library)
        c = self.controller
        if errors or request != c.request or c.errors or c.pending:  # pending: not yet known to plan
            self._submit()
        else:
            self._settled = request

    def _sync_all(self) -> None:
        for k in list(self.state):
            self._sync(k)

    def _sync(self, k: str) -> None:
        s = self.state
        if k.startswith(fs.TEXT):
            key = k[len(fs.TEXT):]
            row = self.rows.get(key)
            if row and row.edit.text() != s[k]:
                row.edit.setText(s[k])
        elif k.startswith(fs.UNIT):
            key = k[len(fs.UNIT):]
            row = self.rows.get(key)
            if row and isinstance(row.unit, QComboBox):
                i = row.unit.findData(s[k])
                if i >= 0 and i != row.unit.currentIndex():
                    row.unit.setCurrentIndex(i)
        elif k.startswith(fs.CHOICE):
            pair = k[len(fs.CHOICE):]
            for m in fs.PAIRS.get(pair, ()):
                row = self.rows.get(m)
                if row is None:
                    continue
                on = s[k] == m
                if row.label.isChecked() != on:
                    row.label.blockSignals(True)
                    row.label.setChecked(on)
                    row.label.blockSignals(False)
                row.edit.setEnabled(on)
                row.unit.setEnabled(on)
        elif k == "species":
            self.species.show_key(s[k])
        elif k == "name":
            if self.name_edit.text() != s[k]:
                self.name_edit.setText(s[k])
        elif k == "custom_species":
            if self.custom_edit.text() != s[k]:
                self.custom_edit.setText(s[k])
            if s[k].strip() and hasattr(self, "more_patient"):
                self.more_patient.setChecked(True)
        elif k == "mode":
            self.mode_combo.setCurrentIndex(max(0, self.mode_combo.findData(s[k])))
        elif k == "circuit":
            self.circuit_combo.setCurrentIndex(max(0, self.circuit_combo.findData(s[k])))
        elif k == "machine":
            from ventset.gui import machine_choice

            machine_choice.select(self.machine_combo, s[k] or "")
        elif k == "age":
            self.age_combo.setCurrentIndex(max(0, self.age_combo.findData(s[k])))
        elif k == "state":
            self.state_combo.setCurrentIndex(max(0, self.state_combo.findData(s[k])))
        elif k == "strategy":
            self.strategy_combo.setCurrentIndex(max(0, self.strategy_combo.findData(s[k])))
        elif k == "parts":
            self.parts_editor.show_parts(s[k])
        elif k == "situations":
            self.situations.show_keys(s[k])
        elif k == "notice":
            self.species_notice.setText(s[k])
            self.species_notice.setVisible(bool(s[k]))

    # ---------------------------------------------------------------- from the controller
    def load_request(self, request: Request) -> None:
        """Show a request set from outside (a case file, a titration step) as one undo step."""
        self._settled = request
        new = fs.state_from_request(request, self.units(), self.library)
        changes = {k: (self.state.get(k), v) for k, v in new.items() if self.state.get(k) != v}
        if not changes:
            return
        self._loading = True
        try:
            self.state.update(new)
            self._sync_all()
        finally:
            self._loading = False
        self._seal()
        self.undo.push(StateCommand(self, changes, "Load patient", applied=True))

    def show_plan(self, plan: Plan) -> None:
        self._set_errors({})
        self._show_defaults(plan)

    def show_errors(self, errors: list[InputError]) -> None:
        marks: dict[str, str] = {}
        for err in errors:
            key = fs.error_key(err) or ""
            if key and key not in marks:
                marks[key] = err.reason
        self._set_errors(marks)

    def _set_errors(self, marks: dict[str, str]) -> None:
        if marks == self._errors:
            return
        self._errors = dict(marks)
        t = self.theme
        for key, row in self.rows.items():
            reason = marks.get(key, "")
            if bool(reason) != row.invalid or (reason and row.error.text() != f"⚠ {reason}"):
                row.invalid = bool(reason)
                row.error.setText(f"⚠ {reason}" if reason else "")
                row.error.setVisible(bool(reason))
                row.error.setStyleSheet(f"color: {t.danger}; font-weight: bold;" if reason else "")
                row.edit.setStyleSheet(f"QLineEdit {{ border: 2px solid {t.danger}; }}" if reason else "")
                row.edit.setProperty("invalid", bool(reason))
        reason = marks.get("species", "")
        self.species_error.setText(f"⚠ Species: {reason}" if reason else "")
        self.species_error.setVisible(bool(reason))
        self.species_error.setStyleSheet(f"color: {t.danger}; font-weight: bold;" if reason else "")
        self.parts_editor.mark(marks.get("parts", ""), t)
        self.situations.mark(marks.get("situations", ""), t)

    def invalid_keys(self) -> set[str]:
        return set(self._errors)

    def _show_defaults(self, plan: Plan) -> None:
        from ventset.plotdata import field_defaults

        defaults = field_defaults(plan, self.library)
        sources = {}
        for a in plan.assumptions:
            sources[a.name] = a
        hits: dict[str, Assumption | None] = {}
        for name in {n for n in FIELD_ASSUMPTION.values() if n}:  # each field's assumption, found once a plan
            hits[name] = sources.get(name) or next((a for n, a in sources.items() if n.startswith(name)), None)
        for key, row in self.rows.items():
            unit = self.state[fs.UNIT + key]
            if key in NO_DEFAULT:
                ph = NO_DEFAULT[key]
            elif key in defaults:
                try:
                    shown = fmt(fs.to_unit(defaults[key], key, unit), 3)
                except Exception:  # an odd unit must not break the form
                    shown = fmt(defaults[key])
                ph = DEFAULT_WORD.get(key, "{}").format(shown)
            else:
                ph = ""
            if row.edit.placeholderText() != ph:
                row.edit.setPlaceholderText(ph)
            name = FIELD_ASSUMPTION.get(key)
            hit = hits.get(name) if name else None
            said = (hit.value, hit.unit, hit.source) if hit is not None else None
            if said != row.said:  # the tooltip is built again only when its default changed
                row.said = said
                src = ""
                if said is not None:
                    value = fmt(said[0]) if isinstance(said[0], float) else said[0]
                    src = f"<br><i>Default used now:</i> {esc(value)} {esc(said[1])} — {esc(said[2])}"
                row.set_tooltip(f"<b>{esc(row.spec.label)}</b><br>{esc(row.spec.help)}{src}")
        mode_text = f"Species default ({plan.resolved.mode})"
        if self.mode_combo.itemText(0) != mode_text:
            self.mode_combo.setItemText(0, mode_text)
        circ = f"By body mass: {plan.oxygen.circuit_label}"
        if self.circuit_combo.itemText(0) != circ:
            self.circuit_combo.setItemText(0, circ)
        d = plan.dead_space
        self.parts_editor.message.setText(
            f"Apparatus {show(d.apparatus_ml, 'volume')} + tube {show(d.tube_ml, 'volume')} = "
            f"{show(d.apparatus_ml + d.tube_ml, 'volume')} of dead space before the airway."
            if "parts" not in self._errors else self.parts_editor.message.text())
        if "parts" not in self._errors:
            self.parts_editor.message.setStyleSheet("")

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.setStyleSheet(theme.form_style)
        self.species_notice.setStyleSheet(f"background: {theme.info_bg}; color: {theme.text}; "
                                          f"border: 1px solid {theme.info}; border-radius: 3px; padding: 2px;")
        marks, self._errors = self._errors, {}
        self._set_errors(marks)

    def focus_field(self, key: str) -> None:
        row = self.rows.get(key)
        if row is not None:
            row.edit.setFocus(Qt.FocusReason.OtherFocusReason)
        elif key == "species":
            self.species.setFocus()
        elif key == "parts":
            self.parts_editor.table.setFocus()
        elif key == "situations":
            self.situations.list.setFocus()

