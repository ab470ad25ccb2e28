"""The printed plan as PDF (Qt's own QPdfWriter), on a printer, or in Qt's print preview.

The pages themselves are drawn by :mod:`ventset.gui.printpages` (what goes where, flowing onto further
pages so that nothing is left out) with :mod:`ventset.gui.sheet` (drawing in points). Paper is A4 or US
Letter: by default from the locale (Letter where it is the norm, the United States and Canada; A4 elsewhere,
ISO 216), and selectable. Runs headless: a QApplication is made if none exists, on the offscreen platform
when there is no display. A PDF is built in memory and written atomically.
"""

from __future__ import annotations

import os
import sys
from datetime import datetime

from ventset import __version__
from ventset.errors import InputError, visible
from ventset.gui.paper import LETTER_TERRITORIES, PAPERS, default_paper  # noqa: F401 (re-exported)
from ventset.gui.printpages import PageInfo, Printout, no_gas_exchange, render
from ventset.model import Plan
from ventset.present.quantities import Units

__all__ = ["PAPERS", "PageInfo", "Printout", "default_paper", "ensure_app", "no_gas_exchange", "plan_page_image",
           "plan_pdf_bytes", "print_plan", "write_plan_pdf"]

DPI = 300
_APP = None


def ensure_app():
    """The running QApplication, or a new one (offscreen when no display is available)."""
    global _APP
    from PySide6.QtWidgets import QApplication

    app = QApplication.instance()
    if app is not None:
        return app
    if sys.platform.startswith("linux") and not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    _APP = QApplication(sys.argv[:1] or ["ventset"])
    return _APP


def _paper(paper: str | None) -> str:
    paper = paper or default_paper()
    if paper not in PAPERS:
        raise InputError("paper", paper, f"must be one of {', '.join(PAPERS)}")
    return paper


def page_size(paper: str | None = None):
    """The QPageSize of ``paper`` ('A4' or 'Letter'; None: from the locale)."""
    from PySide6.QtGui import QPageSize

    ids = {"A4": QPageSize.PageSizeId.A4, "Letter": QPageSize.PageSizeId.Letter}
    return QPageSize(ids[_paper(paper)])


def _printout(plan: Plan, gas_unit: str, case_name: str, when: datetime | None, record: tuple) -> Printout:
    return Printout(plan, Units(gas=gas_unit), case_name, when, tuple(record or ()))


def plan_pdf_bytes(plan: Plan, *, gas_unit: str = "mmHg", case_name: str = "", when: datetime | None = None,
                   paper: str | None = None, record: tuple = ()) -> tuple[bytes, PageInfo]:
    """The printed plan as PDF bytes (as many pages as it needs), and what was printed."""
    from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QMarginsF
    from PySide6.QtGui import QPageLayout, QPageSize, QPainter, QPdfWriter

    ensure_app()
    size = page_size(paper)
    data = QByteArray()
    buf = QBuffer(data)
    buf.open(QIODevice.OpenModeFlag.WriteOnly)
    writer = QPdfWriter(buf)
    writer.setResolution(DPI)
    writer.setPageSize(size)
    writer.setPageMargins(QMarginsF(0, 0, 0, 0), QPageLayout.Unit.Point)
    who = visible(plan.request.patient.name or plan.resolved.species_label, 200)
    writer.setTitle(f"Ventilation starting plan — {who}")
    writer.setCreator(f"ventset {__version__}")
    points = size.size(QPageSize.Unit.Point)
    painter = QPainter(writer)
    try:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing)
        info = render(painter, points.width(), points.height(), writer.resolution(),
                      _printout(plan, gas_unit, case_name, when, record), writer.newPage)
    finally:
        painter.end()
    buf.close()
    return bytes(data.data()), info


def write_plan_pdf(plan: Plan, path: str | os.PathLike, *, gas_unit: str = "mmHg", case_name: str = "",
                   when: datetime | None = None, paper: str | None = None, record: tuple = ()) -> PageInfo:
    """Write the printed plan to ``path`` atomically (raises ventset.storage.WriteError)."""
    from ventset import storage

    data, info = plan_pdf_bytes(plan, gas_unit=gas_unit, case_name=case_name, when=when, paper=paper, record=record)
    storage.atomic_write_bytes(path, data)
    return info


def plan_page_image(plan: Plan, width_px: int = 1240, *, gas_unit: str = "mmHg", case_name: str = "",
                    when: datetime | None = None, paper: str | None = None, record: tuple = ()):
    """Page 1 as a QImage (pictures for the guide; the same drawing as the PDF)."""
    from PySide6.QtCore import Qt
    from PySide6.QtGui import QImage, QPageSize, QPainter

    ensure_app()
    points = page_size(paper).size(QPageSize.Unit.Point)
    dpi = width_px / points.width() * 72.0
    img = QImage(width_px, round(points.height() * dpi / 72.0), QImage.Format.Format_RGB32)
    img.fill(Qt.GlobalColor.white)
    dots_per_m = round(dpi / 0.0254)
    img.setDotsPerMeterX(dots_per_m)
    img.setDotsPerMeterY(dots_per_m)
    painter = QPainter(img)
    try:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing)
        painter.setRenderHint(QPainter.RenderHint.TextAntialiasing)
        render(painter, points.width(), points.height(), dpi, _printout(plan, gas_unit, case_name, when, record))
    finally:
        painter.end()
    return img


def print_plan(plan: Plan, printer, *, gas_unit: str = "mmHg", case_name: str = "", record: tuple = (),
               when: datetime | None = None) -> PageInfo:
    """Draw every page on a QPrinter (a real printer, or the one Qt's print preview paints on), on whatever
    paper and orientation it has been given."""
    from PySide6.QtGui import QPainter

    printer.setFullPage(True)
    rect = printer.pageLayout().fullRectPoints()
    painter = QPainter(printer)
    try:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing)
        return render(painter, rect.width(), rect.height(), printer.resolution(),
                      _printout(plan, gas_unit, case_name, when, record), printer.newPage)
    finally:
        painter.end()
