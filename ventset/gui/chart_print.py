"""The printed chart of starting settings by body mass: landscape pages to pin beside the machine.

Each page: title, species, mode, the breathing system and apparatus, the standing notice, the table (marked
rows shaded and numbered), the marks, and a footer with the date, the versions and the page number. The
last page lists the assumptions that hold for every row (any that do not fit are counted, never dropped
silently). Drawn with the printed plan's sheet (ventset.gui.printing); written atomically.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

from ventset import __version__
from ventset.chart import COLUMNS, Chart, cell, circuit_changes, dial_lines, header_lines, mark_rows_text
from ventset.gui.printing import DPI, ensure_app, page_size
from ventset.gui.printpages import _species_version
from ventset.gui.sheet import Sheet
from ventset.present.quantities import Units
from ventset.present.rows import assumption_value

ROW_H = 13.0
MARGIN = 30.0


@dataclass(frozen=True)
class ChartPages:
    """What the PDF holds (for tests): pages, rows drawn, assumptions shown and left for the JSON."""

    pages: int
    rows: int
    assumptions_shown: int
    assumptions_omitted: int


def _rows_per_page(page_h: float, first: bool) -> int:
    head = 130.0 if first else 108.0
    return max(5, int((page_h - head - 110.0) // ROW_H))


def _page_head(sh: Sheet, chart: Chart, w: float, h: float, page: int, pages: int) -> float:
    """Title, breathing system and the standing notice; returns the y where the table starts."""
    left, width = MARGIN, w - 2 * MARGIN
    title, notice, system = header_lines(chart)
    y = MARGIN
    y += sh.text(left, y, width, f"Starting ventilation settings by body mass — {chart.species_label}",
                 sh.font(14, bold=True)) + 2
    y += sh.text(left, y, width, system + f" · {chart.sweep.mode} mode", sh.font(8.5)) + 4
    body = notice.removeprefix("NOTICE: ")
    nh = sh.height(body, sh.font(8.5, bold=True), width - 12) + 8
    sh.box(left, y, width, nh, fill="#eeeeee", border="#000000", width_pt=0.8)
    sh.text(left + 6, y + 4, width - 12, body, sh.font(8.5, bold=True))
    y += nh + 6
    foot = (f"Made {chart.made} · ventset {__version__} · species data {_species_version()} · every row is a "
            f"starting point from the same equations as a single plan · page {page} of {pages}")
    sh.text(left, h - MARGIN + 8, width, foot, sh.font(7), colour="#444444", wrap=False)
    return y


def _table(sh: Sheet, chart: Chart, rows: range, y: float, w: float, units: Units, refs: dict[int, int]) -> float:
    """The column heads and ``rows``; a marked row is shaded and carries its mark's number."""
    from PySide6.QtCore import Qt

    left, width = MARGIN, w - 2 * MARGIN
    heads = [h for _, h, _ in COLUMNS] + ["see"]
    col_w = width / len(heads)
    right = Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignTop
    for k, head in enumerate(heads):
        sh.text(left + k * col_w, y, col_w - 3, head, sh.font(8, bold=True), align=right, wrap=False)
    y += ROW_H + 1
    sh.line(left, y - 2, left + width, y - 2, 0.8)
    for i in rows:
        if i in refs:
            sh.box(left, y - 1, width, ROW_H, fill="#dddddd", border="")
        cells = [cell(chart, i, key, kind, units) for key, _, kind in COLUMNS] + [f"[{refs[i]}]" if i in refs else ""]
        for k, text in enumerate(cells):
            sh.text(left + k * col_w, y, col_w - 3, sh.elide(text, sh.font(8.5), col_w - 3), sh.font(8.5,
                    bold=k == 0), align=right, wrap=False)
        y += ROW_H
    sh.line(left, y, left + width, y, 0.5)
    return y + 4


def _mark_lines(chart: Chart, rows: range, units: Units) -> list[tuple[str, bool]]:
    """The marks of the rows on one page, each distinct set once: (text, bold)."""
    out = []
    for k, (marks, where) in enumerate(chart.mark_groups(), start=1):
        here = [i for i in where if i in rows]
        if here:
            out.append((f"[{k}] {mark_rows_text(chart, here, units)}: " + "; ".join(marks), marks[0][:2].isupper()))
    if chart.dials:
        out.append((f"On the machine: {chart.machine_label}", True))
        out += [(line.strip(), False) for line in dial_lines(chart, rows, units)]
    return out


def _marks(sh: Sheet, lines: list[tuple[str, bool]], y: float, w: float) -> float:
    for text, bold in lines:
        y += sh.text(MARGIN, y, w - 2 * MARGIN, text, sh.font(8, bold=bold)) + 1
    return y


def _split_pages(chart: Chart, h: float, units: Units) -> list[range]:
    """Rows per page, leaving room under the table for that page's marks (about two lines each)."""
    n, pages, start = len(chart.sweep), [], 0
    while start < n:
        rows = _rows_per_page(h, not pages)
        while rows > 5 and rows + 2 * len(_mark_lines(chart, range(start, min(n, start + rows)), units)) > \
                _rows_per_page(h, not pages) + 4:
            rows -= 1
        pages.append(range(start, min(n, start + rows)))
        start += rows
    return pages


def _assumptions(sh: Sheet, chart: Chart, y: float, w: float, h: float, units: Units) -> tuple[int, int]:
    """The assumptions that hold for every row, in two columns, as many as fit; (shown, omitted)."""
    width, bottom = w - 2 * MARGIN, h - MARGIN - 6
    y += sh.text(MARGIN, y + 4, width, "Assumptions for every row (a single plan at any mass lists the others "
                 "with their values)", sh.font(8, bold=True)) + 6
    col_w = (width - 12) / 2
    x, top, shown = MARGIN, y, 0
    for a in chart.common:
        line = f"{a.name}: {assumption_value(a, units)} — {a.source}"
        need = sh.height(line, sh.font(6.8), col_w)
        if y + need > bottom:
            if x > MARGIN:
                break
            x, y = MARGIN + col_w + 12, top
        sh.text(x, y, col_w, line, sh.font(6.8))
        y += need + 1
        shown += 1
    omitted = len(chart.common) - shown
    if chart.varying and shown == len(chart.common):
        sh.text(MARGIN, max(y, top) + 8 if x == MARGIN else bottom - 24, width, "Change with mass: "
                + "; ".join(chart.varying), sh.font(6.8))
    if omitted:
        sh.text(MARGIN, bottom - 2, width, f"{omitted} more assumptions did not fit: see 'ventset chart --json'.",
                sh.font(7, bold=True))
    return shown, omitted


def chart_pdf_bytes(chart: Chart, *, gas_unit: str = "mmHg", paper: str = "A4") -> tuple[bytes, ChartPages]:
    """The chart as PDF bytes (landscape), and what it holds."""
    from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QMarginsF
    from PySide6.QtGui import QPageLayout, QPageSize, QPainter, QPdfWriter

    ensure_app()
    units = Units(gas=gas_unit)
    data = QByteArray()
    buf = QBuffer(data)
    buf.open(QIODevice.OpenModeFlag.WriteOnly)
    writer = QPdfWriter(buf)
    writer.setResolution(DPI)
    writer.setPageLayout(QPageLayout(page_size(paper), QPageLayout.Orientation.Landscape, QMarginsF(0, 0, 0, 0),
                                     QPageLayout.Unit.Point))
    writer.setTitle(f"Starting ventilation settings by body mass — {chart.species_label}")
    writer.setCreator(f"ventset {__version__}")
    size = page_size(paper).size(QPageSize.Unit.Point)
    w, h = size.height(), size.width()  # landscape
    n = len(chart.sweep)
    split = _split_pages(chart, h, units)
    pages = len(split) + 1  # the assumptions get their own last page
    refs = chart.refs()
    painter = QPainter(writer)
    try:
        sh = Sheet(painter, writer.resolution())
        for p, rows in enumerate(split):
            if p:
                writer.newPage()
            y = _table(sh, chart, rows, _page_head(sh, chart, w, h, p + 1, pages), w, units, refs)
            changes = circuit_changes(chart, units)
            if changes:
                y += sh.text(MARGIN, y, w - 2 * MARGIN, changes, sh.font(8)) + 2
            _marks(sh, _mark_lines(chart, rows, units), y, w)
        writer.newPage()
        shown, omitted = _assumptions(sh, chart, _page_head(sh, chart, w, h, pages, pages), w, h, units)
    finally:
        painter.end()
    buf.close()
    return bytes(data.data()), ChartPages(pages, n, shown, omitted)


def write_chart_pdf(chart: Chart, path: str | os.PathLike, *, gas_unit: str = "mmHg", paper: str = "A4") \
        -> ChartPages:
    """Write the chart to ``path`` atomically (raises ventset.storage.WriteError)."""
    from ventset import storage

    data, info = chart_pdf_bytes(chart, gas_unit=gas_unit, paper=paper)
    storage.atomic_write_bytes(path, data)
    return info
