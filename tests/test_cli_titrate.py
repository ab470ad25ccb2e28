"""`ventset adjust` and `ventset deadspace` on the command line: JSON shape, units, and bad input."""

import json
import subprocess
import sys

import pytest

from ventset.cli import main

DOG = ["--species", "dog", "--mass", "20 kg", "--tube-id", "8 mm", "--tube-length", "8 cm"]
ADJUST = ["adjust", *DOG, "--tidal-volume", "200 mL", "--rate", "10", "--target-paco2", "40"]


def run_json(capsys, args):
    assert main([*args, "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_adjust_json_has_the_documented_keys(capsys):
    d = run_json(capsys, [*ADJUST, "--measured-paco2", "55", "--measured-etco2", "50", "--measured-pao2", "400"])
    assert d["dead_space"]["total_ml"] > 0
    assert {"alveolar_ml_min", "vco2_ml_min"} <= set(d["measured"])
    for key in ("rate_per_min", "tidal_volume_ml", "alveolar_ml_min", "expected_paco2_mmhg", "plateau_cmh2o"):
        assert isinstance(d["proposal"][key], float)
        assert isinstance(d["partial_step"][key], float)
    assert "fraction_of_change" in d["partial_step"]
    assert all({"severity", "code", "message"} <= set(c) for c in d["cautions"])
    assert "licensed veterinarian" in d["standing_notice"]
    assert d["oxygenation"]["pf_ratio_mmhg"] == pytest.approx(400.0)
    # Alveolar ventilation equation: VT kept, rate × 55/40 (reference sheet §3.4).
    assert d["proposal"]["rate_per_min"] == pytest.approx(10 * 55 / 40, abs=1e-3)
    assert d["proposal"]["expected_paco2_mmhg"] == pytest.approx(40.0, abs=1e-3)
    assert "LARGE_STEP" in {c["code"] for c in d["cautions"]}


def test_kpa_and_mmhg_give_the_same_proposal(capsys):
    # 7.333 kPa = 55.00 mmHg (1 kPa = 7.500615758 mmHg, conventional mmHg).
    a = run_json(capsys, [*ADJUST, "--measured-paco2", "55 mmHg"])
    b = run_json(capsys, [*ADJUST, "--measured-paco2", f"{55 / 7.500615758} kPa"])
    assert a["proposal"]["rate_per_min"] == pytest.approx(b["proposal"]["rate_per_min"], rel=1e-6)


def test_adjust_from_etco2_with_a_preference(capsys):
    d = run_json(capsys, [*ADJUST, "--measured-etco2", "47", "--prefer", "tidal-volume"])
    assert d["measured"]["paco2_used_mmhg"] == pytest.approx(50.0)  # EtCO2 + dog gradient 3 mmHg
    assert d["proposal"]["rate_per_min"] == pytest.approx(10.0)
    assert d["proposal"]["tidal_volume_ml"] > 200


def test_adjust_text_output(capsys):
    assert main([*ADJUST, "--measured-paco2", "48", "--gas-unit", "kPa"]) == 0
    out = capsys.readouterr().out
    assert "PROPOSAL" in out and "kPa" in out and "NOTICE:" in out


def test_tidal_volume_per_kg_instead_of_millilitres(capsys):
    a = run_json(capsys, [*ADJUST, "--measured-paco2", "48"])
    args = [x for x in ADJUST if x not in ("--tidal-volume", "200 mL")]
    b = run_json(capsys, [*args, "--vt-per-kg", "10", "--measured-paco2", "48"])
    assert a["proposal"] == b["proposal"]


@pytest.mark.parametrize(("args", "field"), [
    ([*ADJUST], "--measured-paco2"),
    ([*ADJUST, "--measured-paco2", "-40"], "--measured-paco2"),
    ([*ADJUST, "--measured-paco2", "0"], "--measured-paco2"),
    ([*ADJUST, "--measured-paco2", "nan"], "--measured-paco2"),
    ([*ADJUST, "--measured-paco2", "5 kg"], "--measured-paco2"),
    ([*ADJUST, "--measured-etco2", "0"], "--measured-etco2"),
    ([*ADJUST, "--measured-paco2", "50", "--measured-pao2", "5 kg"], "--measured-pao2"),
    ([*ADJUST, "--measured-paco2", "50", "--measured-spo2", "150"], "--measured-spo2"),
    ([x for x in ADJUST if x not in ("--rate", "10")] + ["--measured-paco2", "50"], "--rate"),
    ([x for x in ADJUST if x not in ("--tidal-volume", "200 mL")] + ["--measured-paco2", "50"], "--tidal-volume"),
    ([*ADJUST[:-4], "--tidal-volume", "0", "--rate", "10", "--measured-paco2", "50"], "--tidal-volume"),
    ([*ADJUST[:-4], "--tidal-volume", "-5", "--rate", "10", "--measured-paco2", "50"], "--tidal-volume"),
    ([*ADJUST[:-4], "--tidal-volume", "20", "--rate", "10", "--measured-paco2", "50"], "--tidal-volume"),
    ([*ADJUST[:-4], "--tidal-volume", "200", "--rate", "0", "--measured-paco2", "50"], "--rate"),
    ([*ADJUST[:-4], "--tidal-volume", "200", "--rate", "nan", "--measured-paco2", "50"], "--rate"),
    ([*ADJUST, "--measured-paco2", "50", "--mass", "-3 kg"], "--mass"),
])
def test_adjust_bad_input_exits_2_naming_the_field(capsys, args, field):
    assert main(args) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith(f"ventset: {field}")
    assert "Traceback" not in err


def test_deadspace_json(capsys):
    # Bohr 1891: (40 − 28)/40 = 0.30; Enghoff 1938: (45 − 28)/45 = 0.378; volumes at VT 200 mL.
    d = run_json(capsys, ["deadspace", "--paco2", "45", "--mixed-expired-co2", "28", "--alveolar-co2", "40",
                          "--etco2", "38", "--tidal-volume", "200", "--apparatus-volume", "10", "--species", "dog",
                          "--mass", "20"])
    assert d["enghoff_vd_vt"] == pytest.approx(17 / 45, abs=1e-4)
    assert d["bohr_vd_vt"] == pytest.approx(0.30)
    v = d["volumes"]
    assert v["bohr_ml"] == pytest.approx(60.0) and v["enghoff_ml"] == pytest.approx(75.556, abs=1e-3)
    # Anatomical: Stahl 2.76·20^0.96 = 48.97 mL, 0.8 kept after intubation (species.toml).
    assert v["anatomical_ml"] == pytest.approx(39.17, abs=0.01)
    assert v["alveolar_ml"] == pytest.approx(60 - 10 - 39.173, abs=0.01)
    assert "licensed veterinarian" in d["standing_notice"]


def test_deadspace_text_and_kpa(capsys):
    assert main(["deadspace", "--paco2", "6 kPa", "--mixed-expired-co2", "3 kPa"]) == 0
    out = capsys.readouterr().out
    assert "Enghoff VD/VT      0.5" in out and "Bohr" not in out.split("CAUTIONS")[0].replace("Bohr 1891", "")
    assert "NOTICE:" in out


@pytest.mark.parametrize(("args", "field"), [
    (["--mixed-expired-co2", "28"], "--paco2"),
    (["--paco2", "45"], "--mixed-expired-co2"),
    (["--paco2", "45", "--mixed-expired-co2", "50"], "--mixed-expired-co2"),
    (["--paco2", "5 kg", "--mixed-expired-co2", "28"], "--paco2"),
    (["--paco2", "nan", "--mixed-expired-co2", "28"], "--paco2"),
    (["--paco2", "45", "--mixed-expired-co2", "-1"], "--mixed-expired-co2"),
    (["--paco2", "45", "--mixed-expired-co2", "28", "--tidal-volume", "0"], "--tidal-volume"),
    (["--paco2", "45", "--mixed-expired-co2", "28", "--alveolar-co2", "20"], "--mixed-expired-co2"),
    (["--paco2", "45", "--mixed-expired-co2", "28", "--species", "dog"], "--mass"),
    (["--paco2", "45", "--mixed-expired-co2", "28", "--species", "dog", "--mass", "900 kg"], "--mass"),
    (["--paco2", "45", "--mixed-expired-co2", "28", "--species", "unicorn", "--mass", "9 kg"], "--species"),
])
def test_deadspace_bad_input(capsys, args, field):
    assert main(["deadspace", *args]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith(f"ventset: {field}")


@pytest.mark.parametrize("command", ["adjust", "deadspace"])
def test_help_prints(capsys, command):
    with pytest.raises(SystemExit) as done:
        main([command, "--help"])
    assert done.value.code == 0
    assert "--tidal-volume" in capsys.readouterr().out


def test_adjust_runs_as_a_program():
    proc = subprocess.run([sys.executable, "-m", "ventset", *ADJUST, "--measured-paco2", "6.5 kPa", "--json"],
                          capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["proposal"]["rate_per_min"] > 10
    bad = subprocess.run([sys.executable, "-m", "ventset", *ADJUST, "--measured-paco2", "5 kg"],
                         capture_output=True, text=True, timeout=60)
    assert bad.returncode == 2 and "--measured-paco2" in bad.stderr and "Traceback" not in bad.stderr
