"""Command line: `plan --save`, `show`, `clinic-parts`, and clean failures (exit 2, one line)."""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from ventset import cases, partslib, storage
from ventset.cli import main

ROOT = Path(__file__).resolve().parent.parent
PLAN_ARGS = ["plan", "--species", "dog", "--mass", "24 kg", "--name", "Tansy (invented)", "--apparatus",
             "hme_paediatric", "--apparatus", "clinic elbow=4 mL", "--tube-id", "8 mm", "--tube-length", "6 cm",
             "--peep", "4"]


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _run(capsys, *args) -> tuple[int, str, str]:
    rc = main(list(args))
    out, err = capsys.readouterr()
    return rc, out, err


def test_show_prints_exactly_what_plan_printed(tmp_path, capsys):
    case = tmp_path / "tansy.ventcase"
    rc, planned, err = _run(capsys, *PLAN_ARGS, "--save", str(case))
    assert rc == 0 and f"saved case to {case}" in err
    rc, shown, err = _run(capsys, "show", str(case))
    assert rc == 0 and shown == planned and err == ""
    rc, planned_json, _ = _run(capsys, *PLAN_ARGS, "--json")
    rc, shown_json, _ = _run(capsys, "show", str(case), "--json")
    assert shown_json == planned_json
    assert json.loads(shown_json)["patient"]["name"] == "Tansy (invented)"
    rc, kpa, _ = _run(capsys, "show", str(case), "--gas-unit", "kPa")
    rc, kpa_plan, _ = _run(capsys, *PLAN_ARGS, "--gas-unit", "kPa")
    assert kpa == kpa_plan and "kPa" in kpa
    assert cases.recent_files()[0] == case.resolve()


def test_plan_json_with_save_keeps_stdout_pure_json(tmp_path, capsys):
    case = tmp_path / "t.ventcase"
    rc, out, err = _run(capsys, *PLAN_ARGS, "--json", "--save", str(case))
    assert rc == 0 and json.loads(out)["standing_notice"] and "saved case" in err


def test_show_stored_and_summary(tmp_path, capsys):
    case = tmp_path / "t.ventcase"
    _run(capsys, *PLAN_ARGS, "--save", str(case))
    rc, stored, _ = _run(capsys, "show", str(case), "--stored")
    assert rc == 0 and json.loads(stored) == cases.load_case(case).case.plan
    rc, summary, _ = _run(capsys, "show", str(case), "--summary")
    assert rc == 0 and "Tansy (invented) — Dog, 24 kg" in summary
    assert summary.strip().endswith(cases.load_case(case).case.plan["standing_notice"])
    assert len(summary.splitlines()) <= 7


def test_show_reports_a_changed_stored_plan_on_stderr(tmp_path, capsys):
    case = tmp_path / "t.ventcase"
    _run(capsys, *PLAN_ARGS, "--save", str(case))
    data = json.loads(case.read_text(encoding="utf-8"))
    data["plan"]["pressures"]["peep_cmh2o"] = 8.0
    case.write_text(json.dumps(data), encoding="utf-8")
    rc, out, err = _run(capsys, "show", str(case))
    assert rc == 0 and "PEEP: stored 8 cmH2O, now 4 cmH2O" in err and re.search(r"PEEP +4 cmH2O", out)


@pytest.mark.parametrize("content, reason", [
    (b"", "is empty"),
    (b'{"format": "ventset-case", "schema_version": 9}', "newer ventset"),
    (b"[" * 100_000, "nested too deeply"),
    (b"\x89PNG\r\n\x1a\n", "not a text file"),
])
def test_show_on_a_bad_file_exits_2_with_one_line(tmp_path, capsys, content, reason):
    bad = tmp_path / "bad.ventcase"
    bad.write_bytes(content)
    rc, out, err = _run(capsys, "show", str(bad))
    assert rc == 2 and out == ""
    assert err.count("\n") == 1 and reason in err and str(bad) in err and "Traceback" not in err


def test_show_missing_file_and_folder(tmp_path, capsys):
    rc, _, err = _run(capsys, "show", str(tmp_path / "nope.ventcase"))
    assert rc == 2 and "no such file" in err
    rc, _, err = _run(capsys, "show", str(tmp_path))
    assert rc == 2 and "folder, not a file" in err


def test_save_keeps_an_existing_case_with_other_inputs_unless_replace(tmp_path, capsys):
    case = tmp_path / "t.ventcase"
    assert _run(capsys, *PLAN_ARGS, "--save", str(case))[0] == 0
    first = case.read_bytes()
    assert _run(capsys, *PLAN_ARGS, "--save", str(case))[0] == 0  # same inputs: saved again
    other = [*PLAN_ARGS[:4], "25 kg", *PLAN_ARGS[5:]]
    rc, out, err = _run(capsys, *other, "--save", str(case))
    assert rc == 2 and "add --replace" in err and out == ""
    assert cases.load_case(case).case.request.patient.mass_kg == 24.0 and case.read_bytes() != b""
    assert json.loads(first)["created_at"] == cases.load_case(case).case.created_at
    rc, _, _ = _run(capsys, *other, "--save", str(case), "--replace")
    assert rc == 0 and cases.load_case(case).case.request.patient.mass_kg == 25.0


def test_save_refuses_to_overwrite_a_file_that_is_not_a_case(tmp_path, capsys):
    notes = tmp_path / "notes.txt"
    notes.write_text("do not lose me")
    rc, out, err = _run(capsys, *PLAN_ARGS, "--save", str(notes))
    assert rc == 2 and "not a readable ventset case" in err and err.count("\n") == 1
    assert notes.read_text() == "do not lose me"


def test_clinic_parts_add_list_remove_preset_export_import(tmp_path, capsys):
    rc, _, err = _run(capsys, "clinic-parts", "add", "Blue HME, cat", "9.5 mL", "--measured-by", "R. Okafor",
                      "--measured-on", "2024-02-11", "--note", "water fill")
    assert rc == 0 and "added part 'Blue HME, cat' (9.5 mL)" in err
    rc, _, err = _run(capsys, "clinic-parts", "add", "blue hme, cat", "10")
    assert rc == 2 and "already in the clinic library" in err
    rc, _, err = _run(capsys, "clinic-parts", "add", "Broken", "-3 mL")
    assert rc == 2 and "Part volume" in err
    rc, _, err = _run(capsys, "clinic-parts", "preset-add", "Cat theatre", "--part", "Blue HME, cat", "--part",
                      "y_piece_paediatric", "--part", "short elbow=2.5 mL", "--compressible-volume", "0.6",
                      "--circuit", "non_rebreathing")
    assert rc == 0 and "3 parts, 15.5 mL" in err  # 9.5 + 3.5 (catalogue) + 2.5
    rc, out, _ = _run(capsys, "clinic-parts", "list")
    assert "Blue HME, cat" in out and "measured by R. Okafor on 2024-02-11" in out and "Cat theatre" in out
    assert "hme_adult" not in out
    rc, out, _ = _run(capsys, "clinic-parts", "list", "--all")
    assert "catalogue" in out and "hme_adult" in out
    rc, out, _ = _run(capsys, "clinic-parts", "list", "--json")
    doc = json.loads(out)
    assert doc["parts"][0]["volume_ml"] == 9.5 and doc["presets"][0]["circuit_type"] == "non_rebreathing"

    shared = tmp_path / "shared.json"
    rc, _, err = _run(capsys, "clinic-parts", "export", str(shared))
    assert rc == 0 and "exported 1 parts, 1 presets and 0 ventilators" in err
    rc, _, err = _run(capsys, "clinic-parts", "remove", "Blue HME, cat")
    assert rc == 0
    rc, _, err = _run(capsys, "clinic-parts", "add", "Blue HME, cat", "11 mL")
    rc, _, err = _run(capsys, "clinic-parts", "import", str(shared))
    assert rc == 1 and "Conflicts (1)" in err and "kept this machine's entry" in err  # reported, not overwritten
    assert partslib.load_clinic_library().part("Blue HME, cat").volume_ml == 11.0
    rc, _, err = _run(capsys, "clinic-parts", "import", str(shared), "--on-conflict", "rename")
    assert rc == 0 and partslib.load_clinic_library().part("Blue HME, cat (imported)").volume_ml == 9.5
    rc, _, err = _run(capsys, "clinic-parts", "remove", "nothing such")
    assert rc == 2 and "not in the clinic library" in err


def test_import_of_a_bad_file_exits_2(tmp_path, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text('{"format": "ventset-clinic-parts", "schema_version": 1, "parts": [1]}')
    rc, _, err = _run(capsys, "clinic-parts", "import", str(bad))
    assert rc == 2 and "parts[0] must be an object" in err and err.count("\n") == 1


def test_core_commands_do_not_import_qt(tmp_path):
    code = ("import sys; from ventset.cli import main; "
            f"rc = main({PLAN_ARGS + ['--save', str(tmp_path / 'q.ventcase')]!r}); "
            f"rc2 = main(['show', {str(tmp_path / 'q.ventcase')!r}]); "
            "assert rc == rc2 == 0; assert not [m for m in sys.modules if m.startswith(('PySide6', 'pyqtgraph'))]")
    env = {**os.environ, "PYTHONPATH": str(ROOT), storage.DATA_DIR_ENV: str(tmp_path / "data")}
    proc = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0, proc.stderr


def test_plan_uses_a_clinic_part_by_name(tmp_path, monkeypatch, capsys):
    import json

    from ventset.cli import main

    monkeypatch.setenv("VENTSET_DATA_DIR", str(tmp_path))
    assert main(["clinic-parts", "add", "Blue elbow", "4.5 mL", "--measured-by", "QA"]) == 0
    capsys.readouterr()
    assert main(["plan", "--species", "cat", "--mass", "4 kg", "--apparatus", "Blue elbow", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["dead_space"]["apparatus_parts_ml"] == 4.5
