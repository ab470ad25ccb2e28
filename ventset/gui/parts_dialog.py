"""The clinic parts library dialog: the clinic's own measured parts and named circuit presets (editable),
and the shipped catalogue (read only). Opened from the Case menu (ventset.gui.case_ui); its module and the
clinic library's (ventset.partslib) load when it is first opened."""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QDialog,
    QDialogButtonBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from ventset import partslib
from ventset.errors import InputError, VentsetError
from ventset.gui.text import plain, plain_tip
from ventset.units import fmt

if TYPE_CHECKING:
    from ventset.gui.case_ui import CaseManager

PART_COLUMNS = ("Name", "Volume (mL)", "Note", "Measured by", "Measured on")



def _button_row(parent: QWidget, layout: QVBoxLayout, *buttons: tuple[str, object]) -> list[QPushButton]:
    """A row of push buttons (text, slot) at the left of ``layout``; the buttons, in order."""
    row = QHBoxLayout()
    made = []
    for text, slot in buttons:
        b = QPushButton(text, parent)
        b.clicked.connect(slot)
        row.addWidget(b)
        made.append(b)
    row.addStretch(1)
    layout.addLayout(row)
    return made

class ClinicPartsDialog(QDialog):
    """The clinic's own parts and presets (editable), and the shipped catalogue (read only)."""

    def __init__(self, manager: CaseManager) -> None:
        super().__init__(manager.window)
        self.manager = manager
        self.setWindowTitle("Clinic parts library")
        self.lib = partslib.ClinicLibrary()
        self.error = ""
        try:
            self.lib = partslib.load_clinic_library()
        except VentsetError as exc:
            self.error = str(exc)
        layout = QVBoxLayout(self)
        self.where = plain(QLabel(self))
        self.where.setWordWrap(True)
        layout.addWidget(self.where)
        self.tabs = QTabWidget(self)
        layout.addWidget(self.tabs, 1)

        own = QWidget(self.tabs)
        ol = QVBoxLayout(own)
        self.parts_table = QTableWidget(0, len(PART_COLUMNS), own)
        self.parts_table.setObjectName("clinic-parts")
        self.parts_table.setHorizontalHeaderLabels(PART_COLUMNS)
        header = self.parts_table.horizontalHeader()
        for col, mode in enumerate((QHeaderView.ResizeMode.Stretch, QHeaderView.ResizeMode.ResizeToContents,
                                    QHeaderView.ResizeMode.Stretch, QHeaderView.ResizeMode.ResizeToContents,
                                    QHeaderView.ResizeMode.ResizeToContents)):
            header.setSectionResizeMode(col, mode)
        self.parts_table.horizontalHeaderItem(4).setToolTip("Date written YYYY-MM-DD, e.g. 2024-02-11")
        self.parts_table.setToolTip("Double-click a cell to edit it; each change is checked and saved at once.")
        self.parts_table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.parts_table.itemChanged.connect(self._part_edited)
        ol.addWidget(self.parts_table, 1)
        self.add_part_button, self.remove_part_button, self.use_part_button = _button_row(
            own, ol, ("New part…", self.new_part), ("Remove", self.remove_part),
            ("Add to the current circuit", self.use_part))
        self.tabs.addTab(own, "This clinic's parts")

        presets = QWidget(self.tabs)
        pl = QVBoxLayout(presets)
        self.preset_table = QTableWidget(0, 4, presets)
        self.preset_table.setObjectName("clinic-presets")
        self.preset_table.setHorizontalHeaderLabels(("Name", "Parts", "Compressible (mL/cmH2O)", "Circuit type"))
        self.preset_table.horizontalHeader().setSectionResizeMode(1, QHeaderView.ResizeMode.Stretch)
        self.preset_table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.preset_table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        pl.addWidget(self.preset_table, 1)
        self.save_preset_button, self.use_preset_button, self.remove_preset_button = _button_row(
            presets, pl, ("Save the current circuit as a preset…", self.save_preset),
            ("Use for the current case", self.use_preset), ("Remove", self.remove_preset))
        self.tabs.addTab(presets, "Circuit presets")
        from ventset.gui.clinic_machines import MachinesTab

        self.machines_tab = MachinesTab(self.tabs, lambda: self.lib, self._store, manager)
        self.tabs.addTab(self.machines_tab, "This clinic's ventilators")

        shipped = QTableWidget(0, 3, self.tabs)
        shipped.setObjectName("catalogue-parts")
        shipped.setHorizontalHeaderLabels(("Part", "Volume (mL)", "Source of the volume"))
        shipped.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        shipped.horizontalHeader().setSectionResizeMode(2, QHeaderView.ResizeMode.Stretch)
        shipped.setWordWrap(False)
        shipped.verticalHeader().setVisible(False)
        rows = [r for r in partslib.all_parts(partslib.ClinicLibrary(), manager.library)]
        shipped.setRowCount(len(rows))
        for i, r in enumerate(rows):
            for j, text in enumerate((r.name, fmt(r.volume_ml), r.source)):
                item = QTableWidgetItem(text)
                item.setToolTip(plain_tip(f"{r.name}: {fmt(r.volume_ml)} mL — {r.source}"))
                shipped.setItem(i, j, item)
        shipped.setColumnWidth(0, self.fontMetrics().averageCharWidth() * 46)
        shipped.setColumnWidth(1, self.fontMetrics().averageCharWidth() * 16)
        self.catalogue_table = shipped
        self.tabs.addTab(shipped, "Shipped catalogue (typical volumes)")

        buttons = QDialogButtonBox(self)
        self.import_button = buttons.addButton("Import…", QDialogButtonBox.ButtonRole.ActionRole)
        self.export_button = buttons.addButton("Export…", QDialogButtonBox.ButtonRole.ActionRole)
        buttons.addButton(QDialogButtonBox.StandardButton.Close)
        self.import_button.clicked.connect(self.import_file)
        self.export_button.clicked.connect(self.export_file)
        buttons.rejected.connect(self.reject)
        layout.addWidget(buttons)
        self._fill()
        m = self.fontMetrics()
        self.resize(m.averageCharWidth() * 135, m.height() * 30)

    # ---------------------------------------------------------------- view
    def _fill(self) -> None:
        if self.error:
            self.where.setText(f"{self.error}\nThe file is left as it is; fix or move it to edit the library.")
        else:
            self.where.setText(f"Saved on this computer in {partslib.library_path()}. Share it with Export and "
                               "Import: entries with the same name and different values are reported, never "
                               "overwritten.")
        editable = not self.error
        for w in (self.add_part_button, self.remove_part_button, self.save_preset_button,
                  self.remove_preset_button, self.import_button):
            w.setEnabled(editable)
        self.machines_tab.refresh(editable)
        self.parts_table.blockSignals(True)
        self.parts_table.setRowCount(len(self.lib.parts))
        for i, p in enumerate(self.lib.parts):
            for j, text in enumerate((p.name, fmt(p.volume_ml, 4), p.note, p.measured_by, p.measured_on)):
                item = QTableWidgetItem(text)
                if not editable:
                    item.setFlags(item.flags() & ~Qt.ItemFlag.ItemIsEditable)
                self.parts_table.setItem(i, j, item)
        self.parts_table.blockSignals(False)
        self.preset_table.setRowCount(len(self.lib.presets))
        for i, s in enumerate(self.lib.presets):
            parts = "; ".join(f"{p.name} {fmt(p.volume_ml)} mL" for p in s.parts) or "none"
            comp = "—" if s.compressible_ml_cmh2o is None else fmt(s.compressible_ml_cmh2o)
            for j, text in enumerate((s.name, parts, comp, s.circuit_type or "by body mass")):
                self.preset_table.setItem(i, j, QTableWidgetItem(text))

    def _store(self, lib: partslib.ClinicLibrary) -> bool:
        try:
            partslib.save_clinic_library(lib)
        except VentsetError as exc:
            self.manager.warn("The clinic library was not saved", str(exc))
            self._fill()
            return False
        self.lib = lib
        self._fill()
        return True

    def _selected(self, table: QTableWidget) -> int:
        rows = sorted({i.row() for i in table.selectedIndexes()})
        return rows[0] if rows else table.currentRow()

    # ---------------------------------------------------------------- parts
    def _part_edited(self, item: QTableWidgetItem) -> None:
        row = item.row()
        if row >= len(self.lib.parts):
            return
        old = self.lib.parts[row]
        cells = [self.parts_table.item(row, j).text() if self.parts_table.item(row, j) else ""
                 for j in range(len(PART_COLUMNS))]
        try:
            new = partslib.ClinicPart.checked(cells[0], cells[1], cells[2], cells[3], cells[4])
            lib = self.lib.without_part(old.name)
            lib = lib.with_part(new)
        except InputError as err:
            self.manager.warn("Not changed", str(err))
            self._fill()
            return
        self._store(lib)

    def new_part(self, name: str = "", volume: str = "") -> bool:
        name = name or self.manager.ask_text("New clinic part", "Name of the part:")
        if not name:
            return False
        volume = volume or self.manager.ask_text("New clinic part", f"Measured internal volume of '{name}' "
                                                 "(e.g. 9.5 mL):")
        if not volume:
            return False
        try:
            lib = self.lib.with_part(partslib.ClinicPart.checked(name, volume))
        except InputError as err:
            self.manager.warn("Not added", str(err))
            return False
        return self._store(lib)

    def remove_part(self) -> bool:
        row = self._selected(self.parts_table)
        if not 0 <= row < len(self.lib.parts):
            return False
        return self._store(self.lib.without_part(self.lib.parts[row].name))

    def use_part(self) -> bool:
        row = self._selected(self.parts_table)
        req = self.manager.controller.request
        if not 0 <= row < len(self.lib.parts) or req is None:
            return False
        part = self.lib.parts[row].as_apparatus()
        circuit = dataclasses.replace(req.circuit, parts=(*req.circuit.parts, part))
        self.manager.controller.set_request(dataclasses.replace(req, circuit=circuit))
        return True

    # ---------------------------------------------------------------- presets
    def save_preset(self, name: str = "") -> bool:
        req = self.manager.controller.request
        if req is None:
            return False
        name = name or self.manager.ask_text("Save circuit preset", "Name for this circuit set-up:")
        if not name:
            return False
        c = req.circuit
        try:
            preset = partslib.CircuitPreset.checked(name, list(c.parts), c.compressible_ml_cmh2o, c.circuit_type)
            lib = self.lib.with_preset(preset)
        except InputError as err:
            self.manager.warn("Not saved", str(err))
            return False
        return self._store(lib)

    def use_preset(self) -> bool:
        row = self._selected(self.preset_table)
        req = self.manager.controller.request
        if not 0 <= row < len(self.lib.presets) or req is None:
            return False
        circuit = self.lib.presets[row].apply(req.circuit)
        self.manager.controller.set_request(dataclasses.replace(req, circuit=circuit))
        return True

    def remove_preset(self) -> bool:
        row = self._selected(self.preset_table)
        if not 0 <= row < len(self.lib.presets):
            return False
        return self._store(self.lib.without_preset(self.lib.presets[row].name))

    # ---------------------------------------------------------------- sharing
    def export_file(self, path: str = "") -> bool:
        path = path or self.manager.pick_save_path("Export clinic parts", str(Path.home() / "clinic-parts.json"),
                                                   "JSON (*.json)")
        if not path:
            return False
        try:
            partslib.write_library_file(self.lib, path)
        except VentsetError as exc:
            self.manager.warn("Not exported", str(exc))
            return False
        return True

    def import_file(self, path: str = "") -> partslib.MergeReport | None:
        path = path or self.manager.pick_open_path("Import clinic parts", str(Path.home()), "JSON (*.json)")
        if not path:
            return None
        try:
            incoming = partslib.read_library_file(path)
            merged, report = partslib.merge(self.lib, incoming, "keep")
        except VentsetError as exc:
            self.manager.warn("Not imported", str(exc))
            return None
        if report.conflicts and self.manager.confirm(
                "Conflicting entries", "\n".join(report.lines()) + "\n\nImport the conflicting entries under new "
                "names (\"… (imported)\") so that both are kept? No keeps only this machine's."):
            merged, report = partslib.merge(self.lib, incoming, "rename")
        if merged != self.lib and not self._store(merged):
            return None
        self.manager.inform("Import finished", "\n".join(report.lines()))
        return report
