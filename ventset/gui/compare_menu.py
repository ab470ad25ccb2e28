"""Case ▸ "Compare with…" and View ▸ "Dead space, step by step…" in ventset's window. The views they open
(ventset.gui.compare_view, ventset.gui.deadspace_view) are loaded the first time one is asked for, not at
start-up."""

from __future__ import annotations


def _compare(window):
    from ventset.gui.compare_view import open_compare

    return open_compare(window)


def _deadspace(window):
    from ventset.gui.deadspace_view import open_deadspace

    return open_deadspace(window)


def install(window) -> None:
    """Add Case → "Compare with…" and View → "Dead space, step by step…" to ventset's window."""
    from PySide6.QtGui import QAction

    case = window.menu("Case")
    act = QAction("Compare with…", window)
    act.setObjectName("act-compare")
    act.triggered.connect(lambda: _compare(window))
    quit_action = getattr(window, "act_quit", None)
    if quit_action is not None and quit_action in case.actions():
        case.insertAction(quit_action, act)
    else:
        case.addAction(act)
    window.act_compare = act
    view_menu = window.menu("View")
    teach = QAction("Dead space, step by step…", window)
    teach.setObjectName("act-deadspace")
    teach.triggered.connect(lambda: _deadspace(window))
    view_menu.addAction(teach)
    window.act_deadspace = teach
