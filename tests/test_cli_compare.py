"""Command line: `ventset compare` and `ventset chart` (output shapes, agreement with `plan`, one-line errors)."""

from __future__ import annotations

import csv
import io
import json

import pytest

from ventset import storage
from ventset.cli import main
from ventset.model import STANDING_NOTICE

CAT = ["--species", "cat", "--mass", "3 kg"]


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _run(capsys, *args) -> tuple[int, str, str]:
    rc = main(list(args))
    out, err = capsys.readouterr()
    return rc, out, err


def test_compare_json_holds_each_plan_as_plan_json_prints_it(capsys):
    rc, out, err = _run(capsys, "compare", *CAT, "--setup", "none", "--setup", "apparatus=hme_paediatric", "--json")
    assert rc == 0 and err == ""
    doc = json.loads(out)
    assert set(doc) >= {"setups", "differences"} and len(doc["setups"]) == 2
    _, bare, _ = _run(capsys, "plan", *CAT, "--json")
    _, hme, _ = _run(capsys, "plan", *CAT, "--apparatus", "hme_paediatric", "--json")
    assert doc["setups"] == [json.loads(bare), json.loads(hme)]
    minute = next(d for d in doc["differences"] if d.get("key") == "ventilation.minute_ml_min")
    assert minute["values"][1] > minute["values"][0]


def test_compare_text_marks_differences_and_shows_the_notice(capsys):
    rc, out, _ = _run(capsys, "compare", *CAT, "--setup", "none", "--setup", "circuit=rebreathing_paediatric",
                      "--setup", "add=hme_neonatal")
    assert rc == 0
    assert "[3] add=hme_neonatal" in out and "* differs between the setups" in out
    assert "NOTICE: " + STANDING_NOTICE in out
    assert any(line.startswith("* Fresh gas flow") for line in out.splitlines())
    assert any(line.startswith("  CO2 output") for line in out.splitlines())


@pytest.mark.parametrize("setups,shown", [
    (["none"], "--setup: — 1 given; compare 2 to 4 setups"),
    (["none", "tube=wide"], "--setup (setup 2, Tube internal diameter): wide — is not a number"),
    (["none", "peeep=5"], "did you mean 'peep'"),
    (["none", "apparatus=unknown_part"], "--setup (setup 2, Apparatus): unknown_part — is not a catalogue"),
])
def test_compare_bad_setups_fail_in_one_line(capsys, setups, shown):
    args = [x for s in setups for x in ("--setup", s)]
    rc, out, err = _run(capsys, "compare", *CAT, *args)
    assert rc == 2 and out == "" and err.count("\n") == 1 and shown in err, err


def test_chart_json_rows_equal_single_plans(capsys):
    rc, out, _ = _run(capsys, "chart", "--species", "dog", "--from", "2kg", "--to", "40kg", "--step", "2 kg",
                      "--apparatus", "hme_paediatric", "--json")
    assert rc == 0
    doc = json.loads(out)
    assert doc["standing_notice"] == STANDING_NOTICE and len(doc["rows"]) == 20
    for row in doc["rows"][::5]:
        rc, plan_out, _ = _run(capsys, "plan", "--species", "dog", "--mass", f"{row['mass_kg']} kg", "--apparatus",
                               "hme_paediatric", "--json")
        p = json.loads(plan_out)
        for key in ("tidal_volume_ml", "set_tidal_volume_ml", "rate_per_min", "expected_paco2_mmhg", "minute_ml_min"):
            assert row[key] == pytest.approx(p["ventilation"][key], abs=2e-4), key
        assert row["peak_cmh2o"] == pytest.approx(p["pressures"]["peak_cmh2o"], abs=2e-4)
        assert row["fresh_gas_ml_min"] == pytest.approx(p["oxygen"]["fresh_gas_ml_min"], abs=2e-4)
        assert row["circuit"] == p["oxygen"]["circuit"] and row["limits"] == p["limits"]["binding"]


def test_chart_marks_rows_a_limit_moved(capsys):
    rc, out, _ = _run(capsys, "chart", "--species", "cat", "--masses", "0.5-4 kg", "--rows", "5", "--apparatus",
                      "hme_paediatric", "--json")
    rows = json.loads(out)["rows"]
    assert rows[0]["marks"] and rows[0]["marks"][0].startswith("NO GAS EXCHANGE")
    assert all(r["marks"] for r in rows if not r["target_reached"])
    rc, text, _ = _run(capsys, "chart", "--species", "cat", "--masses", "0.5-4 kg", "--rows", "5", "--apparatus",
                       "hme_paediatric")
    assert "MARKED ROWS" in text and "  [1] 0.5 kg" in text and "NO GAS EXCHANGE" in text
    assert "NOTICE: " + STANDING_NOTICE in text


def test_chart_csv_to_terminal_and_file(capsys, tmp_path):
    rc, out, _ = _run(capsys, "chart", "--species", "cat", "--from", "1 kg", "--to", "6 kg", "--rows", "6", "--csv")
    assert rc == 0
    lines = out.splitlines()
    assert lines[1] == "# NOTICE: " + STANDING_NOTICE
    rows = list(csv.DictReader(io.StringIO("\n".join(x for x in lines if not x.startswith("#")))))
    assert len(rows) == 6 and float(rows[0]["mass_kg"]) == 1.0 and float(rows[-1]["mass_kg"]) == 6.0
    target = tmp_path / "chart.csv"
    rc, out, err = _run(capsys, "chart", "--species", "cat", "--from", "1 kg", "--to", "6 kg", "--rows", "6", "--csv",
                        str(target))
    assert rc == 0 and out == "" and "wrote the chart as CSV" in err
    assert target.read_text(encoding="utf-8").splitlines()[3:] == lines[3:]


def test_chart_uses_a_clinic_preset(capsys):
    _run(capsys, "clinic-parts", "preset-add", "Cat theatre", "--part", "hme_paediatric", "--part", "elbow=3 mL",
         "--circuit", "non_rebreathing")
    rc, out, _ = _run(capsys, "chart", "--species", "cat", "--masses", "2-6kg", "--rows", "3", "--preset",
                      "cat theatre", "--json")
    doc = json.loads(out)
    assert rc == 0 and doc["preset"] == "cat theatre" and {r["circuit"] for r in doc["rows"]} == {"non_rebreathing"}
    assert sum(p["volume_ml"] for p in doc["parts"]) == pytest.approx(23.0)  # 20 mL paediatric HME + 3 mL elbow
    rc, _, err = _run(capsys, "chart", "--species", "cat", "--masses", "2-6kg", "--preset", "nothing like it")
    assert rc == 2 and "--preset: nothing like it — is not a circuit preset" in err


@pytest.mark.parametrize("args,shown", [
    (["--from", "2 kg", "--to", "80 kg"], "--to: 80 kg — must be between"),
    (["--from", "0.01 kg", "--to", "8 kg"], "--from: 0.01 kg — must be between"),
    (["--from", "3 kg", "--to", "1 kg"], "--to: 1 kg — must not be below the lightest mass"),
    (["--from", "2 kg"], "--from: — give the mass range"),
    (["--masses", "2 to 8"], "--masses: 2 to 8 — give a range LO-HI"),
    (["--masses", "2-8kg", "--mass", "3"], "--mass: 3 — a chart takes its masses from --from/--to"),
    (["--masses", "2-8kg", "--step", "-1"], "--step"),
    (["--masses", "2-8kg", "--lean-mass", "3"], "--lean-mass (Lean (ideal) mass): 3.0 — belongs to one animal"),
])
def test_chart_bad_input_fails_in_one_line(capsys, args, shown):
    rc, out, err = _run(capsys, "chart", "--species", "cat", *args)
    assert rc == 2 and out == "" and err.count("\n") == 1 and shown in err, err
