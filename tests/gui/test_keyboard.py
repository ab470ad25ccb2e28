"""Keyboard use and screen readers: the Tab chain through every panel, arrow keys inside tables, tiles and
cautions, accessible names, and visible input borders in the high-contrast theme.

The expectations are the platform conventions for keyboard access (WCAG 2.2 success criteria 2.1.1 Keyboard,
2.1.2 No Keyboard Trap, 2.4.3 Focus Order, 4.1.2 Name, Role, Value) read through Qt's own accessibility
interface (QAccessible), which is what a screen reader is given.
"""

from __future__ import annotations

import pytest

from ventset import storage

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402
from PySide6.QtGui import QAccessible, QImage  # noqa: E402
from PySide6.QtWidgets import (  # noqa: E402
    QAbstractButton,
    QAbstractItemView,
    QApplication,
    QComboBox,
    QLineEdit,
    QTableWidget,
    QWidget,
)

from tests.gui.conftest import settle  # noqa: E402


@pytest.fixture
def full_window(qtbot, tmp_path, monkeypatch):
    """The window as ``ventset`` opens it: every panel installed, at 1366 × 768."""
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    from ventset.gui import case_ui
    from ventset.gui.settings import open_settings
    from ventset.gui.window import EXTENSIONS, MainWindow, install_extensions

    original = case_ui.install

    def quiet_install(window, **kw):  # no recovery offer, and closing discards without asking
        manager = original(window, offer_recovery=False)
        manager.ask_save_discard_cancel = lambda: "discard"
        manager.warn = manager.inform = lambda *a: None
        return manager

    monkeypatch.setattr(case_ui, "install", quiet_install)
    w = MainWindow(open_settings())
    qtbot.addWidget(w)
    assert len(install_extensions(w)) == len(EXTENSIONS)
    w.resize(1366, 768)
    w.show()
    qtbot.waitExposed(w)
    settle(w)
    return w


def _focus() -> object:
    return QApplication.focusWidget()


def _walk(qtbot, start, key=Qt.Key.Key_Tab, limit=400) -> list:
    """Press ``key`` from ``start`` until the keyboard is back at ``start``; the widgets passed, in order."""
    start.setFocus(Qt.FocusReason.OtherFocusReason)
    QApplication.processEvents()
    assert _focus() is start
    seen = []
    for _ in range(limit):
        w = _focus()
        seen.append(w)
        qtbot.keyClick(w, key)
        if _focus() is start:
            return seen
    raise AssertionError(f"Tab never came back to the first field: stuck at {seen[-5:]}")


def _in(panel, w) -> bool:
    return w is panel or panel.isAncestorOf(w)


def _region(window, w) -> int:
    for i, panel in enumerate((window.form_scroll, window.settings_panel, window.tabs, window.cautions)):
        if _in(panel, w):
            return i
    return -1


def test_tab_reaches_every_panel_in_reading_order_and_leaves_the_table(qtbot, full_window):
    w = full_window
    table = w.form.parts_editor.table
    assert table.rowCount() >= 2  # the demo patient has parts: a trap would cycle through its cells
    seen = _walk(qtbot, w.form.name_edit)
    assert len(seen) == len(set(map(id, seen))), "a widget was visited twice in one round"
    assert seen.count(table) == 1
    regions = [_region(w, x) for x in seen]
    assert -1 not in regions, [x for x in seen if _region(w, x) == -1]
    assert regions == sorted(regions), "Tab order jumps back and forth between the panels"
    assert set(regions) == {0, 1, 2, 3}  # inputs, settings, detail tabs and the cautions are all reached
    cautions = [x for x in seen if _in(w.cautions, x)]
    assert cautions and cautions[0] in w.cautions.rows
    assert len(cautions) == 1 and len([x for x in seen if _in(w.settings_panel, x)]) == 1  # one stop each
    for edit in (r.edit for r in w.form.rows.values() if r.edit.isVisibleTo(w) and r.edit.isEnabled()):
        assert edit in seen


def test_shift_tab_goes_back_the_same_way(qtbot, full_window):
    w = full_window
    forward = _walk(qtbot, w.form.name_edit)
    backward = _walk(qtbot, w.form.name_edit, Qt.Key.Key_Backtab)
    assert [forward[0], *reversed(forward[1:])] == backward


def test_the_record_tab_is_walked_before_the_cautions(qtbot, full_window):
    w = full_window
    record = w._panels["Anaesthetic record"]
    w.tabs.setCurrentWidget(record)
    record = record.panel()  # built when its tab is first shown (ondemand.py)
    settle(w)
    seen = _walk(qtbot, w.form.name_edit)
    assert record.table in seen and seen.count(record.table) == 1
    at = {x: i for i, x in enumerate(seen)}
    first_caution = min(i for x, i in at.items() if _in(w.cautions, x))
    assert max(at[e] for e in record.edits.values()) < first_caution
    assert at[record.edits["time"]] < at[record.edits["etco2"]] < at[record.record_button]


def test_arrow_keys_move_inside_the_table_tiles_and_cautions(qtbot, full_window):
    w = full_window
    table = w.form.parts_editor.table
    table.setFocus()
    table.setCurrentCell(0, 1)
    qtbot.keyClick(table, Qt.Key.Key_Down)
    assert table.currentRow() == 1 and _focus() is table
    tiles = [t for t in w.settings_panel.tiles.values() if t.isVisible()]  # machine tiles hide with no machine
    w.settings_panel.setFocus(Qt.FocusReason.TabFocusReason)
    assert _focus() is tiles[0]
    qtbot.keyClick(_focus(), Qt.Key.Key_Right)
    assert _focus() is tiles[1]
    qtbot.keyClick(_focus(), Qt.Key.Key_End)
    assert _focus() is tiles[-1]
    rows = [r for r in w.cautions.rows if r.isVisible()]
    assert len(rows) >= 2
    w.cautions.scroll.setFocus(Qt.FocusReason.TabFocusReason)
    assert _focus() is rows[0]
    qtbot.keyClick(_focus(), Qt.Key.Key_Down)
    assert _focus() is rows[1]
    ring = rows[1].findChild(type(rows[1].property("focus_ring")), "focus-ring")
    assert ring is not None and ring.isVisible()
    qtbot.keyClick(_focus(), Qt.Key.Key_Tab)
    assert not _in(w.cautions, _focus())


def test_tab_while_editing_a_cell_commits_it_and_leaves_the_table(qtbot, full_window):
    w = full_window
    table: QTableWidget = w.form.parts_editor.table
    before = w.controller.request.circuit.parts[0].volume_ml
    table.setFocus()
    table.setCurrentCell(0, 1)
    table.editItem(table.item(0, 1))
    editor = _focus()
    assert isinstance(editor, QLineEdit) and table.isAncestorOf(editor)
    editor.selectAll()
    qtbot.keyClicks(editor, "3.5")
    qtbot.keyClick(editor, Qt.Key.Key_Tab)
    settle(w)
    assert not _in(table, _focus())
    assert w.controller.request.circuit.parts[0].volume_ml == 3.5 != before


def test_f6_jumps_between_the_panels(qtbot, full_window):
    w = full_window
    w.form.rows["mass"].edit.setFocus()
    order = []
    for _ in range(4):
        w.act_next_panel.trigger()
        order.append(_region(w, _focus()))
    assert order == [1, 2, 3, 0]
    w.act_previous_panel.trigger()
    assert _region(w, _focus()) == 3


def _name(widget) -> str:
    iface = QAccessible.queryAccessibleInterface(widget)
    return iface.text(QAccessible.Text.Name) if iface is not None else ""


def _description(widget) -> str:
    iface = QAccessible.queryAccessibleInterface(widget)
    return iface.text(QAccessible.Text.Description) if iface is not None else ""


def test_every_input_tile_and_the_cautions_list_have_a_name_and_a_plain_description(qtbot, full_window):
    w = full_window
    kinds = (QLineEdit, QComboBox, QAbstractButton, QAbstractItemView)
    widgets = [x for k in kinds for x in w.findChildren(k)
               if x.window() is w and x.focusPolicy() != Qt.FocusPolicy.NoFocus]
    widgets = [x for x in widgets if not isinstance(x, QLineEdit) or not isinstance(x.parent(), QComboBox)]
    widgets += list(w.settings_panel.tiles.values()) + [w.cautions.scroll]
    assert len(widgets) > 80
    missing = []
    for x in widgets:
        name, description = _name(x), _description(x)
        # A combo box without a name is announced by its current entry ("Species default (volume)").
        explicit = x.accessibleName() if isinstance(x, QComboBox) else name
        if not explicit.strip() or not description.strip() or "<" in description:
            missing.append((type(x).__name__, x.objectName(), name, description[:40]))
    assert not missing, missing
    assert w.form.mode_combo.accessibleName() == "Ventilation mode" and _name(w.cautions.scroll) == "Cautions list"
    n_danger = sum(1 for c in w.controller.plan.cautions if c.severity == "danger")
    assert f"{n_danger} danger" in _description(w.cautions.scroll)
    assert w.controller.plan.cautions[0].code in _description(w.cautions.rows[0])
    tile = w.settings_panel.tiles["rate"]
    assert _name(tile) == "Rate" and tile.value.text() in _description(tile)


def _edge_lightness(widget) -> tuple[int, int]:
    """Lightness of the widget's left border (middle row) and of its inside, from a grab."""
    img: QImage = widget.grab().toImage()
    y = img.height() // 2
    edge = max(img.pixelColor(x, y).lightness() for x in range(0, 3))
    inside = img.pixelColor(img.width() // 2, img.height() - 4).lightness()
    return edge, inside


def test_high_contrast_gives_every_input_a_visible_border(qtbot, full_window):
    w = full_window
    record = w._panels["Anaesthetic record"]
    w.tabs.setCurrentWidget(record)
    record = record.panel()  # built when its tab is first shown (ondemand.py)
    w.set_theme("contrast")
    settle(w)
    style = w.styleSheet()
    w.setStyleSheet("")  # the palette alone (as before): the record's boxes have no border to see
    settle(w)
    bare_edge, _ = _edge_lightness(record.edits["etco2"])
    w.setStyleSheet(style)
    settle(w)
    assert bare_edge < 100
    for widget in (record.edits["etco2"], record.prefer, w.form.rows["mass"].edit, w.form.mode_combo,
                   w.form.parts_editor.own_volume):
        edge, inside = _edge_lightness(widget)
        assert edge > 200 and inside < 60, (widget.objectName() or widget.accessibleName(), edge, inside)


def test_the_programs_window_is_named_and_ordered_as_one_given_its_panels_afterwards(qtbot, tmp_path, monkeypatch):
    """MainWindow(extensions=True), the program's window, names its inputs and threads the Tab order once; the
    result must be what the two passes give (the window made first, its panels added after)."""
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    from ventset.gui import case_ui
    from ventset.gui.settings import open_settings
    from ventset.gui.window import MainWindow, install_extensions

    original = case_ui.install
    monkeypatch.setattr(case_ui, "install", lambda window, **kw: original(window, offer_recovery=False))

    def state(w):
        widgets = [c for c in w.findChildren(QWidget) if c.isWidgetType()]
        named = [(type(c).__name__, c.objectName(), c.accessibleName(), c.accessibleDescription(),
                  c.focusPolicy()) for c in widgets]
        chain, c = [], w.form.rows["mass"].edit
        for _ in range(60):
            chain.append((type(c).__name__, c.objectName(), c.accessibleName()))
            c = c.nextInFocusChain()
        return named, chain

    two = MainWindow(open_settings())
    qtbot.addWidget(two)
    install_extensions(two)
    one = MainWindow(open_settings(), extensions=True)
    qtbot.addWidget(one)
    assert state(one) == state(two)
