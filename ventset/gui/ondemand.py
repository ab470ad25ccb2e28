"""Tabs that build their panel the first time they are shown: the anaesthetic record and fish irrigation.

Building both panels (and importing their modules) at start-up took about a fifth of the time to the
window's first frame, for tabs that are hidden at start. Each is now an ``OnDemandTab``: a placeholder in
the tab bar that builds its panel in its show event, which Qt sends before the tab is first painted, so
the panel is drawn complete the first time it is seen. The record tab also builds its panel when the
record itself is needed (a case opened with a record), and stands in for it until then: ``entries`` is
the empty record, ``set_entries`` builds the panel and fills it, ``record_changed`` is the panel's.

A panel that cannot be built says so in its tab (and prints why on stderr); the planning window goes on.
"""

from __future__ import annotations

import sys
import traceback
from collections.abc import Callable

from PySide6.QtCore import Signal
from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from ventset.gui.text import plain

RECORD_TITLE = "Anaesthetic record"
AQUATIC_TITLE = "Fish irrigation"


class OnDemandTab(QWidget):
    """A tab page whose panel ``build(parent)`` makes the first time the page is shown or asked for."""

    def __init__(self, title: str, build: Callable[[QWidget], QWidget], parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName(f"on-demand-{title.lower().replace(' ', '-')}")
        self._title = title
        self._build = build
        self._panel: QWidget | None = None
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)

    @property
    def built(self) -> bool:
        return self._panel is not None

    def panel(self) -> QWidget:
        """The panel, built now if it was not yet."""
        if self._panel is None:
            try:
                panel = self._build(self)
            except Exception:  # a broken panel must not stop the planning window
                print(f"ventset: the {self._title.lower()} panel could not be built:", file=sys.stderr)
                traceback.print_exc()
                panel = plain(QLabel(f"The {self._title.lower()} panel could not be built (the reason was printed "
                                     "on the terminal that started ventset). Planning is not affected.", self))
                panel.setWordWrap(True)
            self._panel = panel
            self.layout().addWidget(panel)
            self._built(panel)
            if self.isVisible():
                panel.setVisible(True)  # now, not on the next pass: this page is about to be painted
        return self._panel

    def _built(self, panel: QWidget) -> None:
        """Hook for subclasses: the panel was just made."""

    def showEvent(self, e) -> None:  # noqa: N802 - Qt override
        self.panel()
        super().showEvent(e)


class RecordTab(OnDemandTab):
    """The anaesthetic-record tab; until its panel is built it stands in for it (an empty record)."""

    record_changed = Signal(tuple)

    def _built(self, panel: QWidget) -> None:
        signal = getattr(panel, "record_changed", None)
        if signal is not None:
            signal.connect(self.record_changed)

    @property
    def entries(self) -> tuple:
        return getattr(self._panel, "entries", ()) if self._panel is not None else ()

    def set_entries(self, entries: tuple) -> None:
        panel = self.panel()
        if hasattr(panel, "set_entries"):
            panel.set_entries(entries)


def _record(window) -> Callable[[QWidget], QWidget]:
    def build(parent: QWidget) -> QWidget:
        from ventset.gui import timeline

        return timeline.attach(window, parent)

    return build


def _aquatic(window) -> Callable[[QWidget], QWidget]:
    def build(parent: QWidget) -> QWidget:
        from ventset.gui import aquatic_panel

        return aquatic_panel.attach(window, parent)

    return build


def install(window) -> tuple[RecordTab, OnDemandTab]:
    """Add the record and fish-irrigation tabs to ventset's MainWindow, each built when first shown."""
    record = RecordTab(RECORD_TITLE, _record(window), window)
    window.add_panel(RECORD_TITLE, record)
    aquatic = OnDemandTab(AQUATIC_TITLE, _aquatic(window), window)
    window.add_panel(AQUATIC_TITLE, aquatic)
    return record, aquatic
