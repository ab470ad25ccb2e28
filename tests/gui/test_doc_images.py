"""Screenshots for docs/user-guide.md, checked to be real pictures (not blank) on every run.

They are written to a temporary folder; with VENTSET_DOC_IMAGES=1 they also replace docs/images/.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtGui import QImage

from tests.gui.conftest import settle
from ventset.cli import build_parser, request_from_args
from ventset.library import load_library

DOCS = Path(__file__).resolve().parents[2] / "docs" / "images"
WRITE_DOCS = os.environ.get("VENTSET_DOC_IMAGES") == "1"

PATIENTS = {
    "patient-dog-8kg": ["--species", "dog", "--mass", "8 kg", "--name", "Biscuit (invented)", "--tube-id", "7 mm",
                        "--tube-length", "4 cm", "--apparatus", "y_piece_paediatric"],
    "patient-rabbit-hmef": ["--species", "rabbit", "--mass", "1.2 kg", "--name", "Clover (invented)", "--tube-id",
                            "2.5 mm", "--tube-length", "3 cm", "--apparatus", "hmef_paediatric", "--altitude", "600 m"],
    "patient-rabbit-neonatal-hme": ["--species", "rabbit", "--mass", "1.2 kg", "--name", "Clover (invented)",
                                    "--tube-id", "2.5 mm", "--tube-length", "3 cm", "--apparatus", "hme_neonatal",
                                    "--apparatus", "sidestream_adapter_low_dead_space", "--altitude", "600 m"],
    "patient-horse-450kg": ["--species", "horse", "--mass", "450 kg", "--name", "Marigold (invented)", "--tube-id",
                            "26 mm", "--tube-length", "12 cm", "--apparatus", "y_piece_large_animal"],
}


def _request(args):
    lib = load_library()
    return request_from_args(build_parser().parse_args(["plan", *args]), lib)


def _save(widget, name: str, tmp_path: Path) -> QImage:
    img = widget.grab().toImage()
    assert img.save(str(tmp_path / f"{name}.png"))
    if WRITE_DOCS:
        DOCS.mkdir(parents=True, exist_ok=True)
        assert img.save(str(DOCS / f"{name}.png"))
    return img


def _not_blank(img: QImage) -> None:
    img = img.convertToFormat(QImage.Format.Format_RGB32)
    arr = np.frombuffer(img.constBits(), dtype=np.uint32, count=img.bytesPerLine() // 4 * img.height())
    assert img.width() > 50 and img.height() > 30
    assert len(np.unique(arr)) > 12  # text, lines and fills, not one flat colour


@pytest.mark.parametrize("name", list(PATIENTS))
def test_patient_screenshots(name, make_window, tmp_path):
    w = make_window(_request(PATIENTS[name]))
    w.set_theme("day")
    settle(w)
    _not_blank(_save(w, name, tmp_path))


def test_part_screenshots(qtbot, make_window, tmp_path):
    w = make_window()
    w.set_theme("day")
    settle(w)
    _not_blank(_save(w, "window", tmp_path))
    p = w.controller.plan
    w.map_plot.probe_point(p.ventilation.tidal_volume_ml * 1.25, p.ventilation.rate_per_min * 1.2)
    settle(w)
    parts = {"part-inputs": w.form_scroll, "part-status": w.status, "part-settings": w.settings_panel,
             "part-cautions": w.cautions, "part-breath": w.breath_plot, "part-map": w.map_plot,
             "part-waves": w.wave_plot, "part-sensitivity": w.sens_plot, "part-notice": w.notice}
    for name, widget in parts.items():
        _not_blank(_save(widget, name, tmp_path))
    for index, name in ((1, "part-derived"), (2, "part-assumptions")):
        w.tabs.setCurrentIndex(index)
        settle(w)
        _not_blank(_save(w.tabs, name, tmp_path))
    w.tabs.setCurrentIndex(0)
    for key in ("night", "contrast"):
        w.set_theme(key)
        settle(w)
        _not_blank(_save(w, f"theme-{key}", tmp_path))
    w.set_theme("day")


def test_stale_screenshot(qtbot, make_window, tmp_path):
    w = make_window()
    w.set_theme("day")
    row = w.form.rows["mass"]
    row.edit.setFocus()
    row.edit.selectAll()
    qtbot.keyClicks(row.edit, "42,5")
    settle(w)
    assert w.controller.stale
    _not_blank(_save(w, "stale", tmp_path))


def test_acknowledgement_screenshot(qtbot, tmp_path):
    from ventset.gui.ack import AcknowledgementDialog

    dlg = AcknowledgementDialog()
    qtbot.addWidget(dlg)
    dlg.show()
    qtbot.waitExposed(dlg)
    _not_blank(_save(dlg, "acknowledgement", tmp_path))
