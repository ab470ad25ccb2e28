"""The Fish irrigation tab's case file and printout: open and save an irrigation case, save the printout as PDF,
print it. A row of buttons with a status line, placed in the panel by ``ventset.gui.aquatic_panel``.

It talks to the panel only through ``values()``, ``set_values()``, ``replan()``, ``plan``, ``error`` and ``data``;
the case files are ``ventset.case_irrigation`` (the same format, storage and loader as ventilation cases), the
page is ``ventset.gui.aquatic_print``. An out-of-date plan is never saved or printed. Every message is plain text.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QDialog, QFileDialog, QHBoxLayout, QMessageBox, QPushButton, QVBoxLayout, QWidget

from ventset import case_irrigation as ci
from ventset import cases
from ventset.aquatic.irrigation import IrrigationPlan, texts_from_request
from ventset.errors import VentsetError
from ventset.gui.text import Text

if TYPE_CHECKING:
    from ventset.gui.aquatic_panel import AquaticPanel

CASE_FILTER = f"ventset case (*{cases.SUFFIX});;JSON (*.json);;All files (*)"
PDF_FILTER = "PDF (*.pdf)"


def _slug(text: str) -> str:
    safe = "".join(ch if ch.isalnum() or ch in "-_" else "-" for ch in text.strip().lower())
    return "-".join(p for p in safe.split("-") if p)[:40] or "fish"


class CaseBar(QWidget):
    """Open / Save fish case, Save printout as PDF, Print; ``path`` and ``case`` are the case last opened or saved."""

    def __init__(self, panel: AquaticPanel, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("aquatic-case-bar")
        self.panel = panel
        self.path: Path | None = None
        self.case: ci.IrrigationCase | None = None
        col = QVBoxLayout(self)
        col.setContentsMargins(0, 0, 0, 0)
        row = QHBoxLayout()
        col.addLayout(row)
        self.buttons: dict[str, QPushButton] = {}
        for key, text, slot in (("open", "Open fish case…", self.open_case),
                                ("save", "Save fish case…", self.save_case),
                                ("pdf", "Save printout as PDF…", self.write_pdf),
                                ("print", "Print…", self.print_plan)):
            button = QPushButton(text, self)
            button.setObjectName(f"aquatic-{key}")
            button.clicked.connect(lambda _=False, slot=slot: slot())
            row.addWidget(button)
            self.buttons[key] = button
        row.addStretch(1)
        self.status = Text("No case file: the entries are kept in this window's settings.", self, wrap=True,
                           name="aquatic-case-status", lines=1)
        col.addWidget(self.status)

    # ------------------------------------------------------------------ the plan on screen
    def current_plan(self, what: str) -> IrrigationPlan | None:
        """The panel's plan if it matches every entry, else None (after telling the user why)."""
        self.panel.replan()
        if self.panel.error is not None or self.panel.plan is None:
            reason = str(self.panel.error) if self.panel.error is not None else "no plan yet"
            self.warn(f"Not {what}", f"The plan on screen does not match the entries ({reason}). Correct the "
                      "marked entry first; an out-of-date plan is never saved or printed. What you typed is kept.")
            return None
        return self.panel.plan

    # ------------------------------------------------------------------ case files
    def save_case(self, path: Path | str | None = None) -> bool:
        """Save the current plan as an irrigation case (asks for a file when ``path`` is None)."""
        plan = self.current_plan("saved")
        if plan is None:
            return False
        if path is None:
            suggested = self.path or Path.home() / f"{_slug(plan.request.name or plan.group.key)}{cases.SUFFIX}"
            chosen = self.pick_save_path("Save fish case", str(suggested), CASE_FILTER)
            if not chosen:
                return False
            path = Path(chosen) if Path(chosen).suffix else Path(chosen).with_suffix(cases.SUFFIX)
        target = Path(path)
        previous = self.case if self.path == target else None
        case = ci.make_irrigation_case(plan.request, plan, previous=previous)
        try:
            saved = ci.save_irrigation_case(target, case, replace_any=True)  # the file dialog confirmed replacing
        except VentsetError as exc:
            self.warn("The case was not saved", f"{exc}\n\nNothing was changed.")
            return False
        self.case, self.path = saved, target
        self.status.setText(f"Saved {target}")
        return True

    def open_case(self, path: Path | str | None = None) -> bool:
        """Open an irrigation case into the panel; on failure the panel is left as it is."""
        if path is None:
            start = str(self.path.parent) if self.path else str(Path.home())
            chosen = self.pick_open_path("Open fish case", start, CASE_FILTER)
            if not chosen:
                return False
            path = chosen
        try:
            opened = ci.open_irrigation_case(path)
        except VentsetError as exc:
            self.warn("The case could not be opened", f"{exc}\n\nThe entries in this tab are unchanged.")
            return False
        group = self.panel.data.find_group(opened.case.request.species)
        if group is None:
            self.warn("The case could not be opened", f"Its species '{opened.case.request.species[:80]}' is not an "
                      "aquatic group this version knows ('ventset irrigate --list'). The file is unchanged.")
            return False
        self.panel.set_values({**texts_from_request(opened.case.request), "species": group.key})
        self.panel.replan()
        self.case, self.path = opened.case, opened.path
        self.status.setText(f"Opened {opened.path}")
        if opened.messages:
            self.inform("Opened with notes", "\n".join(opened.messages))
        return True

    # ------------------------------------------------------------------ printout
    def write_pdf(self, path: Path | str | None = None) -> Path | None:
        """Write the printed plan as PDF (asks for a file when ``path`` is None)."""
        from ventset.gui.aquatic_print import write_irrigation_pdf

        plan = self.current_plan("printed")
        if plan is None:
            return None
        if path is None:
            stem = self.path.stem if self.path else _slug(plan.request.name or plan.group.key)
            base = self.path.parent if self.path else Path.home()
            chosen = self.pick_save_path("Save printout as PDF", str(base / f"{stem}-irrigation.pdf"), PDF_FILTER)
            if not chosen:
                return None
            path = Path(chosen) if Path(chosen).suffix else Path(chosen).with_suffix(".pdf")
        target = Path(path)
        try:
            info = write_irrigation_pdf(plan, target, case_name=self.path.name if self.path else "")
        except VentsetError as exc:
            self.warn("The PDF was not written", str(exc))
            return None
        self.status.setText(f"Wrote {target} ({info.pages} page{'s' if info.pages > 1 else ''})")
        return target

    def print_plan(self) -> bool:
        from PySide6.QtPrintSupport import QPrintDialog, QPrinter

        from ventset.gui.aquatic_print import print_irrigation

        plan = self.current_plan("printed")
        if plan is None:
            return False
        printer = QPrinter(QPrinter.PrinterMode.HighResolution)
        if QPrintDialog(printer, self).exec() != QDialog.DialogCode.Accepted:
            return False
        print_irrigation(plan, printer, case_name=self.path.name if self.path else "")
        return True

    # ------------------------------------------------------------------ dialogs (replaced in tests)
    def pick_open_path(self, title: str, start: str, filters: str) -> str:
        return QFileDialog.getOpenFileName(self, title, start, filters)[0]

    def pick_save_path(self, title: str, start: str, filters: str) -> str:
        return QFileDialog.getSaveFileName(self, title, start, filters)[0]

    def _message(self, icon: QMessageBox.Icon, title: str, text: str) -> None:
        box = QMessageBox(icon, title, text, QMessageBox.StandardButton.Ok, self)
        box.setTextFormat(Qt.TextFormat.PlainText)
        box.exec()

    def warn(self, title: str, text: str) -> None:
        self.status.setText(f"{title}: {text.splitlines()[0]}")
        self._message(QMessageBox.Icon.Warning, title, text)

    def inform(self, title: str, text: str) -> None:
        self._message(QMessageBox.Icon.Information, title, text)
