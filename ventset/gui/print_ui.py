"""Printing in the window: Qt's own print preview (the pages as they will print, paper and orientation
chosen in its page setup), the printer dialog, the PDF, and the paper size (from the locale, or chosen).

Used by the case manager (ventset.gui.case_ui), which knows the current plan, the case file and the
anaesthetic record; nothing here computes anything, it only hands them to ventset.gui.printing.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtPrintSupport import QPrintDialog, QPrinter, QPrintPreviewDialog
from PySide6.QtWidgets import QDialog, QToolBar

from ventset.errors import VentsetError
from ventset.gui import printing
from ventset.gui.paper import PAPER_KEY, chosen_paper, install_paper_menu, paper_choice  # noqa: F401 (re-exported)

PDF_FILTER = "PDF (*.pdf)"


def make_printer(paper: str, title: str = "") -> QPrinter:
    printer = QPrinter(QPrinter.PrinterMode.HighResolution)
    printer.setPageSize(printing.page_size(paper))
    printer.setFullPage(True)
    if title:
        printer.setDocName(title)
    return printer


class PrintJob:
    """The plan, units, case name and record to print, taken from the manager when printing starts."""

    def __init__(self, manager, plan) -> None:
        self.manager = manager
        self.plan = plan
        self.gas_unit = manager._gas_unit()
        self.case_name = manager.path.name if manager.path else ""
        get = getattr(manager, "_timeline_get", None)
        entries = get() if get is not None else ()
        self.record = tuple(entries or ())
        self.paper = chosen_paper(getattr(manager.window, "settings", None))

    def paint(self, printer) -> printing.PageInfo:
        return printing.print_plan(self.plan, printer, gas_unit=self.gas_unit, case_name=self.case_name,
                                   record=self.record)

    def write_pdf(self, path: Path) -> printing.PageInfo:
        return printing.write_plan_pdf(self.plan, path, gas_unit=self.gas_unit, case_name=self.case_name,
                                       paper=self.paper, record=self.record)

    def title(self) -> str:
        who = self.plan.request.patient.name or self.plan.resolved.species_label
        return f"Ventilation starting plan — {who}"


def write_pdf(manager, path: Path | None = None) -> Path | None:
    """Save the printed plan as PDF (asks where when no path is given); the path written, or None."""
    plan = manager.current_plan()
    if plan is None:
        return None
    job = PrintJob(manager, plan)
    if path is None:
        stem = manager.path.stem if manager.path else manager.slug()
        base = manager.path.parent if manager.path else Path.home()
        chosen = manager.pick_save_path("Save printed plan as PDF", str(base / f"{stem}-plan.pdf"), PDF_FILTER)
        if not chosen:
            return None
        path = Path(chosen)
        if not path.suffix:
            path = path.with_suffix(".pdf")
    try:
        info = job.write_pdf(path)
    except VentsetError as exc:
        manager.warn("The PDF was not written", str(exc))
        return None
    manager._status(f"Wrote {path} ({info.pages} page{'s' if info.pages != 1 else ''}, {job.paper})")
    return path


def print_to_printer(manager) -> bool:
    """The platform's print dialog, then every page on the printer chosen."""
    plan = manager.current_plan()
    if plan is None:
        return False
    job = PrintJob(manager, plan)
    printer = make_printer(job.paper, job.title())
    dialog = QPrintDialog(printer, manager.window)
    if dialog.exec() != QDialog.DialogCode.Accepted:
        return False
    job.paint(printer)
    return True


def preview(manager) -> QPrintPreviewDialog | None:
    """Qt's print preview of every page, drawn by the same code as the printer and the PDF; its tool bar
    has page setup (paper, orientation), print, and here also Save as PDF."""
    plan = manager.current_plan()
    if plan is None:
        return None
    job = PrintJob(manager, plan)
    printer = make_printer(job.paper, job.title())
    dialog = QPrintPreviewDialog(printer, manager.window)
    dialog.setWindowTitle(f"Printed plan — preview ({job.paper})")
    dialog.paintRequested.connect(job.paint)
    dialog.job = job  # kept with the dialog (its slot) and for tests
    dialog.printer = printer
    bar = dialog.findChild(QToolBar)
    if bar is not None:
        bar.addSeparator()
        save = bar.addAction("Save as PDF…")
        save.setObjectName("preview-save-pdf")
        save.setToolTip("Write these pages to a PDF file")
        save.triggered.connect(lambda: write_pdf(manager) and dialog.accept())
    dialog.resize(manager.window.width() * 3 // 4, manager.window.height() * 9 // 10)
    dialog.open()
    return dialog


