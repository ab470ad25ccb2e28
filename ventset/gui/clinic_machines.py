"""The clinic's own ventilators in the window: a tab of the clinic parts library (a list, new, edit, remove, use
for the current case) and the editor of one machine. Every check is ventset.partslib_machines'
(``ClinicMachine.checked``); a refused entry is said in the editor, naming the field, and nothing typed is
cleared. User text is shown as plain text. No physiology here."""

from __future__ import annotations

import dataclasses
from collections.abc import Callable

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QFormLayout,
    QGridLayout,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from ventset import partslib
from ventset.errors import InputError
from ventset.gui.text import plain, plain_tip
from ventset.machines.data import MachineClass, load_machines
from ventset.partslib_machines import PARTS, ClinicMachine

COLUMNS = ("Name", "Made from", "Own ranges and steps", "Compressible (mL/cmH2O)", "Driving gas", "Note")
GASES = (("oxygen", "Oxygen (drawn from the oxygen supply)"), ("air", "Air (not from the oxygen supply)"))


def _number(x: float) -> str:
    return f"{x:g}"


class MachineEditor(QDialog):
    """One clinic machine: its name, the class it is made from, each control's range and step (empty: the
    class's), compressible volume, driving gas and its use, and a note. ``result_machine`` after OK."""

    def __init__(self, parent: QWidget, machine: ClinicMachine | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Clinic ventilator" if machine is None else f"Clinic ventilator: {machine.name}")
        self.classes = load_machines()
        self.result_machine: ClinicMachine | None = None
        layout = QVBoxLayout(self)
        form = QFormLayout()
        self.name_edit = QLineEdit(machine.name if machine else "", self)
        self.name_edit.setObjectName("machine-name")
        self.name_edit.setMaxLength(200)  # the check says what is too long; a paste is not cut silently
        form.addRow("Name (the clinic's own)", self.name_edit)
        self.class_combo = QComboBox(self)
        self.class_combo.setObjectName("machine-class")
        for m in self.classes.classes.values():
            self.class_combo.addItem(m.label, m.key)
            self.class_combo.setItemData(self.class_combo.count() - 1, plain_tip(m.description),
                                         Qt.ItemDataRole.ToolTipRole)
        if machine is not None:
            self.class_combo.setCurrentIndex(max(0, self.class_combo.findData(machine.machine_class)))
        form.addRow("Made from the class", self.class_combo)
        layout.addLayout(form)
        self.controls_box = QGridLayout()
        layout.addLayout(self.controls_box)
        self.cells: dict[str, dict[str, QLineEdit]] = {}
        more = QFormLayout()
        self.compressible_edit = QLineEdit(self._text(machine, "compressible_ml_cmh2o"), self)
        self.compressible_edit.setPlaceholderText("empty: the class's internal gas (Boyle)")
        more.addRow("Compressible volume of machine and hose [mL/cmH2O]", self.compressible_edit)
        self.gas_combo = QComboBox(self)
        for key, label in GASES:
            self.gas_combo.addItem(label, key)
        if machine is not None and machine.driving_gas:
            self.gas_combo.setCurrentIndex(max(0, self.gas_combo.findData(machine.driving_gas)))
        more.addRow("Driving gas", self.gas_combo)
        self.use_edit = QLineEdit(self._text(machine, "driving_gas_ve_multiple"), self)
        more.addRow("Driving gas use [× the minute volume it delivers]", self.use_edit)
        self.note_edit = QLineEdit(machine.note if machine else "", self)
        more.addRow("Note", self.note_edit)
        layout.addLayout(more)
        self.message = plain(QLabel("", self))
        self.message.setObjectName("machine-message")
        self.message.setWordWrap(True)
        layout.addWidget(self.message)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel, self)
        buttons.accepted.connect(self.try_accept)
        buttons.rejected.connect(self.reject)
        layout.addWidget(buttons)
        self._own = {r.control: r for r in machine.controls} if machine is not None else {}
        self._own_class = machine.machine_class if machine is not None else ""
        self.class_combo.currentIndexChanged.connect(lambda _i: self._show_controls())
        self._show_controls()

    @staticmethod
    def _text(machine: ClinicMachine | None, field: str) -> str:
        value = getattr(machine, field) if machine is not None else None
        return "" if value is None else _number(value)

    def chosen_class(self) -> MachineClass:
        return self.classes.classes[self.class_combo.currentData()]

    def _show_controls(self) -> None:
        """One row per control of the chosen class: min, max, step (the clinic's, else empty with the class's
        shown as a hint)."""
        while self.controls_box.count():
            w = self.controls_box.takeAt(0).widget()
            if w is not None:
                w.deleteLater()
        cls = self.chosen_class()
        own = self._own if cls.key == self._own_class else {}  # another class: its own ranges start afresh
        self.cells = {}
        for j, head in enumerate(("Control", "Lowest", "Highest", "Step")):
            self.controls_box.addWidget(plain(QLabel(head, self)), 0, j)
        for i, c in enumerate(cls.controls, start=1):
            self.controls_box.addWidget(plain(QLabel(f"{c.label} [{c.unit}]", self)), i, 0)
            row = {}
            for j, part in enumerate(PARTS, start=1):
                edit = QLineEdit(self)
                edit.setObjectName(f"machine-{c.kind}-{part}")
                r = own.get(c.kind)
                class_value = getattr(c, part)
                if r is not None and getattr(r, part) != class_value:
                    edit.setText(_number(getattr(r, part)))
                edit.setPlaceholderText(f"class: {_number(class_value)}")
                self.controls_box.addWidget(edit, i, j)
                row[part] = edit
            self.cells[c.kind] = row
        is_gas = cls.drive == "gas"
        self.gas_combo.setEnabled(is_gas)
        self.use_edit.setEnabled(is_gas)
        self.use_edit.setPlaceholderText(f"class: {_number(cls.driving_gas_ve_multiple.value)}" if is_gas else
                                         "uses no driving gas")

    def entered(self) -> ClinicMachine:
        """The machine as entered; InputError naming the field."""
        cls = self.chosen_class()
        controls = []
        for kind, row in self.cells.items():
            given = {p: e.text() for p, e in row.items() if e.text().strip()}
            if given:
                controls.append({"control": kind, **given})
        is_gas = cls.drive == "gas"
        return ClinicMachine.checked(self.name_edit.text(), cls.key, controls, self.compressible_edit.text().strip()
                                     or None, self.gas_combo.currentData() if is_gas else None,
                                     (self.use_edit.text().strip() or None) if is_gas else None, self.note_edit.text())

    def try_accept(self) -> bool:
        """Check what was entered: accepted, or the reason shown (naming the field) and the dialog kept open."""
        try:
            self.result_machine = self.entered()
        except InputError as err:
            self.message.setText(f"Not saved — {err}")
            return False
        self.accept()
        return True


class MachinesTab(QWidget):
    """The clinic's ventilators, a tab of the clinic parts library dialog. ``store`` saves a new library (the
    dialog's: atomic, with the previous version kept) and returns whether it did; ``library`` gives the
    library shown; ``editable`` whether it may be changed (not when the file is damaged)."""

    def __init__(self, parent: QWidget, library: Callable[[], partslib.ClinicLibrary],
                 store: Callable[[partslib.ClinicLibrary], bool], manager) -> None:
        super().__init__(parent)
        self.library, self.store, self.manager = library, store, manager
        layout = QVBoxLayout(self)
        self.table = QTableWidget(0, len(COLUMNS), self)
        self.table.setObjectName("clinic-machines")
        self.table.setHorizontalHeaderLabels(COLUMNS)
        self.table.horizontalHeader().setSectionResizeMode(2, QHeaderView.ResizeMode.Stretch)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.doubleClicked.connect(lambda _i: self.edit())
        layout.addWidget(self.table, 1)
        row = QHBoxLayout()
        self.new_button = QPushButton("New ventilator…", self)
        self.new_button.clicked.connect(lambda: self.new())
        self.edit_button = QPushButton("Edit…", self)
        self.edit_button.clicked.connect(lambda: self.edit())
        self.remove_button = QPushButton("Remove", self)
        self.remove_button.clicked.connect(self.remove)
        self.use_button = QPushButton("Use for the current case", self)
        self.use_button.clicked.connect(self.use)
        for b in (self.new_button, self.edit_button, self.remove_button, self.use_button):
            row.addWidget(b)
        row.addStretch(1)
        layout.addLayout(row)
        self.editor: MachineEditor | None = None  # the open editor (tests fill it in)

    def refresh(self, editable: bool) -> None:
        """Show the library's machines (after every save or import), and refresh the window's chooser."""
        for b in (self.new_button, self.edit_button, self.remove_button):
            b.setEnabled(editable)
        form = getattr(self.manager.window, "form", None)
        if form is not None and hasattr(form, "machine_combo"):
            from ventset.gui import machine_choice

            machine_choice.fill(form.machine_combo)
        machines = self.library().machines
        self.table.setRowCount(len(machines))
        for i, m in enumerate(machines):
            own = "; ".join(f"{r.control} {_number(r.min)}–{_number(r.max)} by {_number(r.step)}"
                            for r in m.controls) or "as the class"
            comp = "—" if m.compressible_ml_cmh2o is None else _number(m.compressible_ml_cmh2o)
            gas = m.driving_gas or "none"
            if m.driving_gas and m.driving_gas_ve_multiple is not None:
                gas += f", {_number(m.driving_gas_ve_multiple)} × VE"
            for j, text in enumerate((m.name, m.machine_class, own, comp, gas, m.note)):
                item = QTableWidgetItem(text)
                item.setToolTip(plain_tip(text))
                self.table.setItem(i, j, item)

    def _row(self) -> int:
        rows = sorted({i.row() for i in self.table.selectedIndexes()})
        return rows[0] if rows else self.table.currentRow()

    def _selected(self) -> ClinicMachine | None:
        machines = self.library().machines
        i = self._row()
        return machines[i] if 0 <= i < len(machines) else None

    def _run_editor(self, machine: ClinicMachine | None, fill: Callable[[MachineEditor], None] | None) -> \
            ClinicMachine | None:
        self.editor = MachineEditor(self, machine)
        if fill is not None:  # tests: fill the fields and press OK instead of a person
            fill(self.editor)
            ok = self.editor.try_accept()
        else:
            ok = self.editor.exec() == QDialog.DialogCode.Accepted
        return self.editor.result_machine if ok else None

    def new(self, fill: Callable[[MachineEditor], None] | None = None) -> bool:
        m = self._run_editor(None, fill)
        if m is None:
            return False
        try:
            lib = self.library().with_machine(m)
        except InputError as err:
            self.manager.warn("Not added", str(err))
            return False
        return self._save(lib, m.name)

    def edit(self, fill: Callable[[MachineEditor], None] | None = None) -> bool:
        old = self._selected()
        if old is None:
            return False
        m = self._run_editor(old, fill)
        if m is None:
            return False
        try:
            lib = self.library().without_machine(old.name).with_machine(m)
        except InputError as err:
            self.manager.warn("Not changed", str(err))
            return False
        return self._save(lib, m.name, old.name)

    def remove(self) -> bool:
        m = self._selected()
        if m is None:
            return False
        return self._save(self.library().without_machine(m.name), None, m.name)

    def use(self) -> bool:
        m = self._selected()
        req = self.manager.controller.request
        if m is None or req is None:
            return False
        self.manager.controller.set_request(dataclasses.replace(req, circuit=dataclasses.replace(
            req.circuit, machine=m.name)))
        return True

    def _save(self, lib: partslib.ClinicLibrary, name: str | None, old: str | None = None) -> bool:
        """Store ``lib`` (the chooser is refreshed by ``refresh``), and re-plan when the case uses the machine
        changed."""
        if not self.store(lib):
            return False
        req = self.manager.controller.request
        if req is not None and req.circuit.machine and req.circuit.machine in {name, old}:
            machine = name if name is not None else req.circuit.machine  # a removed one stays named: said
            self.manager.controller.set_request(dataclasses.replace(req, circuit=dataclasses.replace(
                req.circuit, machine=machine)))
        return True
