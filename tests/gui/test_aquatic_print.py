"""The printed gill irrigation plan (ventset.gui.aquatic_print): the flow, the standing notice, every caution and
every assumption with its source, on one page or continued on a second, never dropped.

Checked from outside Qt with poppler-utils (pdftotext, pdftoppm, pdfinfo; installed by scripts/setup.sh --test).
"""

from __future__ import annotations

import re
import shutil
import subprocess
from datetime import datetime
from pathlib import Path

import pytest

from ventset import storage
from ventset.aquatic.irrigation import IrrigationRequest, plan_irrigation
from ventset.cli import main
from ventset.model import STANDING_NOTICE

aquatic_print = pytest.importorskip("ventset.gui.aquatic_print")

POPPLER = all(shutil.which(t) for t in ("pdftotext", "pdftoppm", "pdfinfo"))
needs_poppler = pytest.mark.skipif(not POPPLER, reason="pdftotext/pdftoppm/pdfinfo missing: run "
                                                       "'bash scripts/setup.sh --test' (Debian poppler-utils)")
WHEN = datetime(2024, 6, 3, 8, 15)
# The reference sheet's worked example (A5.3): a 2 kg koi at 20 °C in fresh water, resting 80 mg/kg/h, no stress
# factor: 0.98 L/min at extraction 0.3, 1.47 L/min at 0.2 (as in tests/test_aquatic_irrigation.py).
KOI = ["irrigate", "--species", "koi", "--mass", "2 kg", "--water-temperature", "20", "--salinity", "0", "--vo2", "80",
       "--demand-factor", "1", "--name", "Goldie <b>(invented)</b>"]


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _text(pdf: Path, *extra: str) -> str:
    out = subprocess.run(["pdftotext", *extra, str(pdf), "-"], capture_output=True, text=True, check=True).stdout
    return " ".join(out.split())


def _squeezed(text: str) -> str:
    """Without white space or hyphens: a line may wrap after a slash, or after a hyphen that pdftotext then drops."""
    return "".join(text.split()).replace("-", "")


def _tile(pdf: Path, i: int) -> str:
    """The text inside the i-th large-type box of page 1 (pdftotext crops in points at its default 72 dpi)."""
    m = aquatic_print
    width = (595 - 2 * m.MARGIN - 3 * 6) / 4
    x, y = m.MARGIN + i * (width + 6), m.TOP + m.HEADER
    return _text(pdf, "-f", "1", "-l", "1", "-x", str(int(x) + 1), "-y", str(int(y) + 1), "-W", str(int(width) - 2),
                 "-H", "56")


def _pages(pdf: Path) -> int:
    meta = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True, check=True).stdout
    return int(re.search(r"^Pages:\s+(\d+)$", meta, re.M).group(1))


def _ink(png: Path) -> float:
    """The share of pixels that are not white in a rendered page."""
    from PySide6.QtGui import QImage

    img = QImage(str(png))
    assert not img.isNull() and img.width() > 400
    dark = sum(1 for y in range(0, img.height(), 3) for x in range(0, img.width(), 3)
               if img.pixelColor(x, y).lightness() < 200)
    return dark / ((img.height() // 3 + 1) * (img.width() // 3 + 1))


@needs_poppler
def test_irrigate_pdf_is_one_page_with_the_flow_and_the_standing_notice(qapp, tmp_path, capsys):
    pdf, case = tmp_path / "koi.pdf", tmp_path / "goldie.ventcase"
    assert main([*KOI, "--pdf", str(pdf), "--save", str(case)]) == 0
    assert f"wrote printed irrigation plan to {pdf}" in capsys.readouterr().err
    assert pdf.read_bytes().startswith(b"%PDF") and _pages(pdf) == 1
    text = _text(pdf)
    tiles = [_tile(pdf, i) for i in range(4)]  # the large-type numbers at the top, read from their boxes
    flow = float(re.fullmatch(r"Flow to set ([\d.]+) L/min .*mouth to gills", tiles[0]).group(1))
    assert flow == pytest.approx(0.98, abs=0.005)  # reference sheet A5.3
    lo, hi = map(float, re.match(r"Flow range ([\d.]+)-([\d.]+) L/min", tiles[1]).groups())
    assert (lo, hi) == pytest.approx((0.98, 1.47), abs=0.005)  # reference sheet A5.3: extraction 0.3 to 0.2
    assert tiles[2].startswith("O2 in the supply 9.09 mg/L")  # Garcia & Gordon 1992 at 20 °C, S 0 (sheet A5.3)
    assert tiles[3].startswith("O2 need 160 mg/h")  # 80 mg/kg/h × 2 kg × 1 (sheet A5.3)
    assert " ".join(STANDING_NOTICE.split()) in text
    assert "Goldie <b>(invented)</b>" in text  # user text is printed as typed, never as markup
    plan = plan_irrigation(IrrigationRequest("koi", 2.0, 20.0, 0.0, vo2_mg_kg_h=80.0, demand_factor=1.0))
    assert all(c.code in text for c in plan.cautions)
    assert all(_squeezed(a.source) in _squeezed(text) for a in plan.assumptions)  # every assumption's source
    assert "Veterinarian (name)" in text and "page 1 of 1" in text and "case goldie.ventcase" in text
    subprocess.run(["pdftoppm", "-png", "-r", "60", str(pdf), str(tmp_path / "page")], check=True)
    png = tmp_path / "page-1.png"
    assert png.exists() and 0.02 < _ink(png) < 0.5  # something is drawn, and not a black page


@needs_poppler
def test_a_long_plan_continues_on_a_second_page_and_drops_nothing(qapp, tmp_path):
    # A shark in poorly oxygenated sea water raises the most cautions: they and the sources need a second page.
    plan = plan_irrigation(IrrigationRequest("shark", 10.0, 24.0, 35.0, saturation_percent=60.0, duration_min=240,
                                             system_volume_l=200.0, name="Fin (invented)"))
    pdf = tmp_path / "shark.pdf"
    info = aquatic_print.write_irrigation_pdf(plan, pdf, when=WHEN)
    assert info.pages == _pages(pdf) == 2
    assert info.cautions == len(plan.cautions) and info.assumptions == len(plan.assumptions)
    text = _text(pdf)
    assert all(c.code in text for c in plan.cautions) and "RAM_VENTILATOR_NEEDS_CONTINUOUS_FLOW" in text
    assert all(_squeezed(f"{a.name}: ") in _squeezed(text) and _squeezed(a.source) in _squeezed(text)
               for a in plan.assumptions)
    for page in (1, 2):  # the standing notice and the patient on every page
        one = _text(pdf, "-f", str(page), "-l", str(page))
        assert " ".join(STANDING_NOTICE.split()) in one and "Fin (invented)" in one
        assert f"page {page} of 2" in one
    assert "Continued on page 2" in _text(pdf, "-f", "1", "-l", "1")
    assert "Gill irrigation plan (continued)" in _text(pdf, "-f", "2", "-l", "2")
    assert "printed 2024-06-03 08:15" in text


@needs_poppler
def test_us_letter_paper(qapp, tmp_path):
    plan = plan_irrigation(IrrigationRequest("koi", 2.0, 20.0, 0.0))
    pdf = tmp_path / "letter.pdf"
    info = aquatic_print.write_irrigation_pdf(plan, pdf, when=WHEN, paper="Letter")
    meta = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True, check=True).stdout
    assert re.search(r"Page size:\s+612(\.\d+)? x 792(\.\d+)? pts", meta) and info.pages == _pages(pdf) == 1
    assert "Flow to set" in _text(pdf) and _squeezed(STANDING_NOTICE) in _squeezed(_text(pdf))


def test_an_unwritable_pdf_is_one_line(qapp, tmp_path, capsys):
    assert main([*KOI, "--pdf", str(tmp_path / "no" / "x.pdf")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "does not exist" in err and "Traceback" not in err
