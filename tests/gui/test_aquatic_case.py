"""The Fish irrigation tab's case file and printout (ventset.gui.aquatic_case): save → open gives the same plan and
the same entries, a ventilation case or a hostile file is refused with the reason and the entries are kept, an
out-of-date plan is never saved or printed, and the printout is written."""

from __future__ import annotations

import json
import shutil
import subprocess

import pytest

from ventset import case_irrigation as ci
from ventset import cases, storage
from ventset.aquatic.report import irrigation_to_dict
from ventset.model import STANDING_NOTICE, Patient, Request


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


@pytest.fixture
def panel(qtbot, monkeypatch):
    from ventset.gui.aquatic_case import CaseBar
    from ventset.gui.aquatic_panel import AquaticPanel

    said: list[tuple[str, str, str]] = []
    monkeypatch.setattr(CaseBar, "_message", lambda self, icon, title, text: said.append((icon.name, title, text)))
    p = AquaticPanel()
    qtbot.addWidget(p)
    p.said = said
    return p


def _entries(panel, **values):
    panel.set_values(values)
    panel.replan()
    assert panel.error is None, panel.error


def test_save_then_open_gives_the_same_plan_and_entries(panel, tmp_path):
    _entries(panel, species="shark", name="Fin <i>(invented)</i>", mass="10 kg", **{"water-temperature": "24",
             "salinity": "35 ppt", "saturation": "6.2 mg/L", "system-volume": "300 L", "duration": "1.5 h"})
    planned, entries = irrigation_to_dict(panel.plan), panel.values()
    path = tmp_path / "fin.ventcase"
    assert panel.case_bar.save_case(path) and path.exists()
    assert json.loads(path.read_text())["plan"] == planned
    _entries(panel, species="carp_koi", name="", mass="2 kg", **{"water-temperature": "20", "salinity": "0",
             "saturation": "", "system-volume": "", "duration": ""})
    assert irrigation_to_dict(panel.plan) != planned
    assert panel.case_bar.open_case(path)
    assert irrigation_to_dict(panel.plan) == planned and panel.said == []  # nothing differs, nothing to say
    assert panel.values()["species"] == "shark" and panel.values()["name"] == entries["name"]
    assert panel.edits["duration"].text() == "90 min" and panel.edits["saturation"].text() == "6.2 mg/L"
    assert str(path) in panel.case_bar.status.plainText()


def test_opening_a_ventilation_case_or_a_hostile_file_keeps_the_entries(panel, tmp_path):
    dog = tmp_path / "dog.ventcase"
    cases.save_case(dog, cases.case_for_request(Request(Patient("dog", 20.0))))
    before = panel.values()
    assert not panel.case_bar.open_case(dog)
    icon, title, text = panel.said[-1]
    assert icon == "Warning" and "field 'kind' is 'ventilation'" in text and panel.values() == before
    hostile = tmp_path / "hostile.ventcase"
    ci.save_irrigation_case(hostile, ci.irrigation_case_for_request(ci.IrrigationRequest("koi", 2.0)))
    data = json.loads(hostile.read_text())
    data["request"]["name"] = "Goldie\u202e gk 2"
    hostile.write_text(json.dumps(data))
    assert not panel.case_bar.open_case(hostile)
    assert "field 'request.name' holds an invisible direction control" in panel.said[-1][2]
    assert panel.values() == before


def test_a_stored_plan_that_differs_is_reported_on_opening(panel, tmp_path):
    path = tmp_path / "koi.ventcase"
    ci.save_irrigation_case(path, ci.irrigation_case_for_request(ci.IrrigationRequest("koi", 2.0, 20.0, 0.0)))
    data = json.loads(path.read_text())
    data["plan"]["irrigation"]["flow_l_min"] = 4.0
    path.write_text(json.dumps(data))
    assert panel.case_bar.open_case(path)
    icon, title, text = panel.said[-1]
    assert icon == "Information" and "Irrigation flow: stored 4 L/min, now 1.56 L/min" in text


def test_an_out_of_date_plan_is_never_saved_or_printed(panel, tmp_path):
    panel.set_field("salinity", "60")
    path, pdf = tmp_path / "stale.ventcase", tmp_path / "stale.pdf"
    assert not panel.case_bar.save_case(path) and not path.exists()
    assert "Salinity" in panel.said[-1][2]
    assert panel.case_bar.write_pdf(pdf) is None and not pdf.exists()
    assert panel.edits["salinity"].text() == "60"  # what was typed is kept


def test_a_name_with_a_control_character_marks_the_name(panel):
    panel.set_field("name", "Goldie\x1b[2J")
    panel.replan()
    assert panel.error is not None and panel.error.field == "Patient name"
    assert panel.edits["name"].styleSheet() != ""


@pytest.mark.skipif(not shutil.which("pdftotext"), reason="pdftotext missing (Debian poppler-utils)")
def test_the_printout_is_written_with_the_flow_and_the_notice(panel, tmp_path):
    _entries(panel, species="carp_koi", name="Goldie (invented)", mass="2 kg",
             **{"water-temperature": "20", "salinity": "0"})
    case = tmp_path / "goldie.ventcase"
    assert panel.case_bar.save_case(case)
    pdf = panel.case_bar.write_pdf(tmp_path / "goldie.pdf")
    assert pdf is not None and pdf.read_bytes().startswith(b"%PDF")
    text = " ".join(subprocess.run(["pdftotext", str(pdf), "-"], capture_output=True, text=True,
                                   check=True).stdout.split())
    assert "1.56 L/min" in text  # 2 kg koi at 20 °C, as in tests/test_aquatic_cli.py and the panel's headline
    assert " ".join(STANDING_NOTICE.split()) in text and "Goldie (invented)" in text
    assert "case goldie.ventcase" in text and "1 page" in panel.case_bar.status.plainText()


def test_dialogs_cancelled_change_nothing(panel, tmp_path, monkeypatch):
    from ventset.gui.aquatic_case import CaseBar

    monkeypatch.setattr(CaseBar, "pick_save_path", lambda self, *a: "")
    monkeypatch.setattr(CaseBar, "pick_open_path", lambda self, *a: "")
    before = panel.values()
    assert not panel.case_bar.save_case() and not panel.case_bar.open_case()
    assert panel.case_bar.write_pdf() is None and panel.values() == before and panel.case_bar.path is None
    chosen = tmp_path / "picked"
    monkeypatch.setattr(CaseBar, "pick_save_path", lambda self, *a: str(chosen))
    assert panel.case_bar.save_case() and (tmp_path / "picked.ventcase").exists()
