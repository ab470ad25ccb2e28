"""`ventset plan` and friends: output shape and one-line errors with exit status 2."""

import json
import subprocess
import sys

import pytest

from ventset.cli import main

REQUIRED = {
    "metabolism": {"metabolic_rate_w", "vo2_ml_min", "vco2_ml_min", "rq"},
    "dead_space": {"anatomical_ml", "apparatus_ml", "alveolar_ml", "total_ml"},
    "ventilation": {"alveolar_ml_min", "minute_ml_min", "tidal_volume_ml", "set_tidal_volume_ml", "rate_per_min",
                    "ti_s", "te_s", "inspiratory_flow_l_min"},
    "pressures": {"peep_cmh2o", "plateau_cmh2o", "peak_cmh2o", "driving_cmh2o"},
    "oxygen": {"pao2_alveolar_mmhg", "min_o2_flow_ml_min"},
}


def run(capsys, *args):
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_json_has_documented_keys(capsys):
    code, out, _ = run(capsys, "plan", "--species", "dog", "--mass", "20 kg", "--apparatus", "hme=12 mL", "--json")
    assert code == 0
    data = json.loads(out)
    for section, keys in REQUIRED.items():
        assert keys <= set(data[section]), section
    assert data["cautions"] and {"severity", "code", "message"} <= set(data["cautions"][0])
    assert data["assumptions"] and {"name", "value", "unit", "source"} <= set(data["assumptions"][0])
    ds = data["dead_space"]
    assert ds["apparatus_parts_ml"] == pytest.approx(12.0)
    # no tube entered: the usual tube for 20 kg counts (issue 9), so apparatus = parts + tube
    assert ds["tube_ml"] > 0
    assert ds["apparatus_ml"] == pytest.approx(12.0 + ds["tube_ml"])
    assert "licensed veterinarian" in data["standing_notice"]


def test_text_output_has_settings_and_notice(capsys):
    code, out, _ = run(capsys, "plan", "--species", "cat", "--mass", "4 kg")
    assert code == 0 and "Set tidal volume" in out and "NOTICE:" in out and "licensed veterinarian" in out


def test_units_on_the_command_line(capsys):
    _, a, _ = run(capsys, "plan", "--species", "dog", "--mass", "20 kg", "--target-paco2", "40 mmHg", "--json")
    _, b, _ = run(capsys, "plan", "--species", "dog", "--mass", "44.0924524 lb", "--target-paco2", "5.33289 kPa",
                  "--json")
    va, vb = json.loads(a)["ventilation"], json.loads(b)["ventilation"]
    assert vb["rate_per_min"] == pytest.approx(va["rate_per_min"], rel=1e-4)


def test_metabolic_rate_units(capsys):
    outs = [json.loads(run(capsys, "plan", "--species", "dog", "--mass", "20 kg", "--metabolic-rate", m,
                           "--json")[1])["metabolism"]["metabolic_rate_w"] for m in ("60 W", "1239 kcal/day",
                                                                                   "216 kJ/h")]
    # 1239 kcal/day × 4184 J / 86400 s = 60.0 W; 216 kJ/h = 60 W.
    assert outs == pytest.approx([60.0, 60.0, 60.0], abs=0.01)


@pytest.mark.parametrize(("args", "field"), [
    (["--mass", "-3 kg"], "--mass"),
    (["--mass", "0"], "--mass"),
    (["--mass", "nan"], "--mass"),
    (["--mass", "inf kg"], "--mass"),
    (["--mass", "5 mmHg"], "--mass"),
    (["--mass", ""], "--mass"),
    (["--mass", "20 kg", "--target-paco2", "40 kg"], "--target-paco2"),
    (["--mass", "20 kg", "--fio2", "3"], "--fio2"),
    (["--mass", "20 kg", "--apparatus", "hme=-2 mL"], "--apparatus"),
    (["--mass", "20 kg", "--apparatus", "no_such_part"], "--apparatus"),
    (["--mass", "20 kg", "--body-temperature", "380 degC"], "--body-temperature"),
])
def test_bad_input_exits_2_naming_the_field(capsys, args, field):
    code, out, err = run(capsys, "plan", "--species", "dog", *args)
    assert code == 2 and out == ""
    assert field in err and len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_fifty_tonne_mouse(capsys):
    code, _, err = run(capsys, "plan", "--species", "mouse", "--mass", "50 t")
    assert code == 2 and "--mass" in err
    code, _, err = run(capsys, "plan", "--species", "mouse", "--mass", "5 kg")
    assert code == 2 and "--mass (Body mass)" in err and "Mouse" in err


def test_unknown_species(capsys):
    code, _, err = run(capsys, "plan", "--species", "unicorn", "--mass", "20 kg")
    assert code == 2 and "--species" in err


def test_empty_species(capsys):
    code, _, err = run(capsys, "plan", "--species", "", "--mass", "20 kg")
    assert code == 2 and "--species" in err


def test_species_list(capsys):
    code, out, _ = run(capsys, "species")
    assert code == 0 and "dog" in out and "chelonian" in out and len(out.splitlines()) >= 26


def test_missing_argument_is_one_line_exit_2():
    r = subprocess.run([sys.executable, "-m", "ventset", "plan", "--mass", "20 kg"], capture_output=True, text=True)
    assert r.returncode == 2 and "--species" in r.stderr and "Traceback" not in r.stderr


def test_demo_plan(capsys):
    code, out, _ = run(capsys, "demo")
    assert code == 0 and "demo" in out.lower() and "Set tidal volume" in out


@pytest.mark.parametrize("command", ["plan", "adjust", "deadspace", "species", "parts", "show"])
def test_help_of_every_command(command):
    # argparse treats '%' in help text as a format code; a bare one crashes --help.
    r = subprocess.run([sys.executable, "-m", "ventset", command, "--help"], capture_output=True, text=True)
    assert r.returncode == 0 and "usage" in r.stdout and "Traceback" not in r.stderr


def test_custom_species_is_named_and_cautioned(capsys):
    code, out, _ = run(capsys, "plan", "--species", "marsupial", "--custom-species", "Tree kangaroo", "--mass", "8 kg",
                       "--json")
    data = json.loads(out)
    assert code == 0 and data["patient"]["species_label"].startswith("Tree kangaroo")
    assert any(c["code"] == "CUSTOM_SPECIES" for c in data["cautions"])


def test_wrong_unit_for_fio2_names_percent(capsys):
    code, _, err = run(capsys, "plan", "--species", "dog", "--mass", "20 kg", "--fio2", "50 kg")
    assert code == 2 and "--fio2" in err and "%" in err
