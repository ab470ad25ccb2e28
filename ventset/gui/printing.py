"""The printed plan: one page to clip to the anaesthetic machine, as PDF through Qt's own QPdfWriter.

Layout (points, A4 or US Letter): header with patient and date; circuit; the settings in large
type; what to expect on the monitor; the cautions; derived values; the assumptions with their
sources in small type (most important first; any that do not fit are counted and the reader is
told where to find them); the standing notice; a signature line; a footer with versions.

Everything is drawn in device coordinates with point-size fonts (no painter.scale, which would
scale point text a second time). Runs headless: a QApplication is made if none exists, on the
offscreen platform when there is no display. The PDF is built in memory and written atomically.
"""

from __future__ import annotations

import os
import sys
from dataclasses import dataclass
from datetime import datetime

from ventset import __version__
from ventset.errors import visible
from ventset.model import Plan
from ventset.units import fmt, gas_pressure, gas_units_in_text

PAPERS = ("A4", "Letter")
DPI = 300
_APP = None

# Assumptions whose names start with these come first on the page (the ones that move the settings most).
_PRIORITY = (
    ("Target PaCO2", "PaCO2 − EtCO2", "Starting tidal volume", "Tidal volume range", "Rate range", "Rate of least",
     "PEEP", "Pressure limit", "I:E", "Inspiratory time"),
    ("Body temperature", "Lean mass", "Ventilation mode", "Breathing system", "Circuit compressible",
     "Respiratory-system compliance", "Airway resistance", "Alveolar dead-space", "Anatomical dead space",
     "Share of anatomical"),
    ("Metabolic constant", "Metabolic exponent", "Anaesthesia factor", "Q10", "Temperature the rate",
     "Respiratory quotient"),
)


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


def assumption_rank(name: str) -> int:
    """0 for the assumptions that matter most on paper, larger for the rest."""
    for rank, starts in enumerate(_PRIORITY):
        if name.startswith(starts):
            return rank
    return len(_PRIORITY)


def ordered_assumptions(plan: Plan) -> list:
    """The plan's assumptions, most important first (stable within a rank)."""
    return sorted(plan.assumptions, key=lambda a: assumption_rank(a.name))


@dataclass(frozen=True)
class Setting:
    label: str
    value: str
    unit: str
    detail: str


def setting_tiles(plan: Plan, gas_unit: str = "mmHg") -> list[Setting]:
    """The eight large-type settings, in the order they are set on a ventilator."""
    r, v, p, o = plan.resolved, plan.ventilation, plan.pressures, plan.oxygen
    per_kg = v.tidal_volume_ml / r.lean_mass_kg
    if r.mode == "pressure":
        first = Setting("Tidal volume (expected)", fmt(v.tidal_volume_ml), "mL", f"{fmt(per_kg)} mL/kg lean mass")
        fourth = Setting("Inspiratory pressure", fmt(p.inspiratory_pressure_cmh2o), "cmH2O",
                         f"above PEEP; peak {fmt(p.peak_cmh2o)} cmH2O")
    else:
        first = Setting("Set tidal volume", fmt(v.set_tidal_volume_ml), "mL",
                        f"patient {fmt(v.tidal_volume_ml)} mL ({fmt(per_kg)} mL/kg) + {fmt(p.compressed_ml)} mL "
                        "compressed in the circuit")
        fourth = Setting("Inspiratory flow", fmt(v.inspiratory_flow_l_min), "L/min",
                         f"peak {fmt(p.peak_cmh2o)}, plateau {fmt(p.plateau_cmh2o)} cmH2O")
    induction = (f"; {fmt(o.fresh_gas_induction_ml_min / 1000)} L/min at induction"
                 if o.fresh_gas_induction_ml_min > o.fresh_gas_ml_min else "")
    return [
        first,
        Setting("Rate", fmt(v.rate_per_min), "/min", f"minute volume {fmt(v.minute_ml_min / 1000)} L/min"),
        Setting("Inspiratory time", fmt(v.ti_s), "s", f"I:E 1:{fmt(r.ie_expiratory_part)}; Te {fmt(v.te_s)} s"),
        fourth,
        Setting("PEEP", fmt(p.peep_cmh2o), "cmH2O", f"driving pressure {fmt(p.driving_cmh2o)} cmH2O"),
        Setting("Pressure limit", fmt(p.pressure_limit_cmh2o), "cmH2O", "highest airway pressure the plan allows"),
        Setting("FiO2", f"{o.fio2:.1f}" if o.fio2 == 1 else fmt(o.fio2), "",
                f"{fmt(o.fio2 * 100)} % oxygen; alveolar PO2 {gas_pressure(o.pao2_alveolar_mmhg, gas_unit)}"),
        Setting("Fresh gas", fmt(o.fresh_gas_ml_min / 1000), "L/min", f"{o.circuit_label}{induction}"),
    ]


def derived_rows(plan: Plan, gas_unit: str = "mmHg") -> list[tuple[str, str]]:
    """Label / value pairs for the derived-values table."""
    m, d, v, p, o = plan.metabolism, plan.dead_space, plan.ventilation, plan.pressures, plan.oxygen
    return [
        ("Metabolic rate", f"{fmt(m.metabolic_rate_w)} W ({'entered' if m.entered else 'allometric'}); "
                           f"VO2 {fmt(m.vo2_ml_min)}, VCO2 {fmt(m.vco2_ml_min)} mL/min; RQ {fmt(m.rq)}"),
        ("Ventilation", f"alveolar {fmt(v.alveolar_ml_min)} mL/min; minute {fmt(v.minute_ml_min)} mL/min"),
        ("Dead space", f"anatomical {fmt(d.anatomical_ml)} + apparatus {fmt(d.apparatus_ml)} + tube "
                       f"{fmt(d.tube_ml)} + alveolar {fmt(d.alveolar_ml)} = {fmt(d.total_ml)} mL "
                       f"({fmt(d.total_ml / v.tidal_volume_ml * 100, 2)} % of VT)"),
        ("Airway pressures", f"plateau {fmt(p.plateau_cmh2o)}, peak {fmt(p.peak_cmh2o)}, driving "
                             f"{fmt(p.driving_cmh2o)} cmH2O"),
        ("Mechanics", f"C {fmt(p.compliance_ml_cmh2o)} mL/cmH2O, R {fmt(p.resistance_cmh2o_l_s)} cmH2O/(L/s), "
                      f"τ {fmt(p.time_constant_s)} s; circuit {fmt(p.compressible_ml_cmh2o)} mL/cmH2O"),
        ("Oxygen", f"PAO2 {gas_pressure(o.pao2_alveolar_mmhg, gas_unit)} at PB "
                   f"{gas_pressure(o.barometric_mmhg, gas_unit)}; minimum O2 flow {fmt(o.min_o2_flow_ml_min)} "
                   "mL/min"),
    ]


class _Sheet:
    """Drawing in points on a device of ``dpi``: every rectangle is converted, fonts are point-sized."""

    def __init__(self, painter, dpi: float) -> None:
        from PySide6.QtGui import QFont

        self.p = painter
        self.k = dpi / 72.0
        self.family = "DejaVu Sans"
        self._QFont = QFont

    def font(self, size_pt: float, bold: bool = False, italic: bool = False):
        f = self._QFont(self.family)
        f.setPointSizeF(size_pt)
        f.setBold(bold)
        f.setItalic(italic)
        for tag in ("liga", "clig"):  # no ligatures, so text copied or extracted from the PDF reads as typed
            f.setFeature(self._QFont.Tag.fromString(tag), 0)
        return f

    def rect(self, x: float, y: float, w: float, h: float):
        from PySide6.QtCore import QRectF

        return QRectF(x * self.k, y * self.k, w * self.k, h * self.k)

    def height(self, text: str, font, width: float, flags: int | None = None) -> float:
        from PySide6.QtCore import Qt
        from PySide6.QtGui import QFontMetricsF

        flags = int(Qt.TextFlag.TextWordWrap) if flags is None else flags
        fm = QFontMetricsF(font, self.p.device())
        return fm.boundingRect(self.rect(0, 0, width, 10_000), flags, text).height() / self.k

    def width(self, text: str, font) -> float:
        from PySide6.QtGui import QFontMetricsF

        return QFontMetricsF(font, self.p.device()).horizontalAdvance(text) / self.k

    def elide(self, text: str, font, width: float) -> str:
        """``text`` shortened with an ellipsis to fit ``width`` points."""
        from PySide6.QtCore import Qt
        from PySide6.QtGui import QFontMetricsF

        return QFontMetricsF(font, self.p.device()).elidedText(text, Qt.TextElideMode.ElideRight, width * self.k)

    def text(self, x: float, y: float, w: float, text: str, font, *, align=None, colour: str = "#000000",
             wrap: bool = True) -> float:
        """Draw ``text`` in a box ``w`` points wide from ``(x, y)``; returns the height used (points)."""
        from PySide6.QtCore import Qt
        from PySide6.QtGui import QColor

        flags = int(align if align is not None else Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignTop)
        if wrap:
            flags |= int(Qt.TextFlag.TextWordWrap)
        h = self.height(text, font, w, flags)
        self.p.setFont(font)
        self.p.setPen(QColor(colour))
        self.p.drawText(self.rect(x, y, w, h + 1), flags, text)
        return h

    def line(self, x1: float, y1: float, x2: float, y2: float, width_pt: float = 0.5, colour: str = "#000000",
             dashed: bool = False) -> None:
        from PySide6.QtCore import QPointF, Qt
        from PySide6.QtGui import QColor, QPen

        pen = QPen(QColor(colour), width_pt * self.k)
        if dashed:
            pen.setStyle(Qt.PenStyle.DashLine)
        self.p.setPen(pen)
        self.p.drawLine(QPointF(x1 * self.k, y1 * self.k), QPointF(x2 * self.k, y2 * self.k))

    def box(self, x: float, y: float, w: float, h: float, fill: str | None = None, border: str = "#000000",
            width_pt: float = 0.6) -> None:
        from PySide6.QtCore import Qt
        from PySide6.QtGui import QBrush, QColor, QPen

        self.p.setPen(QPen(QColor(border), width_pt * self.k) if border else Qt.PenStyle.NoPen)
        self.p.setBrush(QBrush(QColor(fill)) if fill else Qt.BrushStyle.NoBrush)
        self.p.drawRect(self.rect(x, y, w, h))
        self.p.setBrush(Qt.BrushStyle.NoBrush)

    def mark(self, severity: str, x: float, y: float, size: float) -> None:
        """Octagon (danger), triangle (caution) or circle (info): readable in black and white."""
        from PySide6.QtCore import QPointF, Qt
        from PySide6.QtGui import QBrush, QColor, QPen, QPolygonF

        k, s = self.k, size
        self.p.setPen(QPen(QColor("#000000"), 0.6 * k))
        self.p.setBrush(QBrush(QColor("#000000")) if severity == "danger" else Qt.BrushStyle.NoBrush)
        if severity == "danger":
            c = s * 0.29
            pts = [(c, 0), (s - c, 0), (s, c), (s, s - c), (s - c, s), (c, s), (0, s - c), (0, c)]
            self.p.drawPolygon(QPolygonF([QPointF((x + a) * k, (y + b) * k) for a, b in pts]))
        elif severity == "caution":
            pts = [(s / 2, 0), (s, s), (0, s)]
            self.p.setBrush(QBrush(QColor("#bdbdbd")))
            self.p.drawPolygon(QPolygonF([QPointF((x + a) * k, (y + b) * k) for a, b in pts]))
        else:
            self.p.drawEllipse(self.rect(x, y, s, s))
        self.p.setBrush(Qt.BrushStyle.NoBrush)


@dataclass(frozen=True)
class PageInfo:
    """What :func:`render_plan` fitted on the page (for tests and the status bar)."""

    assumptions_shown: int
    assumptions_omitted: int
    cautions_shown: int
    cautions_omitted: int
    bottom_pt: float


def render_plan(painter, page_w_pt: float, page_h_pt: float, dpi: float, plan: Plan, *, gas_unit: str = "mmHg",
                case_name: str = "", when: datetime | None = None) -> PageInfo:
    """Draw the one-page plan with ``painter`` on a page of the given size in points at ``dpi``."""
    from PySide6.QtCore import Qt

    sh = _Sheet(painter, dpi)
    when = when or datetime.now().astimezone()
    r, v, c = plan.resolved, plan.ventilation, plan.request.circuit
    left, right, top, bottom = 34.0, page_w_pt - 34.0, 54.0, page_h_pt - 30.0  # top margin clears a board clip
    width = right - left
    grey, dark = "#5a5a5a", "#000000"
    align_r = Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignTop
    align_c = Qt.AlignmentFlag.AlignHCenter | Qt.AlignmentFlag.AlignTop

    # ---- header -----------------------------------------------------------------------------
    y = top
    sh.text(left, y, width * 0.55, "Ventilation starting plan", sh.font(15, bold=True))
    patient = sh.elide(visible(plan.request.patient.name, 600) or "Patient: ____________________",
                       sh.font(15, bold=True), width * 0.5)
    sh.text(left + width * 0.5, y - 1, width * 0.5, patient, sh.font(15, bold=True), align=align_r, wrap=False)
    y += 21
    stamp = when.strftime("%Y-%m-%d %H:%M")
    sh.text(left, y, width * 0.5, f"Printed {stamp}", sh.font(8), colour=grey)
    lean = f" (lean {fmt(r.lean_mass_kg)} kg)" if r.lean_mass_kg != r.mass_kg else ""
    animal = sh.elide(f"{visible(r.species_label, 600)} · {fmt(r.mass_kg)} kg{lean} · {fmt(r.body_temp_c)} °C",
                      sh.font(10.5, bold=True), width * 0.7)
    sh.text(left + width * 0.3, y - 1, width * 0.7, animal, sh.font(10.5, bold=True), align=align_r, wrap=False)
    y += 15
    sh.line(left, y, right, y, 1.2)
    y += 5

    # ---- circuit ----------------------------------------------------------------------------
    parts = "; ".join(f"{visible(p.name, 600)} {fmt(p.volume_ml)} mL" for p in plan.dead_space.parts) or "none entered"
    if len(plan.dead_space.parts) > 1:
        parts += f" = {fmt(plan.dead_space.apparatus_ml)} mL"
    if c.tube_id_mm is not None and c.tube_length_cm is not None:
        tube = f"{fmt(c.tube_id_mm)} mm ID, {fmt(c.tube_length_cm)} cm beyond the incisors"
    else:
        tube = "not entered (not counted as dead space)"
    y += sh.text(left, y, width, f"Circuit: {plan.oxygen.circuit_label} · {r.mode} mode · compressible "
                 f"{fmt(plan.pressures.compressible_ml_cmh2o)} mL/cmH2O", sh.font(9, bold=True))
    y += sh.text(left, y, width, f"Apparatus (Y-piece to incisors): {parts} · Tube: {tube}", sh.font(8.5))
    y += 6

    # ---- settings in large type -------------------------------------------------------------
    tiles = setting_tiles(plan, gas_unit)
    cols, gap, tile_h = 4, 6.0, 62.0
    tile_w = (width - gap * (cols - 1)) / cols
    for i, t in enumerate(tiles):
        tx = left + (i % cols) * (tile_w + gap)
        ty = y + (i // cols) * (tile_h + gap)
        sh.box(tx, ty, tile_w, tile_h, fill="#f0f0f0", border="#000000", width_pt=0.8)
        sh.text(tx + 5, ty + 4, tile_w - 10, t.label, sh.font(8, bold=True), colour="#333333", wrap=False)
        big = sh.font(24, bold=True)
        vw = sh.width(t.value, big)
        sh.text(tx + 5, ty + 13, tile_w - 10, t.value, big, wrap=False)
        if t.unit:
            sh.text(tx + 5 + vw + 3, ty + 25, tile_w - vw - 13, t.unit, sh.font(10.5, bold=True), wrap=False)
        detail_font = sh.font(6.8)
        if sh.height(t.detail, detail_font, tile_w - 10) > tile_h - 44:
            detail_font = sh.font(5.8)
        sh.text(tx + 5, ty + 42, tile_w - 10, t.detail, detail_font, colour="#333333")
    y += 2 * tile_h + gap + 8

    # ---- what to expect on the monitor --------------------------------------------------------
    reached = "" if v.target_reached else " — target NOT reached, see cautions"
    y += sh.text(left, y, width, f"Expected EtCO2 ≈ {gas_pressure(v.expected_etco2_mmhg, gas_unit)}, PaCO2 "
                 f"{gas_pressure(v.expected_paco2_mmhg, gas_unit)} "
                 f"(target {gas_pressure(v.target_paco2_mmhg, gas_unit)})"
                 f"{reached}", sh.font(10.5, bold=True))
    y += 6

    # ---- fixed block at the bottom: notice, signature, footer (measured first) ----------------
    notice_font = sh.font(8.5, bold=True)
    notice_h = sh.height(plan.standing_notice, notice_font, width - 16) + 12
    sign_h = 34.0
    footer_h = 10.0
    bottom_block = notice_h + 8 + sign_h + footer_h

    # ---- cautions: all of them if they fit (shrinking the type a little), dangers first ---------
    label_w = 78.0
    small = sh.font(7.5)
    rows = derived_rows(plan, gas_unit)
    derived_h = 16 + sum(sh.height(value, small, width - label_w) + 0.8 for _, value in rows) + 5
    min_assumptions_h = 16 + 3 * 9.0
    sh.line(left, y, right, y, 0.5, grey)
    y += 3
    y += sh.text(left, y, width, "CAUTIONS", sh.font(8.5, bold=True))
    room = bottom - bottom_block - derived_h - min_assumptions_h - y - 5
    bodies = [f"{c.severity.upper()}: {gas_units_in_text(c.message, gas_unit)}  ({c.code})" for c in plan.cautions]
    omit_note_h = 12.0
    for size in (8.0, 7.4, 6.8):
        fonts = [sh.font(size, bold=c.severity == "danger") for c in plan.cautions]
        heights = [sh.height(b, f, width - 14) + 1.5 for b, f in zip(bodies, fonts, strict=True)]
        if sum(heights) <= room:
            break
    shown_c, used = 0, 0.0
    for h in heights:
        if used + h > room - (omit_note_h if shown_c < len(heights) - 1 else 0):
            break
        used += h
        shown_c += 1
    if not plan.cautions:
        y += sh.text(left + 14, y, width - 14, "None raised.", sh.font(8))
    for caution, body, font in list(zip(plan.cautions, bodies, fonts, strict=True))[:shown_c]:
        sh.mark(caution.severity, left + 1, y + 1.5, font.pointSizeF() * 0.92)
        y += sh.text(left + 14, y, width - 14, body, font) + 1.5
    omitted_c = len(plan.cautions) - shown_c
    if omitted_c:
        y += sh.text(left + 14, y, width - 14, f"{omitted_c} more caution(s) not shown for lack of room (the least "
                     "severe): see the window or 'ventset show CASE'.", sh.font(7.5, bold=True, italic=True))
    y += 5

    # ---- derived values ---------------------------------------------------------------------
    sh.line(left, y, right, y, 0.5, grey)
    y += 3
    y += sh.text(left, y, width, "DERIVED VALUES", sh.font(8.5, bold=True))
    for label, value in rows:
        h = sh.text(left + label_w, y, width - label_w, value, small)
        sh.text(left, y, label_w, label, sh.font(7.5, bold=True), wrap=False)
        y += h + 0.8
    y += 5

    # ---- assumptions with sources, two columns, most important first ---------------------------
    sh.line(left, y, right, y, 0.5, grey)
    y += 3
    items = ordered_assumptions(plan)
    heading = f"ASSUMPTIONS AND SOURCES ({len(items)})"
    y += sh.text(left, y, width, heading, sh.font(8.5, bold=True))
    col_gap = 12.0
    col_w = (width - col_gap) / 2
    limit = bottom - bottom_block - 2
    a_font = sh.font(6.5)
    texts = [f"{a.name}: {fmt(a.value) if isinstance(a.value, float) else a.value}"
             f"{(' ' + a.unit) if a.unit else ''} — {a.source}" for a in items]
    heights = [sh.height(t, a_font, col_w) + 1.2 for t in texts]
    note_h = sh.height("0 more assumptions not shown: see the window's assumptions list or 'ventset show "
                       "CASE'.", sh.font(6.8, italic=True), width) + 2
    shown_a = _fit_two_columns(heights, limit - y, limit - y - note_h)
    col, cy, col_top = 0, y, y
    for n in range(shown_a):
        if cy + heights[n] > limit - (note_h if shown_a < len(items) else 0) and col == 0:
            col, cy = 1, col_top
        sh.text(left + col * (col_w + col_gap), cy, col_w, texts[n], a_font)
        cy += heights[n]
    omitted_a = len(items) - shown_a
    if omitted_a:
        sh.text(left, limit - note_h + 1, width, f"{omitted_a} more assumption(s) not shown (the least "
                "important): see the window's assumptions list or 'ventset show CASE'.",
                sh.font(6.8, italic=True))

    # ---- standing notice, signature, footer ---------------------------------------------------
    y = bottom - bottom_block
    sh.box(left, y, width, notice_h, fill=None, border="#000000", width_pt=1.2)
    sh.text(left + 8, y + 6, width - 16, plan.standing_notice, notice_font)
    y += notice_h + 8
    third = width / 3
    for i, label in enumerate(("Veterinarian (name)", "Signature", "Date and time")):
        x = left + i * third
        sh.line(x, y + 20, x + third - 12, y + 20, 0.7, dark)
        sh.text(x, y + 22, third - 12, label, sh.font(7.5), colour=grey)
    y += sign_h
    foot = (f"ventset {__version__} · species data {_species_version()} · printed {stamp}"
            + (f" · case {case_name}" if case_name else "") + " · one page")
    sh.text(left, y, width, foot, sh.font(6.5), colour=grey, align=align_c, wrap=False)
    return PageInfo(shown_a, omitted_a, shown_c, omitted_c, y + footer_h)


def _fit_two_columns(heights: list[float], column_h: float, column_h_with_note: float) -> int:
    """How many items (in order) fit in two columns; if not all fit, leave room for the 'omitted' note."""
    def fits(n: int, col_h: float) -> bool:
        col, used = 0, 0.0
        for h in heights[:n]:
            if used + h > col_h:
                col, used = col + 1, 0.0
                if col > 1 or h > col_h:
                    return False
            used += h
        return True

    if fits(len(heights), column_h):
        return len(heights)
    n = len(heights)
    while n > 0 and not fits(n, column_h_with_note):
        n -= 1
    return n


def _points():
    from PySide6.QtGui import QPageSize

    return QPageSize.Unit.Point


def _species_version() -> str:
    from ventset.library import load_library

    return load_library().species_version


def _page_size(paper: str):
    from PySide6.QtGui import QPageSize

    if paper not in PAPERS:
        from ventset.errors import InputError

        raise InputError("paper", paper, f"must be one of {', '.join(PAPERS)}")
    return QPageSize(QPageSize.PageSizeId.A4 if paper == "A4" else QPageSize.PageSizeId.Letter)


def plan_pdf_bytes(plan: Plan, *, gas_unit: str = "mmHg", case_name: str = "", when: datetime | None = None,
                   paper: str = "A4") -> tuple[bytes, PageInfo]:
    """The one-page plan as PDF bytes, and what fitted on it."""
    from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QMarginsF
    from PySide6.QtGui import QPageLayout, QPainter, QPdfWriter

    ensure_app()
    data = QByteArray()
    buf = QBuffer(data)
    buf.open(QIODevice.OpenModeFlag.WriteOnly)
    writer = QPdfWriter(buf)
    writer.setResolution(DPI)
    writer.setPageSize(_page_size(paper))
    writer.setPageMargins(QMarginsF(0, 0, 0, 0), QPageLayout.Unit.Point)
    who = visible(plan.request.patient.name or plan.resolved.species_label, 200)
    writer.setTitle(f"Ventilation starting plan — {who}")
    writer.setCreator(f"ventset {__version__}")
    size = _page_size(paper).size(_points())
    painter = QPainter(writer)
    try:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing)
        info = render_plan(painter, size.width(), size.height(), writer.resolution(), plan, gas_unit=gas_unit,
                           case_name=case_name, when=when)
    finally:
        painter.end()
    buf.close()
    return bytes(data.data()), info


def write_plan_pdf(plan: Plan, path: str | os.PathLike, *, gas_unit: str = "mmHg", case_name: str = "",
                   when: datetime | None = None, paper: str = "A4") -> PageInfo:
    """Write the one-page plan to ``path`` atomically (raises ventset.storage.WriteError)."""
    from ventset import storage

    data, info = plan_pdf_bytes(plan, gas_unit=gas_unit, case_name=case_name, when=when, paper=paper)
    storage.atomic_write_bytes(path, data)
    return info


def plan_page_image(plan: Plan, width_px: int = 1240, *, gas_unit: str = "mmHg", case_name: str = "",
                    when: datetime | None = None, paper: str = "A4"):
    """The page as a QImage (print preview in the window; same drawing as the PDF)."""
    from PySide6.QtCore import Qt
    from PySide6.QtGui import QImage, QPainter

    ensure_app()
    size = _page_size(paper).size(_points())
    dpi = width_px / size.width() * 72.0
    img = QImage(width_px, round(size.height() * dpi / 72.0), QImage.Format.Format_RGB32)
    img.fill(Qt.GlobalColor.white)
    dots_per_m = round(dpi / 0.0254)
    img.setDotsPerMeterX(dots_per_m)
    img.setDotsPerMeterY(dots_per_m)
    painter = QPainter(img)
    try:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing)
        painter.setRenderHint(QPainter.RenderHint.TextAntialiasing)
        render_plan(painter, size.width(), size.height(), dpi, plan, gas_unit=gas_unit, case_name=case_name,
                    when=when)
    finally:
        painter.end()
    return img


def print_plan(plan: Plan, printer, *, gas_unit: str = "mmHg", case_name: str = "") -> PageInfo:
    """Draw the page on a QPrinter chosen in the print dialog."""
    from PySide6.QtGui import QPainter

    rect = printer.pageLayout().fullRectPoints()
    printer.setFullPage(True)
    painter = QPainter(printer)
    try:
        return render_plan(painter, rect.width(), rect.height(), printer.resolution(), plan, gas_unit=gas_unit,
                           case_name=case_name)
    finally:
        painter.end()


# Public names for other printouts (ventset.gui.aquatic_print): the drawing surface and the paper sizes.
Sheet = _Sheet
page_size = _page_size
