"""The printed gill irrigation plan: one page (a second when the cautions and sources need it), as PDF or on a printer.

Layout (points, A4 or US Letter): a header on every page (title, patient, group, mass, water, date); the numbers to
set in large type (flow, its range, the supply's O2, the fish's O2 need); the plan's lines (water, need, flow,
practice, O2 fall, water volume, diffusion check); every caution; every assumption with its source (small type, two
columns); a signature line; and on every page the standing notice in a box and a footer with the version, the case
and "page n of m". Nothing is left out: what does not fit goes on the next page, never silently dropped.

The words and numbers come from the core (``ventset.aquatic.report.printout_lines`` and ``printout_tiles``); this
module only places them, with the drawing surface and page helpers of ``ventset.gui.printing``. No user text is
markup: every string is drawn as plain text.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime

from ventset import __version__
from ventset.aquatic.irrigation import IrrigationPlan
from ventset.aquatic.report import mass_text, printout_lines, printout_tiles
from ventset.errors import visible
from ventset.gui.printing import DPI, ensure_app, page_size
from ventset.gui.sheet import Sheet
from ventset.units import fmt

MARGIN, TOP, BOTTOM = 34.0, 54.0, 30.0   # points; the top margin clears a board clip, as on the ventilation page
HEADER = 21.0 + 15.0 + 6.0               # title row, patient row, rule and gap
CONTINUED = 11.0                         # room for "Continued on page n" at the foot of the flowing part
GREY = "#5a5a5a"


@dataclass(frozen=True)
class IrrigationPageInfo:
    """What was printed: pages, and how many cautions and assumptions (all of them, always)."""

    pages: int
    cautions: int
    assumptions: int


@dataclass(frozen=True)
class _Block:
    """Something drawn in the flowing part of a page: its height (points) and how to draw it at ``y``."""

    height: float
    draw: Callable[[float], None]
    keep_with_next: bool = False


def _tiles_block(sh: Sheet, plan: IrrigationPlan, left: float, width: float) -> _Block:
    tiles = printout_tiles(plan)
    gap, tile_h = 6.0, 58.0
    tile_w = (width - gap * (len(tiles) - 1)) / len(tiles)

    def draw(y: float) -> None:
        for i, (label, value, unit, detail) in enumerate(tiles):
            x = left + i * (tile_w + gap)
            sh.box(x, y, tile_w, tile_h, fill="#f0f0f0", border="#000000", width_pt=1.6 if i == 0 else 0.8)
            sh.text(x + 5, y + 4, tile_w - 10, label, sh.font(8, bold=True), colour="#333333", wrap=False)
            size = 22.0  # the value and its unit shrink together until they fit the tile
            while size > 11 and sh.width(value, sh.font(size, bold=True)) + 3 + \
                    sh.width(unit, sh.font(size * 0.45, bold=True)) > tile_w - 10:
                size -= 1
            big, small = sh.font(size, bold=True), sh.font(size * 0.45, bold=True)
            sh.text(x + 5, y + 13 + (22 - size) * 0.6, tile_w - 10, value, big, wrap=False)
            sh.text(x + 8 + sh.width(value, big), y + 13 + size * 0.5, tile_w - 10, unit, small, wrap=False)
            sh.text(x + 5, y + 39, tile_w - 10, detail, sh.font(6.5), colour="#333333")

    return _Block(tile_h + 7, draw)


def _text_block(sh: Sheet, x: float, width: float, text: str, font, *, gap: float = 1.5, colour: str = "#000000",
                keep: bool = False) -> _Block:
    h = sh.height(text, font, width)
    return _Block(h + gap, lambda y: sh.text(x, y, width, text, font, colour=colour), keep)


def _line_block(sh: Sheet, left: float, width: float, text: str) -> _Block:
    """A plan line 'Label: value' with the label in bold in its own column."""
    label, _, value = text.partition(": ")
    label_w = 118.0
    small, bold = sh.font(8.2), sh.font(8.2, bold=True)
    h = max(sh.height(value, small, width - label_w), sh.height(label, bold, label_w - 6))

    def draw(y: float) -> None:
        sh.text(left, y, label_w - 6, label, bold)
        sh.text(left + label_w, y, width - label_w, value, small)

    return _Block(h + 1.5, draw)


def _heading_block(sh: Sheet, left: float, right: float, text: str) -> _Block:
    def draw(y: float) -> None:
        sh.line(left, y + 2, right, y + 2, 0.5, GREY)
        sh.text(left, y + 5, right - left, text, sh.font(8.5, bold=True))

    return _Block(5 + sh.height(text, sh.font(8.5, bold=True), right - left) + 2, draw, keep_with_next=True)


def _caution_block(sh: Sheet, left: float, width: float, severity: str, text: str) -> _Block:
    font = sh.font(7.6, bold=severity == "danger")
    body = f"{severity.upper()}: {text}"
    h = sh.height(body, font, width - 14)

    def draw(y: float) -> None:
        sh.mark(severity, left + 1, y + 1.5, 7.0)
        sh.text(left + 14, y, width - 14, body, font)

    return _Block(h + 1.5, draw)


def _assumption_rows(sh: Sheet, left: float, width: float, texts: list[str]) -> list[_Block]:
    """Assumptions two to a row (left, right), each row kept whole."""
    gap = 12.0
    col_w = (width - gap) / 2
    font = sh.font(6.3)
    rows = []
    for i in range(0, len(texts), 2):
        pair = texts[i:i + 2]
        h = max(sh.height(t, font, col_w) for t in pair)

        def draw(y: float, pair: list[str] = pair) -> None:
            for col, t in enumerate(pair):
                sh.text(left + col * (col_w + gap), y, col_w, t, font)

        rows.append(_Block(h + 1.2, draw))
    return rows


def _signature_block(sh: Sheet, left: float, width: float) -> _Block:
    third = width / 3

    def draw(y: float) -> None:
        for i, label in enumerate(("Veterinarian (name)", "Signature", "Date and time")):
            x = left + i * third
            sh.line(x, y + 22, x + third - 12, y + 22, 0.7)
            sh.text(x, y + 24, third - 12, label, sh.font(7.5), colour=GREY)

    return _Block(38.0, draw)


def _blocks(sh: Sheet, plan: IrrigationPlan, left: float, width: float) -> tuple[list[_Block], int, int]:
    """The flowing content in order; also the counts of cautions and assumptions placed."""
    out = [_tiles_block(sh, plan, left, width)]
    smalls: list[str] = []
    n_cautions = 0
    for style, text in printout_lines(plan):
        if style in ("title", "notice"):
            continue  # the header and the boxed notice on every page carry these
        if style != "small" and smalls:
            out += _assumption_rows(sh, left, width, smalls)
            smalls = []
        if style == "line":
            out.append(_line_block(sh, left, width, text))
        elif style == "heading":
            count = len(plan.cautions) if text == "Cautions" else len(plan.assumptions)
            out.append(_heading_block(sh, left, left + width, f"{text.upper()} ({count})"))
        elif style.startswith("caution:"):
            out.append(_caution_block(sh, left, width, style.split(":", 1)[1], text))
            n_cautions += 1
        elif style == "small":
            smalls.append(text)
    n_assumptions = len(smalls)
    out += _assumption_rows(sh, left, width, smalls)
    out.append(_signature_block(sh, left, width))
    return out, n_cautions, n_assumptions


def _paginate(blocks: list[_Block], room: float) -> list[list[_Block]]:
    """Blocks into pages of ``room`` points; a heading stays with what follows it; a block taller than a page
    gets a page of its own (it is drawn whole, never dropped)."""
    pages: list[list[_Block]] = [[]]
    used = 0.0
    for i, b in enumerate(blocks):
        need = b.height + (blocks[i + 1].height if b.keep_with_next and i + 1 < len(blocks) else 0.0)
        if pages[-1] and used + need > room:
            pages.append([])
            used = 0.0
        pages[-1].append(b)
        used += b.height
    return pages


def _header(sh: Sheet, plan: IrrigationPlan, left: float, width: float, stamp: str, page: int) -> float:
    """Draw the header; returns where the flowing content starts."""
    from PySide6.QtCore import Qt

    right_top = Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignTop
    y = TOP
    title = "Gill irrigation plan" + (" (continued)" if page > 1 else "")
    sh.text(left, y, width * 0.55, title, sh.font(15, bold=True), wrap=False)
    patient = sh.elide(visible(plan.request.name, 600) or "Patient: ____________________", sh.font(15, bold=True),
                       width * 0.45)
    sh.text(left + width * 0.55, y - 1, width * 0.45, patient, sh.font(15, bold=True), align=right_top, wrap=False)
    y += 21
    sh.text(left, y, width * 0.3, f"Printed {stamp}", sh.font(8), colour=GREY, wrap=False)
    w = plan.water
    animal = sh.elide(f"{mass_text(plan.mass_kg)} · water {fmt(w.temp_c)} °C, salinity {fmt(w.salinity)} · "
                      f"{plan.group.label}", sh.font(10, bold=True), width * 0.7)  # a long group is cut, not the mass
    sh.text(left + width * 0.3, y - 1, width * 0.7, animal, sh.font(10, bold=True), align=right_top, wrap=False)
    sh.line(left, y + 15, left + width, y + 15, 1.2)
    return TOP + HEADER


def _footer_height(sh: Sheet, plan: IrrigationPlan, width: float) -> float:
    return sh.height(plan.standing_notice, sh.font(8.5, bold=True), width - 16) + 12 + 6 + 10


def _footer(sh: Sheet, plan: IrrigationPlan, left: float, width: float, bottom: float, line: str) -> None:
    """The standing notice in a box, then the footer line, ending at ``bottom``."""
    from PySide6.QtCore import Qt

    notice_font = sh.font(8.5, bold=True)
    notice_h = sh.height(plan.standing_notice, notice_font, width - 16) + 12
    y = bottom - _footer_height(sh, plan, width)
    sh.box(left, y, width, notice_h, fill=None, border="#000000", width_pt=1.2)
    sh.text(left + 8, y + 6, width - 16, plan.standing_notice, notice_font)
    sh.text(left, y + notice_h + 6, width, line, sh.font(6.5), colour=GREY, align=Qt.AlignmentFlag.AlignHCenter
            | Qt.AlignmentFlag.AlignTop, wrap=False)


def render_irrigation(painter, page_w_pt: float, page_h_pt: float, dpi: float, plan: IrrigationPlan, *,
                      new_page: Callable[[], object], case_name: str = "",
                      when: datetime | None = None) -> IrrigationPageInfo:
    """Draw the plan with ``painter`` on pages of the given size (points) at ``dpi``; ``new_page`` starts the next
    page (QPdfWriter.newPage or QPrinter.newPage)."""
    sh = Sheet(painter, dpi)
    stamp = (when or datetime.now().astimezone()).strftime("%Y-%m-%d %H:%M")
    left, width = MARGIN, page_w_pt - 2 * MARGIN
    bottom = page_h_pt - BOTTOM
    start = TOP + HEADER
    blocks, n_cautions, n_assumptions = _blocks(sh, plan, left, width)
    end = bottom - _footer_height(sh, plan, width) - 8
    pages = _paginate(blocks, end - start)
    if len(pages) > 1:  # leave room for the "continued" line on every page but the last
        end -= CONTINUED
        pages = _paginate(blocks, end - start)
    for number, page in enumerate(pages, 1):
        if number > 1:
            new_page()
        y = _header(sh, plan, left, width, stamp, number)
        for block in page:
            block.draw(y)
            y += block.height
        if number < len(pages):
            sh.text(left, end + 2, width, f"Continued on page {number + 1}: more of the plan, the sources and the "
                    "signature.", sh.font(7.5, bold=True, italic=True))
        _footer(sh, plan, left, width, bottom, f"ventset {__version__} · gill irrigation · printed {stamp}"
                + (f" · case {case_name}" if case_name else "") + f" · page {number} of {len(pages)}")
    return IrrigationPageInfo(len(pages), n_cautions, n_assumptions)


def irrigation_pdf_bytes(plan: IrrigationPlan, *, case_name: str = "", when: datetime | None = None,
                         paper: str = "A4") -> tuple[bytes, IrrigationPageInfo]:
    """The printed plan as PDF bytes, and what was printed."""
    from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QMarginsF
    from PySide6.QtGui import QPageLayout, QPageSize, QPainter, QPdfWriter

    ensure_app()
    data = QByteArray()
    buf = QBuffer(data)
    buf.open(QIODevice.OpenModeFlag.WriteOnly)
    writer = QPdfWriter(buf)
    writer.setResolution(DPI)
    writer.setPageSize(page_size(paper))
    writer.setPageMargins(QMarginsF(0, 0, 0, 0), QPageLayout.Unit.Point)
    writer.setTitle(f"Gill irrigation plan — {visible(plan.request.name or plan.group.label, 200)}")
    writer.setCreator(f"ventset {__version__}")
    size = page_size(paper).size(QPageSize.Unit.Point)
    painter = QPainter(writer)
    try:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing)
        info = render_irrigation(painter, size.width(), size.height(), writer.resolution(), plan,
                                 new_page=writer.newPage, case_name=case_name, when=when)
    finally:
        painter.end()
    buf.close()
    return bytes(data.data()), info


def write_irrigation_pdf(plan: IrrigationPlan, path: str | os.PathLike, *, case_name: str = "",
                         when: datetime | None = None, paper: str = "A4") -> IrrigationPageInfo:
    """Write the printed plan to ``path`` atomically (raises ventset.storage.WriteError)."""
    from ventset import storage

    data, info = irrigation_pdf_bytes(plan, case_name=case_name, when=when, paper=paper)
    storage.atomic_write_bytes(path, data)
    return info


def print_irrigation(plan: IrrigationPlan, printer, *, case_name: str = "") -> IrrigationPageInfo:
    """Draw the plan on a QPrinter chosen in the print dialog."""
    from PySide6.QtGui import QPainter

    rect = printer.pageLayout().fullRectPoints()
    printer.setFullPage(True)
    painter = QPainter(printer)
    try:
        return render_irrigation(painter, rect.width(), rect.height(), printer.resolution(), plan,
                                 new_page=printer.newPage, case_name=case_name)
    finally:
        painter.end()
