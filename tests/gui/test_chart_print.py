"""The printed chart: the PDF renders (checked from outside Qt with poppler) and holds the rows, the marks, the
standing notice, the date, the versions and the assumptions."""

from __future__ import annotations

import shutil
import subprocess
from datetime import datetime

import numpy as np
import pytest

from ventset import __version__
from ventset.chart import make_chart
from ventset.cli import main
from ventset.library import load_library
from ventset.model import STANDING_NOTICE, ApparatusPart, Circuit, Patient, Request

chart_print = pytest.importorskip("ventset.gui.chart_print")
POPPLER = all(shutil.which(t) for t in ("pdftotext", "pdfinfo"))
needs_poppler = pytest.mark.skipif(not POPPLER, reason="pdftotext/pdfinfo missing: run "
                                                       "'bash scripts/setup.sh --test' (Debian poppler-utils)")
WHEN = datetime(2024, 6, 3, 8, 15)
LIB = load_library()


def _flat(path) -> str:
    out = subprocess.run(["pdftotext", "-layout", str(path), "-"], capture_output=True, text=True, check=True).stdout
    return " ".join(out.split())


def _pages(path) -> int:
    info = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    return int(next(line.split()[-1] for line in info.splitlines() if line.startswith("Pages:")))


@needs_poppler
def test_chart_pdf_holds_rows_notice_date_versions_and_assumptions(tmp_path):
    chart = make_chart(Request(Patient("dog", 1.0)), np.arange(2.0, 42.0, 2.0), LIB, when=WHEN)
    path = tmp_path / "dog.pdf"
    info = chart_print.write_chart_pdf(chart, path)
    text = _flat(path)
    assert _pages(path) == info.pages == 2 and info.rows == 20
    assert " ".join(STANDING_NOTICE.split()) in text
    assert "Starting ventilation settings by body mass — Dog" in text
    assert "Made 2024-06-03 08:15" in text and f"ventset {__version__}" in text
    for row in range(20):
        assert f"{2 * (row + 1)} kg" in text
    assert "Breathing system by mass (from): 2 kg: Non-rebreathing" in text
    assert "Kleiber 1947" in text and info.assumptions_omitted == 0


@needs_poppler
def test_marked_rows_carry_their_reason_on_every_page(tmp_path):
    req = Request(Patient("cat", 1.0), Circuit(parts=(ApparatusPart("HME, paediatric", 20.0),)))
    chart = make_chart(req, np.geomspace(0.5, 8.0, 70), LIB, when=WHEN)
    path = tmp_path / "cat.pdf"
    info = chart_print.write_chart_pdf(chart, path)
    text = _flat(path)
    assert info.pages >= 3 and _pages(path) == info.pages
    assert text.count(" ".join(STANDING_NOTICE.split())) == info.pages
    assert "[1] 0.5 kg to" in text and "NO GAS EXCHANGE" in text and "TARGET NOT REACHED" in text
    assert all(f"page {p} of {info.pages}" in text for p in range(1, info.pages + 1))


@needs_poppler
def test_cli_chart_pdf(tmp_path, capsys, monkeypatch):
    from ventset import storage

    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    path = tmp_path / "c.pdf"
    rc = main(["chart", "--species", "cat", "--masses", "2-6kg", "--rows", "5", "--pdf", str(path), "--json"])
    out, err = capsys.readouterr()
    assert rc == 0 and f"wrote the chart as PDF to {path}" in err and out.startswith("{")
    assert "Cat" in _flat(path)
