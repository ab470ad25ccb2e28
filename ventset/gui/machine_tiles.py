"""The settings on the chosen ventilator class, shown under the ideal settings: one tile per control in the order
it is turned, then what the dialled breath gives. Rows come from ventset.present.dials; nothing is computed here.
Hidden when no ventilator is chosen. The tile widget is handed in by the settings panel (no import of it here)."""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtWidgets import QFrame, QGridLayout, QVBoxLayout, QWidget

from ventset.gui.text import Text
from ventset.model import Plan
from ventset.present.dials import machine_outcome_rows, machine_rows, machine_title
from ventset.present.quantities import Units

MAX_CONTROLS = 6  # the classes in resources/machines.toml have at most 5 controls; one spare
# What the dialled breath gives, shown after the controls, with names short enough for a tile.
OUTCOMES = {"machine_paco2": "PaCO2 as dialled", "machine_breath": "Breath as dialled",
            "machine_vt": "Delivered tidal volume"}
COLUMNS = 4


class MachineStrip(QFrame):
    """Tiles created once (controls, then outcomes); each plan only changes their text."""

    def __init__(self, parent: QWidget, make_tile: Callable[[str, str, str, QWidget], QFrame]) -> None:
        super().__init__(parent)
        self.setObjectName("machine-strip")
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        self.title = Text("", self, name="machine-title")
        outer.addWidget(self.title)
        self.grid = QGridLayout()
        self.grid.setSpacing(self.fontMetrics().height() // 3)
        keys = [f"machine_control_{i}" for i in range(MAX_CONTROLS)] + list(OUTCOMES)
        self.tiles = {k: make_tile(k, "", "", self) for k in keys}
        for c in range(COLUMNS):
            self.grid.setColumnStretch(c, 1)
        outer.addLayout(self.grid)
        self._placed = -1
        self.setVisible(False)

    def _place(self, n_controls: int) -> None:
        """The controls, then the outcomes right after them (re-placed only when the number of controls changes)."""
        if n_controls == self._placed:
            return
        shown = [f"machine_control_{i}" for i in range(n_controls)] + list(OUTCOMES)
        for key, tile in self.tiles.items():
            self.grid.removeWidget(tile)
            tile.setVisible(key in shown)
        for i, key in enumerate(shown):
            self.grid.addWidget(self.tiles[key], i // COLUMNS, i % COLUMNS)
        self._placed = n_controls

    def show_plan(self, plan: Plan, gas_unit: str) -> None:
        if plan.machine is None:
            self.setVisible(False)
            return
        self.title.setText(f"Turn these on the ventilator — {machine_title(plan).split(': ', 1)[1]}")
        controls = machine_rows(plan)[:MAX_CONTROLS]
        self._place(len(controls))
        for i, row in enumerate(controls):
            self.tiles[f"machine_control_{i}"].display(row.name, row.value, row.unit, row.detail)  # type: ignore
        outcomes = {r.key: r for r in machine_outcome_rows(plan, Units(gas=gas_unit))}
        for key, name in OUTCOMES.items():
            row = outcomes[key]
            self.tiles[key].display(name, row.value, row.unit, row.detail)  # type: ignore[attr-defined]
        self.setVisible(True)
