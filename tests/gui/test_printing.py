"""The printed plan (ventset.gui.printing): PDF pages that hold the settings, every caution and assumption, the
anaesthetic record, the standing notice on every page and the signature line; Qt's print preview; paper by locale.

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
from ventset.present.rows import ordered_assumptions, setting_rows
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
    kw.setdefault("paper", "A4")
    info = printing.write_plan_pdf(p, path, when=WHEN, case_name="clementine.ventcase", **kw)
    return path, info


def _pages(pdf: Path) -> int:
    meta = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True, check=True).stdout
    return int(re.search(r"^Pages:\s+(\d+)$", meta, re.M).group(1))


def _page_text(pdf: Path, n: int) -> str:
    return _flat(_text(pdf, "-f", str(n), "-l", str(n)))


def _every_page_has_the_notice_and_its_number(pdf: Path) -> int:
    pages = _pages(pdf)
    for n in range(1, pages + 1):
        text = _page_text(pdf, n)
        assert _flat(STANDING_NOTICE) in text, f"page {n} has no standing notice"
        assert f"page {n} of {pages}" in text
    return pages


@needs_poppler
def test_pdf_holds_settings_notice_signature_and_versions(qapp, tmp_path):
    p = _plan()
    path, info = _write(tmp_path, p)
    assert path.read_bytes().startswith(b"%PDF")
    meta = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    assert re.search(r"Page size:\s+595(\.\d+)? x 842(\.\d+)? pts", meta)  # A4
    assert _every_page_has_the_notice_and_its_number(path) == info.pages
    first = _page_text(path, 1)
    for tile in setting_rows(p):
        assert f"{tile.value} {tile.unit}".strip() in first, tile
    v, pr = p.ventilation, p.pressures
    assert fmt(v.set_tidal_volume_ml) in first and fmt(v.rate_per_min) in first and fmt(pr.peep_cmh2o) in first
    assert "Clementine (invented)" in first and "Dog · 27 kg" in first
    assert "Veterinarian (name)" in first and "Signature" in first and "Date and time" in first
    text = _flat(_text(path))
    assert f"ventset {__version__}" in text and f"species data {LIB.species_version}" in text
    assert "printed 2024-06-03 08:15" in text and "clementine.ventcase" in text
    assert "Clinic HME, adult 55 mL; Y-piece 7.5 mL = 62.5 mL" in text
    for c in p.cautions:
        assert c.code in text
    assert info.cautions_shown == len(p.cautions) and info.assumptions_shown == len(p.assumptions)
    for a in p.assumptions:  # every assumption is printed, with its source
        assert _flat(f"{a.name}:") in text and _flat(a.source)[:40] in text
    assert "not shown" not in text
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
    subprocess.run(["pdftoppm", "-r", "50", "-png", "-f", "1", "-l", "1", str(path), str(tmp_path / "page")],
                   check=True)
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
def test_a_crowded_plan_prints_everything_on_further_pages(qapp, tmp_path):
    p = _plan()
    extra = tuple(Caution("info", f"INVENTED_{i}", "An invented note to crowd the page for this test; it is long "
                          "enough to wrap onto a second printed line of the caution list. " * 2) for i in range(16))
    crowded = dataclasses.replace(p, cautions=p.cautions + extra)
    path, info = _write(tmp_path, crowded)
    assert info.pages >= 2 and _every_page_has_the_notice_and_its_number(path) == info.pages
    text = _flat(_text(path))
    assert info.cautions_shown == len(crowded.cautions) and info.assumptions_shown == len(p.assumptions)
    assert info.cautions_omitted == info.assumptions_omitted == 0 and "not shown" not in text
    for c in crowded.cautions:
        assert c.code in text
    for a in p.assumptions:
        assert _flat(a.source)[:40] in text
    last = _page_text(path, info.pages)
    assert "(continued)" in last and "Signature" not in last  # signed once, on the sheet with the settings
    order = [text.index(_flat(f"{a.name}:")) for a in ordered_assumptions(p)]
    assert order == sorted(order)  # most important first, the rest after, none dropped


@needs_poppler
def test_the_anaesthetic_record_is_printed_in_the_chosen_unit(qapp, tmp_path):
    from ventset.titrate import Measurement, accept, record_measurement

    p = _plan()
    req = p.request
    entries = record_measurement((), req, Measurement(0, 300, 12, etco2_mmhg=52, clock="09:05", note="after "
                                                      "induction (invented)"), library=LIB)
    entries = accept(entries, 0, "proposal")
    entries = record_measurement(entries, req, Measurement(15, 330, 14, paco2_mmhg=46, etco2_mmhg=41, pao2_mmhg=410,
                                                           spo2_percent=99, clock="09:20"), library=LIB)
    path, info = _write(tmp_path, p, record=entries, gas_unit="kPa")
    assert info.record_rows == 2
    text = _flat(_text(path))
    assert "ANAESTHETIC RECORD (2 measurements)" in text
    assert "09:05 (0 min)" in text and "after induction (invented)" in text and "(proposal)" in text
    assert f"{fmt(52 / 7.500615758)} kPa" in text and f"{fmt(46 / 7.500615758)} kPa" in text  # 1 kPa = 7.5006 mmHg
    proposal = entries[0].proposal
    assert f"{fmt(proposal.tidal_volume_ml)} mL × {fmt(proposal.rate_per_min)}/min" in text
    without, _ = _write(tmp_path, p, name="none.pdf")
    assert "ANAESTHETIC RECORD" not in _text(without)


@needs_poppler
def test_no_alveolar_ventilation_prints_the_danger_and_no_settings(qapp, tmp_path):
    req = Request(Patient("cat", 4.0, name="Smudge (invented)"), Circuit(parts=(ApparatusPart("Big filter", 50.0),)),
                  Targets())
    p = plan(req, LIB)
    assert printing.no_gas_exchange(p)  # 50 mL of filter on a 4 kg cat: every breath is dead space
    path, info = _write(tmp_path, p)
    first = _page_text(path, 1)
    assert "NO ALVEOLAR VENTILATION" in first and "No settings are printed" in first
    assert "Set tidal volume" not in first and "Recommended" not in first
    heights = _word_heights(path)
    big = [h for w, h in heights if h > 15]  # the 24 pt setting numbers are over 25 pt high
    assert big and all(h < 22 for h in big)
    assert [h for w, h in heights if w == "ALVEOLAR"][0] > 14  # the danger is what stands out
    assert _every_page_has_the_notice_and_its_number(path) == info.pages


@needs_poppler
def test_pressure_mode_letter_paper_and_a_long_name(qapp, tmp_path):
    p = _plan(mode="pressure", name="Clementine " + "Featherstonehaugh-" * 8)
    path, _ = _write(tmp_path, p, paper="Letter")
    meta = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    assert re.search(r"Page size:\s+612(\.\d+)? x 792(\.\d+)? pts", meta)
    text = _flat(_text(path))
    assert "Inspiratory pressure" in text and fmt(p.pressures.inspiratory_pressure_cmh2o) in text
    assert "Tidal volume (expected)" in text and "…" in text  # the name is shortened, not overprinted


def test_paper_follows_the_locale(monkeypatch):
    assert printing.default_paper("en_US.UTF-8") == "Letter" and printing.default_paper("fr_CA") == "Letter"
    assert printing.default_paper("en_CA.UTF-8") == "Letter"
    for name in ("en_GB.UTF-8", "de_DE", "fr_FR.UTF-8@euro", "en_AU", "C"):
        assert printing.default_paper(name) == "A4", name
    for var in ("LC_ALL", "LC_PAPER", "LANG"):
        monkeypatch.delenv(var, raising=False)
    monkeypatch.setenv("LANG", "en_GB.UTF-8")
    monkeypatch.setenv("LC_PAPER", "en_US.UTF-8")  # POSIX: LC_PAPER over LANG, LC_ALL over both
    assert printing.default_paper() == "Letter"
    monkeypatch.setenv("LC_ALL", "de_DE.UTF-8")
    assert printing.default_paper() == "A4"


def test_page_image_for_preview(qapp):
    img = printing.plan_page_image(_plan(), 600, when=WHEN, paper="A4")
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


@needs_poppler
def test_the_dial_settings_print_under_the_machine_name(qapp, tmp_path):
    # Issue 12: the PDF shows the dial settings under the machine's name, as the text output does.
    req = Request(Patient("horse", 450.0, name="Mistral (invented)"), Circuit(machine="bellows_large_animal"))
    p = plan(req, load_library())
    pdf, _ = _write(tmp_path, p)
    text = _flat(_text(pdf))
    assert "ON THE MACHINE: LARGE-ANIMAL BELLOWS" in text and "TURN THESE" in text
    for row in ("Bellows volume", "Inspiratory flow", "Breaths per minute", "Expected PaCO2 as dialled"):
        assert row in text
    assert fmt(p.machine.evaluation.paco2_mmhg) in text  # the dialled PaCO2, not the ideal one
