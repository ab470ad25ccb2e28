"""Is any text in the window cut? Each rendered text's width (and height) against the widget that shows it.

Used by the tests in-process and by ``python -m tests.gui.fitcheck`` in a fresh process with a screen of a given
size and scale (``QT_QPA_PLATFORM=offscreen:configfile=…``, ``QT_SCALE_FACTOR``), which prints one JSON line.
"""

from __future__ import annotations

import json
import os
import sys

from PySide6.QtGui import QFontMetrics, QTextLayout, QTextOption
from PySide6.QtWidgets import QLabel


def _lines(text: str, font, width: int, wrap: bool) -> tuple[list[float], float]:
    """Natural widths of the lines Qt lays ``text`` out in at ``width``, and their total height."""
    layout = QTextLayout(text, font)
    opt = QTextOption()
    opt.setWrapMode(QTextOption.WrapMode.WordWrap if wrap else QTextOption.WrapMode.NoWrap)
    layout.setTextOption(opt)
    layout.beginLayout()
    widths, y = [], 0.0
    while True:
        line = layout.createLine()
        if not line.isValid():
            break
        line.setLineWidth(max(1, width))
        widths.append(line.naturalTextWidth())
        y += line.height()
    layout.endLayout()
    return widths, y


def cut_texts(window) -> list[str]:
    """Every visible reading, read-out text and panel title whose text is wider (or taller) than its widget."""
    from PySide6.QtCore import Qt
    from PySide6.QtWidgets import QScrollArea

    from ventset.gui.text import Reading, Text

    cut = []
    for area in window.findChildren(QScrollArea):  # content wider than a scroll area that cannot scroll sideways
        inner = area.widget()
        if (area.isVisibleTo(window) and inner is not None and area.horizontalScrollBarPolicy()
                == Qt.ScrollBarPolicy.ScrollBarAlwaysOff and inner.width() > area.viewport().width()):
            cut.append(f"scroll area {area.objectName()}: content {inner.width()} px in {area.viewport().width()}")
    for r in window.findChildren(Reading):
        if not r.isVisibleTo(window) or not r.text():
            continue
        vf, uf = r.value_font(), r.unit_font()
        need = (QFontMetrics(vf).horizontalAdvance(r.text()) + QFontMetrics(uf).averageCharWidth() // 2
                + QFontMetrics(uf).horizontalAdvance(r.unit()))
        if need > r.width() or QFontMetrics(vf).ascent() > r.height():
            cut.append(f"{r.objectName()}: '{r.text()} {r.unit()}' needs {need} px, has {r.width()}")
    for t in window.findChildren(Text):
        if not t.isVisibleTo(window) or not t.plainText():
            continue
        width = t.contentsRect().width()
        wrap = t.hasHeightForWidth()
        widths, h = _lines(t.plainText(), t.font(), width, wrap)
        if max(widths) > width + 0.5 or (wrap and h > t.height() + 1):
            cut.append(f"{t.objectName() or type(t.parent()).__name__}: '{t.plainText()}' needs "
                       f"{max(widths):.0f} × {h:.0f} px, has {width} × {t.height()}")
    for lab in window.findChildren(QLabel):
        name = lab.objectName()
        if not lab.isVisibleTo(window) or not lab.text() or lab.pixmap() is not None and not lab.pixmap().isNull():
            continue
        if lab.parent() is None or type(lab.parent()).__name__ not in ("SettingsPanel", "CautionsPanel", "Tile",
                                                                          "BreathPlot", "SettingsMapPlot",
                                                                          "WaveformPlot", "SensitivityPlot",
                                                                          "StatusStrip"):
            continue
        widths, h = _lines(lab.text(), lab.font(), lab.contentsRect().width(), lab.wordWrap())
        if max(widths) > lab.contentsRect().width() + 0.5 or h > lab.height() + 1:
            cut.append(f"label {name or lab.text()!r}: needs {max(widths):.0f} × {h:.0f} px, has "
                       f"{lab.contentsRect().width()} × {lab.height()}")
    return cut


def _probe() -> dict:
    """Open the window as a first run would on this screen (or with the settings given), pick the patients of
    argv, and report what is cut and where the window is."""
    from PySide6.QtWidgets import QApplication

    import ventset.gui  # noqa: F401
    from ventset.gui import geometry
    from ventset.gui.settings import open_settings
    from ventset.gui.window import MainWindow

    app = QApplication.instance() or QApplication([])
    app.setStyle("Fusion")
    window = MainWindow(open_settings())
    window.show()
    app.processEvents()
    out: dict = {"screen": list(geometry.available(window).getRect()), "window": list(window.frameGeometry().getRect()),
                 "on_screen": geometry.on_screen(window),
                 "cautions_on_screen": geometry.available(window).contains(
                     window.cautions.rect().translated(window.cautions.mapToGlobal(window.cautions.rect().topLeft()))),
                 "cut": {}}
    patients = [a.split(":") for a in sys.argv[1:] if ":" in a] or [["demo", ""]]
    for species, mass in patients:
        if species != "demo":
            window.form.change_species(species)
            window.form.set_text("mass", mass)
        window.controller.flush()
        for _ in range(6):
            app.processEvents()
        out["cut"][f"{species} {mass}".strip()] = cut_texts(window)
    if "--save" in sys.argv:
        window.close()
    return out


if __name__ == "__main__":
    os.environ.setdefault("VENTSET_GUI_SMOKE", "1")
    print(json.dumps(_probe()))
