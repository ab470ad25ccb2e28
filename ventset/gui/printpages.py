"""The printed plan's pages: what goes on them and how it flows from one page to the next.

Page 1: header with patient and date; circuit; the settings in large type (or, when no gas reaches the
alveoli, the danger in their place and no settings at all); what to expect on the monitor. Then, flowing
onto as many pages as they need (nothing is ever left out): the cautions, the derived values, every
assumption with its source (two columns, most important first) and the anaesthetic record when there is
one. Every page carries the standing notice and a footer with versions and "page n of N"; page 1 also the
signature line. All text comes from the presentation layer (ventset.present.rows) in the reader's units.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import datetime

from PySide6.QtCore import Qt

from ventset import __version__
from ventset.errors import visible
from ventset.gui.sheet import Sheet
from ventset.model import Plan
from ventset.present.dials import machine_outcome_rows, machine_rows, machine_title
from ventset.present.quantities import MMHG, Units, show
from ventset.present.rows import (
    assumption_value,
    derived_sections,
    expectation_line,
    ordered_assumptions,
    setting_rows,
)
from ventset.titrate.output import RECORD_COLUMNS, record_rows

GREY = "#5a5a5a"
MARGIN_SIDE, MARGIN_TOP, MARGIN_BOTTOM = 34.0, 54.0, 30.0  # the top margin clears a board clip
FIRST_HEADER_H, NEXT_HEADER_H = 41.0, 24.0
SIGN_H, FOOTER_H, COL_GAP = 34.0, 10.0, 12.0
# Share of the page width of each column of the anaesthetic record (RECORD_COLUMNS).
RECORD_WIDTHS = (0.11, 0.14, 0.08, 0.08, 0.11, 0.05, 0.18, 0.13, 0.12)


@dataclass(frozen=True)
class Printout:
    """Everything printed: the plan, the reader's units, the case file's name and the anaesthetic record."""

    plan: Plan
    units: Units = MMHG
    case_name: str = ""
    when: datetime | None = None
    record: tuple = ()


@dataclass(frozen=True)
class PageInfo:
    """What was printed (for tests and the status bar). Nothing is left out: the omitted counts stay 0."""

    pages: int
    assumptions_shown: int
    cautions_shown: int
    record_rows: int
    bottom_pt: float
    assumptions_omitted: int = 0
    cautions_omitted: int = 0


@dataclass
class Block:
    """A piece of the flow: its height in points and how to draw it at (x, y); ``column`` for a cell of a
    two-column run; ``keep_with_next`` for a heading."""

    height: float
    draw: Callable[[float, float], None]
    keep_with_next: bool = False
    column: bool = False
    kind: str = ""
    title: str = ""  # a section heading: repeated, marked "continued", when its section runs onto a new page


@dataclass
class Page:
    placed: list[tuple[Block, float, float]] = field(default_factory=list)


def no_gas_exchange(plan: Plan) -> bool:
    """True when the plan's breaths never reach the alveoli (expected PaCO2 is not finite)."""
    return not math.isfinite(plan.ventilation.expected_paco2_mmhg)


# ---------------------------------------------------------------------------------------------- the blocks
def _text_block(sh: Sheet, text: str, font, width: float, *, kind: str = "", gap: float = 0.0,
                keep: bool = False, indent: float = 0.0, colour: str = "#000000") -> Block:
    h = sh.height(text, font, width - indent) + gap
    return Block(h, lambda x, y: sh.text(x + indent, y, width - indent, text, font, colour=colour), keep, kind=kind)


def _heading(sh: Sheet, title: str, width: float) -> Block:
    font = sh.font(8.5, bold=True)

    def draw(x: float, y: float) -> None:
        sh.line(x, y + 2, x + width, y + 2, 0.5, GREY)
        sh.text(x, y + 5, width, title, font)

    return Block(sh.height(title, font, width) + 7, draw, keep_with_next=True, title=title)


def _circuit_blocks(sh: Sheet, pr: Printout, width: float) -> list[Block]:
    plan, u = pr.plan, pr.units
    r, c, d = plan.resolved, plan.request.circuit, plan.dead_space
    parts = "; ".join(f"{visible(p.name, 600)} {show(p.volume_ml, 'volume', u)}" for p in d.parts) or "none entered"
    if len(d.parts) > 1:
        parts += f" = {show(d.apparatus_ml, 'volume', u)}"
    if c.tube_id_mm is not None and c.tube_length_cm is not None:
        tube = f"{show(c.tube_id_mm, 'mm')} ID, {show(c.tube_length_cm, 'cm')} beyond the incisors"
    else:
        tube = "not entered (not counted as dead space)"
    first = (f"Circuit: {plan.oxygen.circuit_label} · {r.mode} mode · compressible "
             f"{show(plan.pressures.compressible_ml_cmh2o, 'compliance')}")
    return [_text_block(sh, first, sh.font(9, bold=True), width),
            _text_block(sh, f"Apparatus (Y-piece to incisors): {parts} · Tube: {tube}", sh.font(8.5), width, gap=6)]


def _tiles_block(sh: Sheet, pr: Printout, width: float) -> Block:
    tiles = setting_rows(pr.plan, pr.units)
    cols, gap, tile_h = 4, 6.0, 62.0
    tile_w = (width - gap * (cols - 1)) / cols

    def draw(x0: float, y0: float) -> None:
        for i, t in enumerate(tiles):
            tx, ty = x0 + (i % cols) * (tile_w + gap), y0 + (i // cols) * (tile_h + gap)
            sh.box(tx, ty, tile_w, tile_h, fill="#f0f0f0", border="#000000", width_pt=0.8)
            sh.text(tx + 5, ty + 4, tile_w - 10, t.name, sh.font(8, bold=True), colour="#333333", wrap=False)
            big = sh.font(24, bold=True)
            vw = sh.width(t.value, big)
            sh.text(tx + 5, ty + 13, tile_w - 10, t.value, big, wrap=False)
            if t.unit:
                sh.text(tx + 5 + vw + 3, ty + 25, tile_w - vw - 13, t.unit, sh.font(10.5, bold=True), wrap=False)
            small = sh.font(6.8)
            if sh.height(t.detail, small, tile_w - 10) > tile_h - 44:
                small = sh.font(5.8)
            sh.text(tx + 5, ty + 42, tile_w - 10, t.detail, small, colour="#333333")

    rows = math.ceil(len(tiles) / cols)
    return Block(rows * tile_h + (rows - 1) * gap + 8, draw)


def _danger_block(sh: Sheet, pr: Printout, width: float) -> Block:
    """In place of the settings when nothing reaches the alveoli: the danger, large, and what to do."""
    plan, u = pr.plan, pr.units
    d, v = plan.dead_space, plan.ventilation
    title = "NO ALVEOLAR VENTILATION: NOT A PLAN TO SET"
    body = (f"At these inputs every breath stays in the circuit, the tube and the airways: dead space "
            f"{show(d.total_ml, 'volume', u)} (apparatus {show(d.apparatus_ml, 'volume', u)}) against a tidal "
            f"volume at the patient of {show(v.tidal_volume_ml, 'volume', u)}. No settings are printed. Remove "
            "apparatus dead space (smaller connectors, no filter or heat-moisture exchanger on a small patient, "
            "the tube cut to length) or let the tidal volume rise, then plan again.")
    big, text_font = sh.font(17, bold=True), sh.font(10.5)
    inner = width - 60
    h = sh.height(title, big, inner) + 6 + sh.height(body, text_font, inner) + 24

    def draw(x: float, y: float) -> None:
        sh.box(x, y, width, h - 8, fill="#e8e8e8", border="#000000", width_pt=2.4)
        sh.mark("danger", x + 12, y + 12, 30)
        ty = y + 10 + sh.text(x + 50, y + 10, inner, title, big) + 6
        sh.text(x + 50, ty, inner, body, text_font)

    return Block(h, draw)


def _caution_blocks(sh: Sheet, pr: Printout, width: float) -> list[Block]:
    cautions = pr.plan.cautions
    out = [_heading(sh, f"CAUTIONS ({len(cautions)})", width)]
    if not cautions:
        out.append(_text_block(sh, "None raised.", sh.font(8), width, indent=14, gap=2))
    for c in cautions:
        body = f"{c.severity.upper()}: {c.text(pr.units)}  ({c.code})"
        font = sh.font(8, bold=c.severity == "danger")
        h = sh.height(body, font, width - 14) + 1.5

        def draw(x: float, y: float, c=c, body=body, font=font) -> None:
            sh.mark(c.severity, x + 1, y + 1.5, font.pointSizeF() * 0.92)
            sh.text(x + 14, y, width - 14, body, font)

        out.append(Block(h, draw, kind="caution"))
    return out


def _derived_blocks(sh: Sheet, pr: Printout, width: float) -> list[Block]:
    out = [_heading(sh, "DERIVED VALUES", width)]
    label_w, small, bold = 84.0, sh.font(6.8), sh.font(6.8, bold=True)
    for title, rows in derived_sections(pr.plan, pr.units):
        text = "; ".join(f"{r.name.strip()} {r.text}" for r in rows if r.value != "—")
        h = max(sh.height(text, small, width - label_w), sh.height(title, bold, label_w - 4)) + 1.5

        def draw(x: float, y: float, title=title, text=text) -> None:
            sh.text(x, y, label_w - 4, title, bold)
            sh.text(x + label_w, y, width - label_w, text, small)

        out.append(Block(h, draw))
    return out


def _machine_blocks(sh: Sheet, pr: Printout, width: float) -> list[Block]:
    """The dial settings under the machine's name, then what the dialled breath gives (ventset.present.dials)."""
    title = machine_title(pr.plan)
    if not title:
        return []
    out = [_heading(sh, title.upper() + " — TURN THESE", width)]
    label_w, font, bold = 150.0, sh.font(8), sh.font(8, bold=True)
    rows = [(r, True) for r in machine_rows(pr.plan)] + [(r, False) for r in machine_outcome_rows(pr.plan, pr.units)]
    for row, dial in rows:  # the controls to turn in bold, then what they give
        text = f"{row.value} {row.unit}".strip() + f"   {row.detail}"
        h = max(sh.height(text, font, width - label_w), sh.height(row.name, bold, label_w)) + 1.5

        def draw(x: float, y: float, row=row, text=text, dial=dial) -> None:
            sh.text(x, y, label_w - 4, row.name, bold)
            sh.text(x + label_w, y, width - label_w, text, bold if dial else font)

        out.append(Block(h, draw))
    return out


def _assumption_blocks(sh: Sheet, pr: Printout, width: float) -> list[Block]:
    items = ordered_assumptions(pr.plan)
    out = [_heading(sh, f"ASSUMPTIONS AND SOURCES ({len(items)}, most important first)", width)]
    col_w, font = (width - COL_GAP) / 2, sh.font(6.5)
    for a in items:
        text = f"{a.name}: {assumption_value(a, pr.units)} — {a.source}"
        block = _text_block(sh, text, font, col_w, kind="assumption", gap=1.2)
        block.column = True
        out.append(block)
    return out


def _record_blocks(sh: Sheet, pr: Printout, width: float) -> list[Block]:
    if not pr.record:
        return []
    rows = record_rows(pr.record, pr.units)
    widths = [f * width for f in RECORD_WIDTHS]
    out = [_heading(sh, f"ANAESTHETIC RECORD ({len(rows)} measurement{'s' if len(rows) != 1 else ''})", width)]

    def row_block(cells: tuple[str, ...], font, kind: str, rule: bool) -> Block:
        h = max(sh.height(t, font, w - 3) for t, w in zip(cells, widths, strict=True)) + 3

        def draw(x: float, y: float) -> None:
            cx = x
            for t, w in zip(cells, widths, strict=True):
                sh.text(cx, y + 1, w - 3, t, font)
                cx += w
            if rule:
                sh.line(x, y + h - 0.5, x + width, y + h - 0.5, 0.3, "#9a9a9a")

        return Block(h, draw, keep_with_next=not kind, kind=kind)

    out.append(row_block(RECORD_COLUMNS, sh.font(7, bold=True), "", True))
    out += [row_block(r, sh.font(7), "record", True) for r in rows]
    return out


def build_blocks(sh: Sheet, pr: Printout, width: float) -> list[Block]:
    """The whole flow in order; the first blocks (circuit, settings, expectation) open page 1."""
    plan = pr.plan
    blocks = _circuit_blocks(sh, pr, width)
    if no_gas_exchange(plan):
        blocks.append(_danger_block(sh, pr, width))
    else:
        blocks.append(_tiles_block(sh, pr, width))
        blocks.append(_text_block(sh, expectation_line(plan, pr.units), sh.font(10.5, bold=True), width, gap=4))
        blocks += _machine_blocks(sh, pr, width)
    return (blocks + _caution_blocks(sh, pr, width) + _derived_blocks(sh, pr, width)
            + _assumption_blocks(sh, pr, width) + _record_blocks(sh, pr, width))


# ---------------------------------------------------------------------------------------------- the flow
def _fit_two_columns(heights: list[float], room: float) -> int:
    """How many items (in order) fit in two columns ``room`` points high."""
    n, used, col = 0, 0.0, 0
    for h in heights:
        if used + h > room:
            if col == 1:
                break
            col, used = 1, 0.0
            if h > room:
                break
        used += h
        n += 1
    return n


def _split(heights: list[float], room: float, balance: bool) -> int:
    """Where the second column starts: as even as possible for the last part of a run, else col 1 fills up."""
    best, best_h = len(heights), math.inf
    for k in range(len(heights) + 1):
        a, b = sum(heights[:k]), sum(heights[k:])
        if a <= room + 1e-6 and b <= room + 1e-6:
            if not balance:
                best = k  # the largest k that fits: column 1 as full as it goes
            elif max(a, b) < best_h:
                best, best_h = k, max(a, b)
    return best


class Flow:
    """Places blocks on pages between ``top(n)`` and ``bottom(n)`` of each page n."""

    def __init__(self, left: float, width: float, top: Callable[[int], float], bottom: Callable[[int], float],
                 heading: Callable[[str], Block] | None = None):
        self.left, self.width, self.top, self.bottom = left, width, top, bottom
        self.heading = heading
        self.section = ""
        self.pages: list[Page] = [Page()]
        self.y = top(0)

    def _new_page(self, continuing: bool = True) -> None:
        self.pages.append(Page())
        self.y = self.top(len(self.pages) - 1)
        if continuing and self.section and self.heading is not None:
            b = self.heading(f"{self.section} (continued)")
            self.pages[-1].placed.append((b, self.left, self.y))
            self.y += b.height

    def _room(self) -> float:
        return self.bottom(len(self.pages) - 1) - self.y

    def _at_top(self) -> bool:
        return not self.pages[-1].placed

    def place(self, blocks: list[Block]) -> list[Page]:
        i = 0
        while i < len(blocks):
            b = blocks[i]
            if b.column:
                j = i
                while j < len(blocks) and blocks[j].column:
                    j += 1
                self._columns(blocks[i:j])
                i = j
                continue
            need = b.height + (blocks[i + 1].height if b.keep_with_next and i + 1 < len(blocks) else 0)
            if b.title:
                self.section = ""
            if need > self._room() and not self._at_top():
                self._new_page()
            if b.title:
                self.section = b.title.split(" (")[0]
            self.pages[-1].placed.append((b, self.left, self.y))
            self.y += b.height
            i += 1
        return self.pages

    def _columns(self, run: list[Block]) -> None:
        col_w = (self.width - COL_GAP) / 2
        while run:
            heights = [b.height for b in run]
            n = _fit_two_columns(heights, self._room())
            if n == 0:
                if self._at_top():
                    n = 1  # taller than a page: placed anyway rather than lost
                else:
                    self._new_page()
                    continue
            k = _split(heights[:n], self._room(), balance=n == len(run))
            y0, bottoms = self.y, [self.y, self.y]
            for idx, b in enumerate(run[:n]):
                col = 0 if idx < k else 1
                self.pages[-1].placed.append((b, self.left + col * (col_w + COL_GAP), bottoms[col]))
                bottoms[col] += b.height
            self.y = max(bottoms) if n else y0
            run = run[n:]
            if run:
                self._new_page()


# ---------------------------------------------------------------------------------------------- the page
def _species_version() -> str:
    from ventset.library import load_library

    return load_library().species_version


def _first_header(sh: Sheet, pr: Printout, left: float, width: float, stamp: str) -> None:
    plan, u = pr.plan, pr.units
    r = plan.resolved
    right_top = Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignTop
    y = MARGIN_TOP
    sh.text(left, y, width * 0.55, "Ventilation starting plan", sh.font(15, bold=True))
    patient = sh.elide(visible(plan.request.patient.name, 600) or "Patient: ____________________",
                       sh.font(15, bold=True), width * 0.5)
    sh.text(left + width * 0.5, y - 1, width * 0.5, patient, sh.font(15, bold=True), align=right_top, wrap=False)
    y += 21
    sh.text(left, y, width * 0.5, f"Printed {stamp}", sh.font(8), colour=GREY)
    lean = f" (lean {show(r.lean_mass_kg, 'mass', u)})" if r.lean_mass_kg != r.mass_kg else ""
    animal = sh.elide(f"{visible(r.species_label, 600)} · {show(r.mass_kg, 'mass', u)}{lean} · "
                      f"{show(r.body_temp_c, 'temperature')}", sh.font(10.5, bold=True), width * 0.7)
    sh.text(left + width * 0.3, y - 1, width * 0.7, animal, sh.font(10.5, bold=True), align=right_top, wrap=False)
    y += 15
    sh.line(left, y, left + width, y, 1.2)


def _next_header(sh: Sheet, pr: Printout, left: float, width: float, n: int, total: int) -> None:
    who = visible(pr.plan.request.patient.name or pr.plan.resolved.species_label, 200)
    danger = " · NO ALVEOLAR VENTILATION, NOT A PLAN TO SET" if no_gas_exchange(pr.plan) else ""
    text = sh.elide(f"Ventilation starting plan — {who} (continued){danger}", sh.font(10, bold=True), width * 0.8)
    sh.text(left, MARGIN_TOP, width * 0.8, text, sh.font(10, bold=True), wrap=False)
    sh.text(left + width * 0.8, MARGIN_TOP + 1, width * 0.2, f"page {n} of {total}", sh.font(8), colour=GREY,
            align=Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignTop, wrap=False)
    sh.line(left, MARGIN_TOP + 16, left + width, MARGIN_TOP + 16, 0.8)


def _notice_h(sh: Sheet, pr: Printout, width: float) -> float:
    return sh.height(pr.plan.standing_notice, sh.font(8.5, bold=True), width - 16) + 12


def _furniture(sh: Sheet, pr: Printout, left: float, width: float, page_h: float, n: int, total: int,
               stamp: str) -> float:
    """The standing notice (every page), the signature line (page 1) and the footer; returns the lowest ink."""
    bottom = page_h - MARGIN_BOTTOM
    notice_h = _notice_h(sh, pr, width)
    y = bottom - FOOTER_H - (SIGN_H if n == 1 else 0) - notice_h - 8
    sh.box(left, y, width, notice_h, fill=None, border="#000000", width_pt=1.2)
    sh.text(left + 8, y + 6, width - 16, pr.plan.standing_notice, sh.font(8.5, bold=True))
    y += notice_h + 8
    if n == 1:
        third = width / 3
        for i, label in enumerate(("Veterinarian (name)", "Signature", "Date and time")):
            x = left + i * third
            sh.line(x, y + 20, x + third - 12, y + 20, 0.7, "#000000")
            sh.text(x, y + 22, third - 12, label, sh.font(7.5), colour=GREY)
        y += SIGN_H
    foot = (f"ventset {__version__} · species data {_species_version()} · printed {stamp}"
            + (f" · case {visible(pr.case_name, 200)}" if pr.case_name else "") + f" · page {n} of {total}")
    sh.text(left, y, width, foot, sh.font(6.5), colour=GREY, align=Qt.AlignmentFlag.AlignHCenter, wrap=False)
    return y + FOOTER_H


def render(painter, page_w_pt: float, page_h_pt: float, dpi: float, pr: Printout,
           new_page: Callable[[], object] | None = None) -> PageInfo:
    """Draw the plan on as many pages as it needs (``new_page()`` starts the next; None draws page 1 only)."""
    sh = Sheet(painter, dpi)
    stamp = (pr.when or datetime.now().astimezone()).strftime("%Y-%m-%d %H:%M")
    left, width = MARGIN_SIDE, page_w_pt - 2 * MARGIN_SIDE
    notice = _notice_h(sh, pr, width) + 8 + FOOTER_H
    bottom = page_h_pt - MARGIN_BOTTOM
    flow = Flow(left, width, lambda n: MARGIN_TOP + (FIRST_HEADER_H if n == 0 else NEXT_HEADER_H) + 5,
                lambda n: bottom - notice - (SIGN_H if n == 0 else 0) - 4, lambda title: _heading(sh, title, width))
    blocks = build_blocks(sh, pr, width)
    pages = flow.place(blocks)
    total, lowest = len(pages), 0.0
    for i, page in enumerate(pages):
        if i and new_page is None:
            break
        if i:
            new_page()
        if i == 0:
            _first_header(sh, pr, left, width, stamp)
        else:
            _next_header(sh, pr, left, width, i + 1, total)
        for block, x, y in page.placed:
            block.draw(x, y)
        lowest = max(lowest, _furniture(sh, pr, left, width, page_h_pt, i + 1, total, stamp))
    placed = [b for p in pages for b, _, _ in p.placed]
    return PageInfo(total, sum(b.kind == "assumption" for b in placed), sum(b.kind == "caution" for b in placed),
                    sum(b.kind == "record" for b in placed), lowest)
