"""Appearance: three palettes (day, night, high contrast), font scaling and severity marks.

Sizes are always relative to the application font (which follows the system setting); nothing is
set in pixels. Severity is shown by a word and a shape as well as a colour, so it reads without colour.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QFontMetrics, QPainter, QPalette, QPen, QPixmap, QPolygonF
from PySide6.QtWidgets import QApplication, QWidget


@dataclass(frozen=True)
class Theme:
    key: str
    label: str
    window: str
    base: str
    alt_base: str
    text: str
    muted: str
    border: str
    accent: str
    accent_text: str
    tile: str
    stale: str
    danger: str
    danger_bg: str
    caution: str
    caution_bg: str
    info: str
    info_bg: str
    ok: str
    plot_bg: str
    plot_fg: str
    grid: str
    pressure: str
    flow: str
    volume: str
    target: str
    band: str
    point: str
    zones: tuple[str, ...]          # ZONE_USUAL .. ZONE_DEAD
    breath: dict[str, str] = field(default_factory=dict)
    line_width: float = 2.0
    placeholder: str = ""     # defaults shown in empty fields; distinct from typed text
    form_style: str = ""      # extra style for the form (high contrast: visible field borders)
    window_style: str = ""    # style for the whole window and its dialogs (high contrast: every input bordered)


DAY = Theme(
    key="day", label="Day (light)", window="#f3f2ee", base="#ffffff", alt_base="#f7f7f4", text="#1b1f24",
    muted="#56606b", border="#c3c7cc", accent="#1d5a86", accent_text="#ffffff", tile="#ffffff", stale="#e9e6dd",
    danger="#a4231b", danger_bg="#fbe4e1", caution="#7a5200", caution_bg="#fdf0d2", info="#2b5680",
    info_bg="#e5eef7", ok="#2d6a4f", plot_bg="#ffffff", plot_fg="#2a2f36", grid="#d5d8dc", pressure="#1d5a86",
    flow="#7b3f99", volume="#8f5516", target="#1b1f24", band="#cde7d8", point="#a4231b",
    zones=("#ffffff", "#eceef1", "#faedcc", "#f6d6ae", "#f0c2bd", "#a7acb2", "#8d949c"),
    breath={"circuit": "#b3b8bf", "apparatus": "#c0392b", "anatomical": "#d4883a", "alveolar": "#b9a44a",
            "exchange": "#2d7a57"},
    placeholder="#6f7780",
)
NIGHT = Theme(
    key="night", label="Night (dark)", window="#1c1f23", base="#25292e", alt_base="#2b3036", text="#e7e9ec",
    muted="#a5adb7", border="#454c55", accent="#7db2df", accent_text="#0f1215", tile="#25292e", stale="#33302a",
    danger="#ff8f86", danger_bg="#4a2422", caution="#ffcf70", caution_bg="#45391f", info="#9fc6ee",
    info_bg="#22364a", ok="#7fd1a8", plot_bg="#1f2226", plot_fg="#d6dade", grid="#3a4047", pressure="#7db2df",
    flow="#c99be0", volume="#e3a560", target="#f1f3f5", band="#2f4a3c",
    point="#ff8f86", zones=("#1f2226", "#2a2e33", "#3d3522", "#4a3520", "#52292a", "#5e6368", "#0c0d0f"),
    breath={"circuit": "#7d848c", "apparatus": "#e0675c", "anatomical": "#e3a560", "alveolar": "#cdbb6a",
            "exchange": "#58b98a"},
    placeholder="#8c949e",
)
HIGH_CONTRAST = Theme(
    key="contrast", label="High contrast", window="#000000", base="#000000", alt_base="#101010", text="#ffffff",
    muted="#e0e0e0", border="#ffffff", accent="#ffd800", accent_text="#000000", tile="#000000", stale="#262626",
    danger="#ff6b6b", danger_bg="#3a0000", caution="#ffd800", caution_bg="#2e2600", info="#7fdcff",
    info_bg="#002a38", ok="#7dff9a", plot_bg="#000000", plot_fg="#ffffff", grid="#5a5a5a", pressure="#7fdcff",
    flow="#ff9cff", volume="#ffd800", target="#ffffff", band="#00452a", point="#ff6b6b",
    zones=("#000000", "#1c1c1c", "#3a3000", "#4d2a00", "#5a0000", "#707070", "#3c3c3c"),
    breath={"circuit": "#9a9a9a", "apparatus": "#ff6b6b", "anatomical": "#ffb347", "alveolar": "#ffd800",
            "exchange": "#7dff9a"},
    line_width=3.0,
    placeholder="#b0b0b0",
    form_style="QLineEdit { border: 1px solid #ffffff; padding: 1px; } "
               "QLineEdit:disabled { border: 1px dashed #8a8a8a; }",
    window_style="QLineEdit, QAbstractSpinBox, QTextEdit, QPlainTextEdit, QAbstractItemView "
                 "{ border: 1px solid #ffffff; padding: 1px; } "
                 "QComboBox { border: 1px solid #ffffff; padding: 1px 4px; } "
                 "QLineEdit:focus, QComboBox:focus, QAbstractSpinBox:focus, QTextEdit:focus, QPlainTextEdit:focus, "
                 "QAbstractItemView:focus { border: 2px solid #ffd800; padding: 0px; } "
                 "QComboBox:focus { padding: 0px 3px; } "
                 "QLineEdit:disabled, QComboBox:disabled, QAbstractSpinBox:disabled { border: 1px dashed #8a8a8a; } "
                 "QPushButton, QToolButton { border: 1px solid #ffffff; padding: 2px 8px; } "
                 "QPushButton:focus, QToolButton:focus { border: 2px solid #ffd800; padding: 1px 7px; }",
)
THEMES: dict[str, Theme] = {t.key: t for t in (DAY, NIGHT, HIGH_CONTRAST)}

SEVERITY_WORD = {"danger": "DANGER", "caution": "CAUTION", "info": "INFO"}


@functools.lru_cache(maxsize=1)
def app_icon():
    """ventset's icon (the SVG shipped in the package, also the desktop entry's) as a QIcon (made once)."""
    from PySide6.QtGui import QIcon

    from ventset.resources import icon_path

    return QIcon(str(icon_path()))


def palette_for(theme: Theme) -> QPalette:
    pal = QPalette()
    c = QColor
    role = QPalette.ColorRole
    for r, col in ((role.Window, theme.window), (role.WindowText, theme.text), (role.Base, theme.base),
                   (role.AlternateBase, theme.alt_base), (role.Text, theme.text), (role.Button, theme.alt_base),
                   (role.ButtonText, theme.text), (role.ToolTipBase, theme.base), (role.ToolTipText, theme.text),
                   (role.Highlight, theme.accent), (role.HighlightedText, theme.accent_text),
                   (role.PlaceholderText, theme.placeholder or theme.muted), (role.Link, theme.accent),
                   (role.Mid, theme.border),
                   (role.Dark, theme.border), (role.Light, theme.base), (role.BrightText, theme.danger)):
        pal.setColor(r, c(col))
    disabled = QPalette.ColorGroup.Disabled
    for r in (role.Text, role.WindowText, role.ButtonText):
        pal.setColor(disabled, r, c(theme.muted))
    return pal


def apply_theme(app: QApplication, theme: Theme) -> None:
    """Set the Qt palette for ``theme`` (plots are re-coloured by their own widgets)."""
    if app.style().name().lower() != "fusion":
        app.setStyle("Fusion")
    app.setPalette(palette_for(theme))


def scaled_font(base: QFont, factor: float = 1.0, bold: bool = False) -> QFont:
    """``base`` scaled by ``factor`` (point size when known, else the pixel size it already has)."""
    f = QFont(base)
    if f.pointSizeF() > 0:
        f.setPointSizeF(max(1.0, f.pointSizeF() * factor))
    elif f.pixelSize() > 0:
        f.setPixelSize(max(1, round(f.pixelSize() * factor)))
    if bold:
        f.setWeight(QFont.Weight.Bold)
    return f


def set_font_scale(widget: QWidget, factor: float, bold: bool = False) -> None:
    """Give ``widget`` the application font × factor (so it follows the system font size)."""
    widget.setFont(scaled_font(QApplication.font(), factor, bold))


def severity_colours(theme: Theme, severity: str) -> tuple[str, str]:
    return {"danger": (theme.danger, theme.danger_bg), "caution": (theme.caution, theme.caution_bg)}.get(
        severity, (theme.info, theme.info_bg))


def severity_pixmap(theme: Theme, severity: str, font: QFont) -> QPixmap:
    """A shape that reads without colour: octagon (danger), triangle (caution), circle (info), with a glyph."""
    size = max(12, round(QFontMetrics(font).height() * 1.25))
    dpr = 2.0
    pm = QPixmap(round(size * dpr), round(size * dpr))
    pm.setDevicePixelRatio(dpr)
    pm.fill(Qt.GlobalColor.transparent)
    fg, _ = severity_colours(theme, severity)
    p = QPainter(pm)
    p.setRenderHint(QPainter.RenderHint.Antialiasing)
    p.setPen(QPen(QColor(fg), max(1.0, size / 12)))
    p.setBrush(QColor(fg))
    s = float(size)
    m = s * 0.06
    if severity == "danger":
        k = s * 0.29
        pts = [QPointF(m + k, m), QPointF(s - m - k, m), QPointF(s - m, m + k), QPointF(s - m, s - m - k),
               QPointF(s - m - k, s - m), QPointF(m + k, s - m), QPointF(m, s - m - k), QPointF(m, m + k)]
        p.drawPolygon(QPolygonF(pts))
        glyph = "!"
    elif severity == "caution":
        p.drawPolygon(QPolygonF([QPointF(s / 2, m), QPointF(s - m, s - m), QPointF(m, s - m)]))
        glyph = "!"
    else:
        p.drawEllipse(QRectF(m, m, s - 2 * m, s - 2 * m))
        glyph = "i"
    gf = QFont(font)
    gf.setWeight(QFont.Weight.Black)
    gf.setPixelSize(max(6, round(s * 0.62)))
    p.setFont(gf)
    p.setPen(QColor(theme.base if severity != "caution" else "#000000"))
    rect = QRectF(0, s * 0.08 if severity == "caution" else 0, s, s)
    p.drawText(rect, Qt.AlignmentFlag.AlignCenter, glyph)
    p.end()
    return pm
