"""The record on a machine: settings in use given as a machine's controls, the proposal as control values
re-evaluated as dialled with the measured CO2 output, and the record entry holding them (case-file form)."""

from __future__ import annotations

import json

import pytest

from ventset import partslib, storage
from ventset.cli import main
from ventset.errors import InputError
from ventset.evaluate import evaluate
from ventset.library import load_library
from ventset.machines.stage import find_machine
from ventset.model import Circuit, Patient, Request, Targets
from ventset.partslib_machines import ClinicMachine
from ventset.titrate import (
    Measurement,
    accept,
    adjust,
    adjustment_to_dict,
    adjustment_to_text,
    record_measurement,
    timeline_from_dict,
    timeline_to_dict,
)
from ventset.titrate.dials import settings_from_dials

LIB = load_library()


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _dog(machine: str | None = "bellows_ascending") -> Request:
    return Request(Patient("dog", 20.0), Circuit(tube_id_mm=8.0, tube_length_cm=8.0, machine=machine),
                   Targets(paco2_mmhg=40.0))


def test_the_proposal_on_the_machine_is_on_its_steps_and_re_evaluated_with_the_measured_co2_output():
    a = adjust(_dog(), Measurement(0.0, 200.0, 10.0, paco2_mmhg=52.0), "rate", LIB)
    ms = a.machine_proposal
    assert ms is not None and a.proposal.dials is not None
    for s in ms.settings:
        c = s.control
        assert c.min <= s.value <= c.max and c.on_step(s.value)
    assert dict(a.proposal.dials.values) == {s.control.kind: s.value for s in ms.settings}
    ev = ms.evaluation
    assert ms.delivery.subject.vco2_ml_min == pytest.approx(a.vco2_ml_min, rel=1e-12)  # measured, not estimated
    again = evaluate(ms.delivery.subject, ev.vt_ml, ev.rate_per_min)
    assert a.proposal.dials.expected_paco2_mmhg == again.paco2_mmhg
    # Alveolar ventilation equation at constant CO2 output (West, Respiratory Physiology): PaCO2 ∝ 1/VA, so the
    # dialled breath gives the measured 52 mmHg × VA in use ÷ VA as dialled.
    assert ev.paco2_mmhg == pytest.approx(52.0 * a.in_use_alveolar_ml_min / ev.alveolar_ml_min, rel=1e-9)
    # What is set on accepting it is the breath as dialled, with the dials.
    assert a.proposal.settings.tidal_volume_ml == ev.vt_ml and a.proposal.settings.dials == a.proposal.dials


def test_without_a_machine_the_adjustment_is_as_before():
    a = adjust(_dog(None), Measurement(0.0, 200.0, 10.0, paco2_mmhg=52.0), "rate", LIB)
    assert a.machine_proposal is None and a.proposal.dials is None
    d = adjustment_to_dict(a)
    assert "machine" not in d["proposal"] and "dials" not in d["in_use"]
    assert "ON THE MACHINE" not in adjustment_to_text(a)
    assert "dials" not in a.proposal.to_dict()  # the record's layout is unchanged without a machine


def test_settings_in_use_read_on_the_dials_give_the_breath_at_the_patient():
    m = find_machine("bellows_ascending")
    dials = settings_from_dials(_dog(), m, [("tidal_volume", "250"), ("rate", "10"), ("Inspiratory time", "1")], LIB)
    assert dials.values == (("tidal_volume", 250.0), ("rate", 10.0), ("ti", 1.0))
    assert dials.rate_per_min == 10.0
    base = adjust(_dog(), Measurement(0.0, dials.tidal_volume_ml, 10.0, paco2_mmhg=45.0, dials=dials), "rate", LIB)
    s = base.machine_proposal.delivery.subject
    # Hand calculation: what enters the breath is the bellows' 250 mL plus the fresh gas coupled during the 1 s of
    # inspiration (FGF 600 mL/min ÷ 60 × 1 s = 10 mL for this 20 kg dog's plan); the patient receives that less
    # what the circuit and machine compress, so the set volume of the evaluation is 250 + 10 mL.
    fgf = base.plan.oxygen.fresh_gas_ml_min
    assert fgf == pytest.approx(600.0)
    ev = evaluate(s, dials.tidal_volume_ml, 10.0)
    assert ev.set_vt_ml == pytest.approx(250.0 + fgf / 60.0 * 1.0, rel=1e-9)
    assert dials.tidal_volume_ml < 250.0


@pytest.mark.parametrize(("given", "field", "reason"), [
    ([("tidal_volume", "250"), ("rate", "100"), ("ti", "1")], "Breaths per minute in use", "outside the machine's"),
    ([("tidal_volume", "250"), ("rate", "10")], "Inspiratory time in use", "is needed"),
    ([("tidal_volume", "250"), ("rate", "10"), ("ti", "1"), ("rate", "12")], "Breaths per minute", "given twice"),
    ([("flow", "10")], "Control", "is not a control of"),
    ([("tidal_volume", "a lot")], "Bellows volume in use", "is not a number"),
])
def test_bad_settings_in_use_are_refused_naming_the_control(given, field, reason):
    with pytest.raises(InputError) as info:
        settings_from_dials(_dog(), find_machine("bellows_ascending"), given, LIB)
    assert info.value.field == field and reason in info.value.reason


def test_the_record_holds_the_dials_in_use_and_proposed_and_round_trips():
    m = find_machine("bellows_ascending")
    dials = settings_from_dials(_dog(), m, [("tidal_volume", "250"), ("rate", "10"), ("ti", "1")], LIB)
    meas = Measurement(5.0, dials.tidal_volume_ml, 10.0, etco2_mmhg=50.0, clock="09:40", dials=dials)
    entries = record_measurement((), _dog(), meas, "rate", LIB)
    entries = accept(entries, 0, "proposal")
    e = entries[0]
    assert e.measurement.dials == dials and e.proposal.dials is not None
    assert e.settings_set.dials == e.proposal.dials  # what was set, as the machine's controls
    text = json.dumps(timeline_to_dict(entries), allow_nan=False)  # strict JSON, as a case file is written
    assert timeline_from_dict(json.loads(text)) == entries
    old = timeline_to_dict(record_measurement((), _dog(None), Measurement(5.0, 200.0, 10.0, etco2_mmhg=50.0)))
    assert "dials" not in json.dumps(old)
    assert timeline_from_dict(old)[0].measurement.dials is None


def test_adjust_on_the_command_line_speaks_the_machines_controls(capsys):
    partslib.save_clinic_library(partslib.ClinicLibrary().with_machine(ClinicMachine.checked(
        "Theatre 2 bellows", "bellows_ascending", [{"control": "rate", "min": 4, "max": 40, "step": 2}])))
    args = ["adjust", "--species", "dog", "--mass", "20 kg", "--machine", "theatre 2", "--dial", "tidal_volume=250",
            "--dial", "rate=10", "--dial", "ti=1", "--measured-paco2", "50"]
    assert main(args) == 0
    out = capsys.readouterr().out
    assert "ON THE MACHINE: Theatre 2 bellows (Ascending bellows" in out
    assert "IN USE        Bellows volume 250 mL · Breaths per minute 10/min · Inspiratory time 1.0 s" in out
    assert "as dialled:" in out and "NOTICE:" in out
    assert main([*args, "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["in_use"]["dials"]["values"] == [["tidal_volume", 250.0], ["rate", 10.0], ["ti", 1.0]]
    block = d["proposal"]["machine"]
    assert block["key"] == "Theatre 2 bellows" and block["class"] == "bellows_ascending"
    rate = next(c for c in block["controls"] if c["control"] == "rate")
    assert rate["value"] % 2 == 0 and rate["step"] == 2


@pytest.mark.parametrize(("extra", "needle"), [
    (["--machine", "bellows_ascending", "--dial", "rate=10", "--rate", "10"], "--rate"),
    (["--dial", "rate=10"], "--dial: rate=10 — needs --machine"),
    (["--machine", "bellows_ascending", "--dial", "rate"], "--dial: rate — needs CONTROL=VALUE"),
    (["--machine", "bellows_ascending", "--dial", "tidal_volume=250", "--dial", "rate=10"], "Inspiratory time in use"),
])
def test_bad_dials_on_the_command_line_are_one_line(capsys, extra, needle):
    rc = main(["adjust", "--species", "dog", "--mass", "20 kg", "--measured-paco2", "50", *extra])
    err = capsys.readouterr().err
    assert rc == 2 and needle in err and err.count("\n") == 1


def test_the_record_card_names_each_control_with_its_unit():
    from ventset.titrate.dials import dials_text

    a = adjust(_dog(), Measurement(0.0, 200.0, 10.0, paco2_mmhg=52.0), "rate", LIB)
    text = dials_text(a.proposal.dials)
    m = find_machine(a.proposal.dials.machine)
    first = m.controls[0]
    assert text.startswith(f"{first.label} ") and first.unit in text.split(",")[0]
    assert len(text.split(", ")) == len(a.proposal.dials.values)
