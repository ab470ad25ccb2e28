"""The situations chooser of the patient section: a search line over a list of checkable situations (several at
once), the chosen situations' effects in words, and the in-place error line. A thin view: the effects are
worded by ventset.situations and applied by the planner.
"""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QLabel, QLineEdit, QListWidget, QListWidgetItem, QVBoxLayout, QWidget

from ventset.gui.text import plain, plain_tip
from ventset.gui.theme import Theme, scaled_font
from ventset.library import Library
from ventset.situations import effect_words, summary

VISIBLE_ROWS = 5  # the list shows this many situations; the search line finds the rest


class SituationPicker(QWidget):
    """Tick any number of situations; ``changed`` sends the chosen keys in the list's order."""

    changed = Signal(tuple)

    def __init__(self, library: Library, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.library = library
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.search = QLineEdit(self)
        self.search.setObjectName("situation-search")
        self.search.setPlaceholderText("search: laparoscopy, head trauma, pregnancy …")
        self.search.setAccessibleName("Search situations")
        self.search.setClearButtonEnabled(True)
        self.search.textChanged.connect(self._filter)
        lay.addWidget(self.search)
        self.list = QListWidget(self)
        self.list.setObjectName("situations")
        self.list.setAccessibleName("Situations")
        for s in library.situations.values():
            item = QListWidgetItem(s.label, self.list)
            item.setData(Qt.ItemDataRole.UserRole, s.key)
            item.setFlags(item.flags() | Qt.ItemFlag.ItemIsUserCheckable)
            item.setCheckState(Qt.CheckState.Unchecked)
            only = f" Applies to {', '.join(s.species)} only." if s.species else ""
            item.setToolTip(plain_tip(f"{s.label} ({s.category}, key '{s.key}'): {summary(s)}.{only}"))
        self.list.setWordWrap(True)
        self.list.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.list.setTextElideMode(Qt.TextElideMode.ElideNone)
        row = max(self.list.sizeHintForRow(0), self.fontMetrics().height() + 4) if self.list.count() else 20
        self.list.setFixedHeight(row * VISIBLE_ROWS + 2 * self.list.frameWidth() + 2)
        self.list.itemChanged.connect(self._ticked)
        lay.addWidget(self.list)
        self.effects = plain(QLabel(self))
        self.effects.setObjectName("situation-effects")
        self.effects.setWordWrap(True)
        self.effects.setFont(scaled_font(self.font(), 0.9))
        lay.addWidget(self.effects)
        self.error = plain(QLabel(self))
        self.error.setObjectName("error-situations")
        self.error.setWordWrap(True)
        self.error.setVisible(False)
        lay.addWidget(self.error)
        self._keys: tuple[str, ...] = ()

    def _filter(self, text: str) -> None:
        t = text.strip().lower()
        for i in range(self.list.count()):
            item = self.list.item(i)
            s = self.library.situations[item.data(Qt.ItemDataRole.UserRole)]
            hit = not t or t in s.label.lower() or t in s.key or t in s.category
            item.setHidden(not hit)

    def _ticked(self, _item: QListWidgetItem) -> None:
        keys = tuple(self.list.item(i).data(Qt.ItemDataRole.UserRole) for i in range(self.list.count())
                     if self.list.item(i).checkState() == Qt.CheckState.Checked)
        if keys != self._keys:
            self._keys = keys
            self.changed.emit(keys)

    def show_keys(self, keys: tuple[str, ...]) -> None:
        """Tick exactly ``keys`` (from the form state) without emitting ``changed``."""
        self._keys = tuple(keys)
        self.list.blockSignals(True)
        for i in range(self.list.count()):
            item = self.list.item(i)
            on = item.data(Qt.ItemDataRole.UserRole) in keys
            item.setCheckState(Qt.CheckState.Checked if on else Qt.CheckState.Unchecked)
        self.list.blockSignals(False)
        lines = [f"{s.label}: {'; '.join(effect_words(s)) or 'cautions only'}"
                 for k in keys if (s := self.library.situations.get(k)) is not None]
        empty = "No situation chosen: planned as a healthy, elective patient."
        self.effects.setText("\n".join(lines) if lines else empty)

    def mark(self, message: str, theme: Theme) -> None:
        self.error.setText(f"⚠ Situation: {message}" if message else "")
        self.error.setVisible(bool(message))
        self.error.setStyleSheet(f"color: {theme.danger}; font-weight: bold;" if message else "")
