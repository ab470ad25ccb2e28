"""The items of the window's "Ventilator" chooser: no ventilator, the classes, then the clinic's own machines (by
their names, shown as plain text). A machine a case names that this computer's library does not hold is kept as
an item of its own, so the chooser never shows something other than what the plan uses. No physiology here."""

from __future__ import annotations

from PySide6.QtCore import QEvent, QObject, Qt
from PySide6.QtWidgets import QComboBox

from ventset.gui.text import plain_tip

NONE_LABEL = "No ventilator chosen (ideal settings only)"


class _FillWhenUsed(QObject):
    """Fills the chooser before the first event that could show or change its list."""

    EVENTS = (QEvent.Type.FocusIn, QEvent.Type.MouseButtonPress, QEvent.Type.KeyPress, QEvent.Type.Wheel)

    def eventFilter(self, obj, e) -> bool:  # noqa: N802 - Qt override
        if e.type() in self.EVENTS and isinstance(obj, QComboBox):
            ensure(obj)
        return False


def fill_when_used(combo: QComboBox) -> None:
    """Show only "no ventilator" now; read the classes and the clinic's machines (the clinic library on disk)
    the first time the chooser is focused, clicked, scrolled or typed in, or a machine is selected in it."""
    combo.addItem(NONE_LABEL, "")
    combo.setProperty("filled", False)
    combo.installEventFilter(_FillWhenUsed(combo))


def ensure(combo: QComboBox) -> None:
    """Fill ``combo`` now if ``fill_when_used`` left it for later."""
    if combo.property("filled") is False:
        fill(combo)


def fill(combo: QComboBox) -> str:
    """(Re)fill ``combo``, keeping what was chosen; returns why the clinic's machines are missing ('' if not)."""
    from ventset.errors import VentsetError
    from ventset.machines.data import load_machines
    from ventset.partslib import clinic_machines

    chosen = combo.currentData()
    combo.blockSignals(True)
    combo.clear()
    combo.addItem(NONE_LABEL, "")
    for m in load_machines().classes.values():
        _add(combo, m.label, m.key, m.description)
    problem = ""
    try:
        own = clinic_machines()
    except VentsetError as err:
        own, problem = (), str(err)
    if own:
        combo.insertSeparator(combo.count())
    for m in own:
        _add(combo, f"{m.name} (clinic)", m.name, f"The clinic's own machine: {m.summary()}")
    combo.setProperty("filled", True)
    select(combo, chosen or "")
    combo.blockSignals(False)
    return problem


def _add(combo: QComboBox, label: str, key: str, tip: str) -> None:
    combo.addItem(label, key)
    combo.setItemData(combo.count() - 1, plain_tip(tip), Qt.ItemDataRole.ToolTipRole)


def select(combo: QComboBox, key: str) -> None:
    """Show ``key``; one not in the list is added as it is named, so the chooser shows what the plan uses."""
    if key:
        ensure(combo)
    i = combo.findData(key or "")
    if i < 0:
        _add(combo, f"{key} (not in this computer's clinic library)", key, "")
        i = combo.count() - 1
    combo.setCurrentIndex(i)
