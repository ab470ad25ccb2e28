"""Edit ▸ Cut, Copy, Paste, Select All: the platform's usual commands, acting on the field that has the keyboard.

A text field (or an editable combo box) gets its own cut/copy/paste, so a paste is an edit like typing (one
undo step in the form). A table copies its selected cells as tab-separated text (rows on lines), and selects
all its cells; a read-out label copies the text selected in it. The keyboard shortcuts reach the field first
(Qt gives a focused text field its standard keys), so these actions serve the menu and everything else.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction, QGuiApplication, QKeySequence
from PySide6.QtWidgets import QAbstractItemView, QApplication, QComboBox, QLabel, QLineEdit, QPlainTextEdit, QTextEdit

COMMANDS = (("cut", "Cut", QKeySequence.StandardKey.Cut), ("copy", "Copy", QKeySequence.StandardKey.Copy),
            ("paste", "Paste", QKeySequence.StandardKey.Paste),
            ("select_all", "Select all", QKeySequence.StandardKey.SelectAll))
TEXT_EDITS = (QLineEdit, QTextEdit, QPlainTextEdit)


def target():
    """The widget the commands act on: the focused one (an editable combo box's text field for a combo)."""
    w = QApplication.focusWidget()
    if isinstance(w, QComboBox) and w.isEditable():
        return w.lineEdit()
    return w


def _read_only(w) -> bool:
    return isinstance(w, TEXT_EDITS) and w.isReadOnly()


def table_text(view: QAbstractItemView) -> str:
    """The selected cells of a table as tab-separated rows (the current cell when nothing is selected)."""
    indexes = sorted(view.selectedIndexes(), key=lambda i: (i.row(), i.column())) or (
        [view.currentIndex()] if view.currentIndex().isValid() else [])
    rows: dict[int, list[str]] = {}
    for i in indexes:
        rows.setdefault(i.row(), []).append(str(i.data(Qt.ItemDataRole.DisplayRole) or ""))
    return "\n".join("\t".join(cells) for _, cells in sorted(rows.items()))


def available(command: str, w=None) -> bool:
    """Whether ``command`` can act on the widget that has the keyboard now."""
    w = target() if w is None else w
    if isinstance(w, TEXT_EDITS):
        has_selection = w.hasSelectedText() if isinstance(w, QLineEdit) else w.textCursor().hasSelection()
        if command in ("cut", "paste"):
            return not _read_only(w) and (command == "paste" or has_selection)
        return command == "select_all" or has_selection
    if isinstance(w, QAbstractItemView):
        return command in ("copy", "select_all")
    if isinstance(w, QLabel):
        return command == "copy" and w.hasSelectedText()
    return False


def run(command: str) -> bool:
    """Do ``command`` on the focused widget; True if it applied there."""
    w = target()
    if not available(command, w):
        return False
    if isinstance(w, TEXT_EDITS):
        {"cut": w.cut, "copy": w.copy, "paste": w.paste, "select_all": w.selectAll}[command]()
    elif isinstance(w, QAbstractItemView):
        if command == "copy":
            QGuiApplication.clipboard().setText(table_text(w))
        else:
            w.selectAll()
    elif isinstance(w, QLabel):
        QGuiApplication.clipboard().setText(w.selectedText())
    return True


def install(window, menu) -> dict[str, QAction]:
    """The four commands in ``menu`` (enabled for what has the keyboard when the menu opens)."""
    actions: dict[str, QAction] = {}
    for key, text, shortcut in COMMANDS:
        a = QAction(text, window)
        a.setObjectName(f"act-{key.replace('_', '-')}")
        a.setShortcut(QKeySequence(shortcut))
        a.setShortcutContext(Qt.ShortcutContext.WindowShortcut)
        a.triggered.connect(lambda _=False, k=key: run(k))
        menu.addAction(a)
        actions[key] = a

    def refresh() -> None:
        w = target()
        for key, a in actions.items():
            a.setEnabled(available(key, w))

    def enable_all() -> None:  # after the menu closes: the shortcuts work wherever the keyboard goes next
        for a in actions.values():
            a.setEnabled(True)

    menu.aboutToShow.connect(refresh)
    menu.aboutToHide.connect(enable_all)
    return actions
