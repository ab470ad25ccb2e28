"""The printed plan (ventset.gui.printing): one PDF page that holds the settings, notice and signature line.

Checked from outside Qt with poppler-utils (pdftotext, pdftoppm, pdfinfo; installed by scripts/setup.sh --test).
"""

from __future__ import annotations

import dataclasses
import html
import os
import re
import shutil
import subprocess
import sys
from datetime import datetime
from pathlib import Path

import pytest

from ventset import __version__, storage
from ventset.library import load_library
from ventset.model import STANDING_NOTICE, ApparatusPart, Caution, Circuit, Patient, Request, Targets
from ventset.planner import plan
from ventset.units import fmt

printing = pytest.importorskip("ventset.gui.printing")

ROOT = Path(__file__).resolve().parents[2]
LIB = load_library()
POPPLER = all(shutil.which(t) for t in ("pdftotext", "pdftoppm", "pdfinfo"))
needs_poppler = pytest.mark.skipif(not POPPLER, reason="pdftotext/pdftoppm/pdfinfo missing: run "
                                                       "'bash scripts/setup.sh --test' (Debian poppler-utils)")
WHEN = datetime(2024, 6, 3, 8, 15)


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _plan(mode=None, name="Clementine (invented)"):
    req = Request(Patient("dog", 27.0, name=name),
                  Circuit(parts=(ApparatusPart("Clinic HME, adult", 55.0), ApparatusPart("Y-piece", 7.5)),
                          tube_id_mm=9.0, tube_length_cm=7.0, mode=mode), Targets(peep_cmh2o=5.0))
    return plan(req, LIB)


def _text(pdf: Path, *extra: str) -> str:
    return subprocess.run(["pdftotext", *extra, str(pdf), "-"], capture_output=True, text=True, check=True).stdout


def _flat(text: str) -> str:
    return " ".join(text.split())


def _write(tmp_path, p, name="plan.pdf", **kw) -> tuple[Path, printing.PageInfo]:
    path = tmp_path / name
    info = printing.write_plan_pdf(p, path, when=WHEN, case_name="clementine.ventcase", **kw)
    return path, info


@needs_poppler
def test_pdf_holds_settings_notice_signature_and_versions(qapp, tmp_path):
    p = _plan()
    path, info = _write(tmp_path, p)
    assert path.read_bytes().startswith(b"%PDF")
    meta = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    assert re.search(r"^Pages:\s+1$", meta, re.M)
    assert re.search(r"Page size:\s+595(\.\d+)? x 842(\.\d+)? pts", meta)  # A4
    text = _flat(_text(path))
    for tile in printing.setting_tiles(p):
        assert f"{tile.value} {tile.unit}".strip() in text, tile
    v, pr = p.ventilation, p.pressures
    assert fmt(v.set_tidal_volume_ml) in text and fmt(v.rate_per_min) in text and fmt(pr.peep_cmh2o) in text
    assert _flat(STANDING_NOTICE) in text
    assert "Clementine (invented)" in text and "Dog · 27 kg" in text
    assert "Veterinarian (name)" in text and "Signature" in text and "Date and time" in text
    assert f"ventset {__version__}" in text and f"species data {LIB.species_version}" in text
    assert "printed 2024-06-03 08:15" in text and "clementine.ventcase" in text
    assert "Clinic HME, adult 55 mL; Y-piece 7.5 mL = 62.5 mL" in text
    for c in p.cautions:
        assert c.code in text
    assert info.cautions_omitted == 0 and info.assumptions_omitted == 0
    for a in p.assumptions:  # every assumption is on the page, with its source
        assert _flat(f"{a.name}:") in text and _flat(a.source)[:40] in text
    assert not re.search("[\ufb00-\ufb06]", text)  # no ligature glyphs: 'Inspiratory flow' extracts as typed
    assert "Inspiratory flow" in text


def _word_heights(pdf: Path) -> list[tuple[str, float]]:
    out = _text(pdf, "-bbox")
    words = re.findall(r'<word xMin="[\d.]+" yMin="([\d.]+)" xMax="[\d.]+" yMax="([\d.]+)">([^<]*)</word>', out)
    return [(html.unescape(w), float(y2) - float(y1)) for y1, y2, w in words]


@needs_poppler
def test_settings_are_in_large_type_and_assumptions_in_small(qapp, tmp_path):
    p = _plan()
    path, _ = _write(tmp_path, p)
    heights = _word_heights(path)
    rate = [h for w, h in heights if w == fmt(p.ventilation.rate_per_min)]
    kleiber = [h for w, h in heights if w.startswith("Kleiber")]
    notice = [h for w, h in heights if w == "prescription."]
    assert rate and kleiber and notice
    assert max(rate) > 2.5 * max(notice) > 2.5 * min(kleiber)  # 24 pt settings, 8.5 pt notice, 6.5 pt sources
    assert max(rate) > 20  # points


@needs_poppler
def test_page_renders_with_clear_margins(qapp, tmp_path):
    from PySide6.QtGui import QImage

    path, info = _write(tmp_path, _plan())
    subprocess.run(["pdftoppm", "-r", "50", "-png", str(path), str(tmp_path / "page")], check=True)
    (png,) = tmp_path.glob("page*.png")
    img = QImage(str(png))
    assert abs(img.width() - 413) <= 1 and abs(img.height() - 585) <= 1  # A4 at 50 dpi

    def dark_rows(y0: int, y1: int) -> int:
        return sum(any(img.pixelColor(x, y).lightness() < 200 for x in range(0, img.width(), 2))
                   for y in range(y0, y1))

    mm = 50 / 25.4
    assert dark_rows(0, int(14 * mm)) == 0  # the top edge is left clear for the board clip
    assert dark_rows(img.height() - int(5 * mm), img.height()) == 0
    assert dark_rows(int(20 * mm), int(60 * mm)) > 20  # the settings are there
    assert info.bottom_pt <= 842 - 14


@needs_poppler
def test_too_much_to_fit_puts_important_first_and_counts_the_rest(qapp, tmp_path):
    p = _plan()
    extra = tuple(Caution("info", f"INVENTED_{i}", "An invented note to crowd the page for this test; it is long "
                          "enough to wrap onto a second printed line of the caution list. " * 2) for i in range(16))
    crowded = dataclasses.replace(p, cautions=p.cautions + extra)
    path, info = _write(tmp_path, crowded)
    text = _flat(_text(path))
    assert info.assumptions_omitted > 0 and info.assumptions_shown >= 3
    assert f"{info.assumptions_omitted} more assumption(s) not shown" in text and "ventset show CASE" in text
    assert info.cautions_omitted > 0 and f"{info.cautions_omitted} more caution(s) not shown" in text
    for c in p.cautions:  # the plan's own (more severe) cautions come before the crowd
        assert c.code in text
    shown = printing.ordered_assumptions(crowded)[: info.assumptions_shown]
    assert {printing.assumption_rank(a.name) for a in shown} == {0}  # the most important first
    assert "Target PaCO2:" in text and _flat(STANDING_NOTICE) in text and "Signature" in text
    meta = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    assert re.search(r"^Pages:\s+1$", meta, re.M)


@needs_poppler
def test_pressure_mode_letter_paper_and_a_long_name(qapp, tmp_path):
    p = _plan(mode="pressure", name="Clementine " + "Featherstonehaugh-" * 8)
    path, _ = _write(tmp_path, p, paper="Letter")
    meta = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    assert re.search(r"Page size:\s+612(\.\d+)? x 792(\.\d+)? pts", meta)
    text = _flat(_text(path))
    assert "Inspiratory pressure" in text and fmt(p.pressures.inspiratory_pressure_cmh2o) in text
    assert "Tidal volume (expected)" in text and "…" in text  # the name is shortened, not overprinted


def test_assumption_ranking_puts_targets_and_limits_first():
    ranks = {a.name: printing.assumption_rank(a.name) for a in _plan().assumptions}
    assert ranks["Target PaCO2"] == 0 and ranks["Pressure limit"] == 0 and ranks["Tidal volume range"] == 0
    assert ranks["Q10"] == 2 and ranks["Water vapour pressure"] == 3


def test_page_image_for_preview(qapp):
    img = printing.plan_page_image(_plan(), 600, when=WHEN)
    assert img.width() == 600 and abs(img.height() - 600 * 842 / 595) <= 1
    assert not img.isNull()


def test_write_failure_is_a_clear_error(qapp, tmp_path):
    with pytest.raises(storage.WriteError, match="does not exist"):
        printing.write_plan_pdf(_plan(), tmp_path / "missing" / "p.pdf")


@needs_poppler
def test_cli_writes_the_pdf_headless_without_a_display(tmp_path):
    pdf = tmp_path / "cli.pdf"
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")}
    env.update(PYTHONPATH=str(ROOT), **{storage.DATA_DIR_ENV: str(tmp_path / "data")})
    proc = subprocess.run([sys.executable, "-m", "ventset", "plan", "--species", "cat", "--mass", "4.1 kg", "--name",
                           "Moth (invented)", "--json", "--pdf", str(pdf)], env=env, capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.lstrip().startswith("{") and f"wrote printed plan to {pdf}" in proc.stderr
    assert "Moth (invented)" in _text(pdf)
    bad = subprocess.run([sys.executable, "-m", "ventset", "plan", "--species", "cat", "--mass", "4 kg", "--pdf",
                          str(tmp_path / "no" / "x.pdf")], env=env, capture_output=True, text=True, timeout=120)
    assert bad.returncode == 2 and bad.stderr.count("\n") == 1 and "does not exist" in bad.stderr
