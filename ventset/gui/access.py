"""Keyboard use and screen readers, for the whole window in one place.

* Tab order follows the screen: the status line, the inputs, the settings, the detail tabs, the cautions.
  Tab never stays inside a table (arrow keys move between its cells; Tab leaves it, also while a cell is
  being edited). The settings tiles and the cautions list are one Tab stop each; arrow keys move between
  the tiles or the cautions, and a focus ring shows which one has the keyboard.
* F6 / Shift+F6 jump between the panels.
* Every input, combo box, button and list has an accessible name and a plain-text description (from its
  label and tooltip when its module gave none); the names of a few inputs are made more specific here.

``apply(window)`` may be called again after panels are added (``install_extensions`` does so): it only adds
what is missing. Tab itself is ``move_focus`` (MainWindow.focusNextPrevChild): the focus chain with the panels in
reading order, so panels added later, in any order, still fall in place.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import lru_cache

from PySide6.QtCore import QEvent, QObject, Qt
from PySide6.QtGui import QAction, QKeySequence, QPainter, QPen, QTextDocumentFragment
from PySide6.QtWidgets import (
    QAbstractButton,
    QAbstractItemView,
    QAbstractScrollArea,
    QAbstractSpinBox,
    QComboBox,
    QDockWidget,
    QLabel,
    QLineEdit,
    QPlainTextEdit,
    QScrollArea,
    QStyledItemDelegate,
    QTabBar,
    QTextEdit,
    QWidget,
)

# Names more specific than the labels beside these inputs (object name → accessible name).
NAMES = {
    "mode": "Ventilation mode",
    "circuit": "Breathing system",
    "strategy": "Method for choosing tidal volume and rate",
    "parts-add": "Add the catalogue part",
    "parts-remove": "Remove the selected apparatus part",
    "go-to-field": "Go to the field with the problem",
    "detail-tabs": "Details",
    "qt_tabwidget_tabbar": "Detail tabs",
    "derived-panel": "Derived values",
    "assumptions-panel": "Assumptions and sources",
}
INPUTS = (QLineEdit, QComboBox, QAbstractButton, QAbstractItemView, QAbstractSpinBox, QTextEdit, QPlainTextEdit,
          QTabBar)
# Scroll areas that only hold other widgets: not a Tab stop of their own.
CONTAINERS = ("form-scroll", "plots-scroll")


@lru_cache(maxsize=1024)
def plain_text(tip: str) -> str:
    """A tooltip (often a little HTML) as the plain sentence a screen reader should say (remembered: a form row's
    label, box and unit share one tooltip, and the window is named again after its panels are added)."""
    if not tip:
        return ""
    return " ".join(QTextDocumentFragment.fromHtml(tip).toPlainText().split())


def _label_text(label: QLabel) -> str:
    return " ".join(label.text().replace("&", "").split()).rstrip(":")


def name_inputs(root: QWidget) -> None:
    """Give every input under ``root`` an accessible name and description where its module gave none."""
    buddies: dict[int, QLabel] = {}
    for lab in root.findChildren(QLabel):
        if lab.buddy() is not None:
            buddies[id(lab.buddy())] = lab
    for w in root.findChildren(QWidget):
        if not isinstance(w, INPUTS) and not w.property("tile"):
            continue
        label = buddies.get(id(w))
        if w.objectName() in NAMES:
            w.setAccessibleName(NAMES[w.objectName()])
        elif not w.accessibleName():
            w.setAccessibleName(_fallback_name(w, label))
        if not w.accessibleDescription():
            tip = plain_text(w.toolTip()) or (plain_text(label.toolTip()) if label is not None else "")
            w.setAccessibleDescription(tip or _role_hint(w))


def _fallback_name(w: QWidget, label: QLabel | None) -> str:
    if label is not None and _label_text(label):
        return _label_text(label)
    if isinstance(w, QAbstractButton) and w.text():
        return " ".join(w.text().replace("&", "").split())
    if isinstance(w, QLineEdit) and w.placeholderText():
        return w.placeholderText()
    if w.toolTip():
        return plain_text(w.toolTip()).split(". ")[0][:80]
    return w.objectName().replace("-", " ").replace("_", " ").strip() or type(w).__name__


def _role_hint(w: QWidget) -> str:
    if isinstance(w, QAbstractItemView):
        return "Arrow keys move between the rows; Tab leaves the table."
    if isinstance(w, QComboBox):
        return "Alt+Down opens the list."
    if isinstance(w, QAbstractButton):
        return "Space or Enter presses it."
    return w.accessibleName()


class LeavingDelegate(QStyledItemDelegate):
    """Tab or Shift+Tab while a cell is being edited commits the edit and leaves the table."""

    def eventFilter(self, editor, event) -> bool:  # noqa: N802 - Qt override
        if event.type() == QEvent.Type.KeyPress and event.key() in (Qt.Key.Key_Tab, Qt.Key.Key_Backtab):
            view = self.parent()
            self.commitData.emit(editor)
            self.closeEditor.emit(editor, QStyledItemDelegate.EndEditHint.NoHint)
            if isinstance(view, QWidget):
                forward = event.key() == Qt.Key.Key_Tab and not event.modifiers() & Qt.KeyboardModifier.ShiftModifier
                _leave(view, forward)
            return True
        return super().eventFilter(editor, event)


def tab_stop(w: QWidget) -> bool:
    """True for a widget Tab stops at (Qt's own rule: visible, enabled, takes Tab focus, no focus proxy)."""
    return (w.isVisible() and w.isEnabled() and bool(w.focusPolicy() & Qt.FocusPolicy.TabFocus)
            and w.focusProxy() is None)


def _leave(host: QWidget, forward: bool) -> None:
    """Move the keyboard to the first Tab stop after (or before) ``host`` and everything inside it."""
    target = next_stop(host.window(), host, forward, skip=host)
    if target is not None:
        target.setFocus(Qt.FocusReason.TabFocusReason if forward else Qt.FocusReason.BacktabFocusReason)


class FocusRing(QWidget):
    """A ring drawn over a widget that has the keyboard (tiles and cautions have no focus look of their own)."""

    def __init__(self, target: QWidget) -> None:
        super().__init__(target)
        self.setObjectName("focus-ring")
        self.setAttribute(Qt.WidgetAttribute.WA_TransparentForMouseEvents)
        self.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        self.hide()

    def paintEvent(self, _event) -> None:  # noqa: N802 - Qt override
        p = QPainter(self)
        width = max(2, self.fontMetrics().height() // 6)
        p.setPen(QPen(self.palette().highlight().color(), width))
        half = width / 2
        p.drawRect(self.rect().adjusted(int(half), int(half), -int(half + 0.5), -int(half + 0.5)))
        p.end()


class KeyGroup(QObject):
    """One Tab stop for a group of items: the host passes the keyboard to the current item; arrow keys move
    between the items; Tab and Shift+Tab leave the group."""

    NEXT = (Qt.Key.Key_Down, Qt.Key.Key_Right)
    PREVIOUS = (Qt.Key.Key_Up, Qt.Key.Key_Left)

    def __init__(self, host: QWidget, items: Callable[[], list[QWidget]], name: str) -> None:
        super().__init__(host)
        self.host = host
        self.items = items
        self.index = 0
        self._known: set[int] = set()
        host.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        host.setAccessibleName(name)
        host.installEventFilter(self)
        self.adopt()

    def adopt(self) -> None:
        """Take on items added since (caution rows are made as plans need them)."""
        for item in self.items():
            if id(item) not in self._known:
                self._known.add(id(item))
                item.setFocusPolicy(Qt.FocusPolicy.ClickFocus)
                item.installEventFilter(self)
                item.setProperty("focus_ring", FocusRing(item))

    def current(self) -> QWidget | None:
        items = [i for i in self.items() if i.isVisible()]
        if not items:
            return None
        self.index = min(self.index, len(items) - 1)
        return items[self.index]

    def eventFilter(self, obj, event) -> bool:  # noqa: N802 - Qt override
        kind = event.type()
        if obj is self.host:
            if kind == QEvent.Type.FocusIn:
                self.adopt()
                item = self.current()
                if item is not None:  # the item that last had the keyboard, whichever way Tab came
                    item.setFocus(event.reason())
            return False
        if kind in (QEvent.Type.FocusIn, QEvent.Type.FocusOut):
            ring = obj.property("focus_ring")
            if ring is not None:
                ring.setGeometry(obj.rect())
                ring.raise_()
                ring.setVisible(kind == QEvent.Type.FocusIn)
            if kind == QEvent.Type.FocusIn:
                visible = [i for i in self.items() if i.isVisible()]
                if obj in visible:
                    self.index = visible.index(obj)
                self._scroll_to(obj)
        elif kind == QEvent.Type.Resize and obj.property("focus_ring") is not None:
            obj.property("focus_ring").setGeometry(obj.rect())
        elif kind == QEvent.Type.KeyPress:
            return self._key(obj, event)
        return False

    def _key(self, obj: QWidget, event) -> bool:
        key = event.key()
        visible = [i for i in self.items() if i.isVisible()]
        if key in (Qt.Key.Key_Tab, Qt.Key.Key_Backtab):
            forward = key == Qt.Key.Key_Tab and not event.modifiers() & Qt.KeyboardModifier.ShiftModifier
            _leave(self.host, forward)
            return True
        if obj not in visible:
            return False
        i = visible.index(obj)
        target = {Qt.Key.Key_Home: 0, Qt.Key.Key_End: len(visible) - 1}.get(key)
        if key in self.NEXT:
            target = min(i + 1, len(visible) - 1)
        elif key in self.PREVIOUS:
            target = max(i - 1, 0)
        if target is None:
            return False
        visible[target].setFocus(Qt.FocusReason.OtherFocusReason)
        return True

    def _scroll_to(self, item: QWidget) -> None:
        w = item.parentWidget()
        while w is not None and not isinstance(w, QScrollArea):
            w = w.parentWidget()
        if isinstance(w, QScrollArea):
            w.ensureWidgetVisible(item, 0, 0)


def regions(window) -> list[QWidget]:
    """The window's panels in reading order (top, left, middle, tabs, right, then any docks)."""
    out = [getattr(window, "status", None), getattr(window, "form_scroll", None),
           getattr(window, "settings_panel", None), getattr(window, "tabs", None), getattr(window, "cautions", None)]
    out += [d for d in window.findChildren(QDockWidget)]
    return [w for w in out if w is not None]


def focus_chain(window: QWidget) -> list[QWidget]:
    chain, w = [], window.nextInFocusChain()
    while w is not window and len(chain) < 5000:
        chain.append(w)
        w = w.nextInFocusChain()
    return chain


def ordered_chain(window) -> list[QWidget]:
    """The window's focus chain with the panels in reading order (each panel keeps its own inner order)."""
    panels = regions(window)
    grouped: list[list[QWidget]] = [[] for _ in range(len(panels) + 1)]
    for w in focus_chain(window):
        i = next((i for i, p in enumerate(panels) if p is w or p.isAncestorOf(w)), len(panels))
        grouped[i].append(w)
    return [w for group in grouped for w in group]


def next_stop(window, current: QWidget | None, forward: bool, skip: QWidget | None = None) -> QWidget | None:
    """The Tab stop after (or before) ``current`` in reading order, passing over everything inside ``skip``."""
    chain = ordered_chain(window)
    if not forward:
        chain.reverse()
    try:
        at = chain.index(current) if current is not None else -1
    except ValueError:
        at = -1
    n = len(chain)
    for k in range(1, n + 1):
        w = chain[(at + k) % n]
        if skip is not None and (w is skip or skip.isAncestorOf(w)):
            continue
        if tab_stop(w):
            return w
    return None


def move_focus(window, forward: bool) -> bool:
    """Tab / Shift+Tab in the window (called from MainWindow.focusNextPrevChild); True when it moved."""
    target = next_stop(window, window.focusWidget(), forward)
    if target is None:
        return False
    target.setFocus(Qt.FocusReason.TabFocusReason if forward else Qt.FocusReason.BacktabFocusReason)
    return True


def _tiles(window) -> list[QWidget]:
    panel = getattr(window, "settings_panel", None)
    return list(getattr(panel, "tiles", {}).values())


def _caution_rows(window) -> list[QWidget]:
    return list(getattr(getattr(window, "cautions", None), "rows", []))


def describe_cautions(window) -> None:
    """The cautions list's description: the counts, then every caution in order (what a reader hears)."""
    panel = getattr(window, "cautions", None)
    if panel is None:
        return
    lines = []
    for row in panel.rows:
        if not row.isHidden():
            row.setAccessibleDescription(f"{row.message.text()} (code {row.code.text()})")
            lines.append(row.accessibleName())
    summary = panel.summary.text() if hasattr(panel, "summary") else ""
    panel.scroll.setAccessibleDescription(f"{summary}. " + " ".join(lines) if lines else f"{summary}. None raised.")
    group = getattr(window, "_caution_keys", None)
    if group is not None:
        group.adopt()


def _panel_names(window) -> None:
    panel = getattr(window, "cautions", None)
    if panel is not None:
        panel.setAccessibleName("Cautions")
    settings = getattr(window, "settings_panel", None)
    if settings is not None:
        settings.setAccessibleDescription("The recommended starting settings; arrow keys move between them.")
    for card in getattr(window, "plot_cards", ()):
        title = getattr(card, "_title", "") or card.objectName()
        card.setAccessibleName(f"Plot: {title}")
        if not card.accessibleDescription():
            card.setAccessibleDescription(plain_text(card.toolTip()) or title)


def _tables(window) -> None:
    for view in window.findChildren(QAbstractItemView):
        view.setTabKeyNavigation(False)
        if not isinstance(view.itemDelegate(), LeavingDelegate):
            view.setItemDelegate(LeavingDelegate(view))


def _containers(window) -> None:
    for area in window.findChildren(QAbstractScrollArea):
        if area.objectName() in CONTAINERS:
            area.setFocusPolicy(Qt.FocusPolicy.NoFocus)


def jump(window, step: int) -> None:
    """Move the keyboard to the next (step 1) or previous (-1) panel (F6 / Shift+F6)."""
    panels = [p for p in regions(window) if p.isVisible()]
    if not panels:
        return
    focus = window.focusWidget()
    here = next((i for i, p in enumerate(panels) if focus is not None and (p is focus or p.isAncestorOf(focus))), -1)
    for k in range(1, len(panels) + 1):
        panel = panels[(here + step * k) % len(panels)]
        if tab_stop(panel):
            panel.setFocus(Qt.FocusReason.ShortcutFocusReason)
            return
        inside = [w for w in focus_chain(window) if panel.isAncestorOf(w) and tab_stop(w)]
        if inside:
            inside[0].setFocus(Qt.FocusReason.ShortcutFocusReason)
            return


def _shortcuts(window) -> None:
    if getattr(window, "act_next_panel", None) is not None:
        return
    view = window.menu("View")
    view.addSeparator()
    for attr, text, key, step in (("act_next_panel", "Next panel", "F6", 1),
                                  ("act_previous_panel", "Previous panel", "Shift+F6", -1)):
        a = QAction(text, window)
        a.setShortcut(QKeySequence(key))
        a.triggered.connect(lambda _=False, s=step: jump(window, s))
        view.addAction(a)
        setattr(window, attr, a)


def apply(window) -> None:
    """Keyboard order, Tab stops and accessible names for ``window`` (again after panels are added)."""
    _tables(window)
    _containers(window)
    _panel_names(window)
    if getattr(window, "_tile_keys", None) is None and _tiles(window):
        window._tile_keys = KeyGroup(window.settings_panel, lambda: _tiles(window), "Recommended starting settings")
    if getattr(window, "_caution_keys", None) is None and getattr(window, "cautions", None) is not None:
        window.cautions.scroll.setObjectName("cautions-list")
        window._caution_keys = KeyGroup(window.cautions.scroll, lambda: _caution_rows(window), "Cautions list")
        window.controller.plan_ready.connect(lambda _plan: describe_cautions(window))
        describe_cautions(window)
    _shortcuts(window)
    name_inputs(window)
