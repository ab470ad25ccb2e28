"""machines.toml: every range and step is sourced and on its grid; malformed copies are refused in one line naming
the field; the command line lists the classes and names a bad --machine."""

from __future__ import annotations

import json

import pytest

from tests.test_schema import copy_of_resources, dump_toml, shipped
from ventset.cli import main
from ventset.errors import DataError
from ventset.library import load_resource
from ventset.machines.data import load_machines
from ventset.machines.kinds import BREATHS, CONTROLS

MACHINES = load_machines()


def test_every_class_is_complete_and_sourced():
    assert {"manual_bag", "demand_valve"} <= set(MACHINES.classes)  # the fallbacks
    assert {m.breath for m in MACHINES.classes.values()} == set(BREATHS)  # every way of setting a breath is used
    for m in MACHINES.classes.values():
        assert m.source and m.driving_gas_ve_multiple.source and m.internal_gas_ml.source and m.coupling_source
        assert m.control(m.sizing) is not None
        for c in m.controls:
            assert c.source.strip()
            assert c.unit in CONTROLS[c.kind][0]
            assert c.on_step(c.min) and c.on_step(c.max) and c.min < c.max and c.step > 0


def test_no_product_names_in_the_classes():
    # Classes are described by how they work; a capitalised word inside a label would be a name.
    for m in MACHINES.classes.values():
        words = m.label.replace("(", " ").replace(")", " ").replace(",", " ").split()
        assert all(w == words[0] or w in {"PEEP", "I:E", "US"} or not w[0].isupper() for w in words), m.label


def _mutated(tmp_path, mutate):
    doc = shipped("machines.toml")
    mutate(doc)
    folder = copy_of_resources(tmp_path)
    (folder / "machines.toml").write_text(dump_toml(doc), encoding="utf-8")
    with pytest.raises(DataError) as err:
        load_resource("machines.toml", folder)
    return str(err.value)


def _control(doc, kind="tidal_volume", key="bellows_ascending"):
    return next(c for c in doc["classes"][key]["controls"] if c["control"] == kind)


CASES = [
    ("zero-step", lambda d: _control(d).update(step=0), ["machine class 'bellows_ascending'", "'step'", "above 0"]),
    ("min-above-max", lambda d: _control(d).update(min=2000), ["'min'", "must be below max"]),
    ("negative-range", lambda d: _control(d).update(min=-50), ["'min'", "at least 0"]),
    ("off-grid", lambda d: _control(d).update(max=1625), ["'max'", "not a whole number of steps"]),
    ("wrong-unit", lambda d: _control(d).update(unit="cmH2O"), ["'unit'", "must be mL or L"]),
    ("missing-sizing", lambda d: d["classes"]["bellows_ascending"]["controls"].pop(0),
     ["'controls'", "needs exactly one of tidal_volume"]),
    ("foreign-control", lambda d: d["classes"]["bellows_ascending"]["controls"].append(
        {"control": "press_time", "label": "x", "unit": "s", "min": 1, "max": 2, "step": 1, "source": "s"}),
     ["'controls'", "'press_time' is not a control of breath 'volume'"]),
    ("twice", lambda d: d["classes"]["bellows_ascending"]["controls"].append(dict(_control(d, "rate"))),
     ["'controls'", "'rate' more than once"]),
    ("no-source", lambda d: _control(d).pop("source"), ["'source'"]),
    ("electric-with-gas", lambda d: d["classes"]["piston_small_animal"]["driving_gas_ve_multiple"].update(value=1),
     ["'driving_gas_ve_multiple'", "must be 0 for drive 'electric'"]),
    ("unknown-supply", lambda d: d["classes"]["bellows_ascending"].update(usual_supply="tank"),
     ["'usual_supply'", "'tank' is not in [supplies]"]),
    ("demand-without-flow", lambda d: d["classes"]["demand_valve"].pop("valve_flow_l_min"),
     ["'valve_flow_l_min'", "is needed for breath 'demand'"]),
]


@pytest.mark.parametrize(("mutate", "needles"), [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_malformed_machines_file_fails_in_one_line(tmp_path, mutate, needles):
    message = _mutated(tmp_path, mutate)
    assert "\n" not in message and message.startswith("machines.toml: ")
    for needle in needles:
        assert needle in message, message


def test_machines_json_lists_classes_with_their_controls(capsys):
    assert main(["machines", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [d["key"] for d in data] == list(MACHINES.classes)
    for d in data:
        assert {"key", "name", "class", "controls"} <= set(d)
        for c in d["controls"]:
            assert {"name", "unit", "min", "max", "step"} <= set(c)


def test_machines_text_lists_every_class(capsys):
    assert main(["machines"]) == 0
    out = capsys.readouterr().out
    assert all(key in out for key in MACHINES.classes)


def test_plan_json_machine_section(capsys):
    assert main(["plan", "--species", "dog", "--mass", "20", "--machine", "piston_small_animal", "--json"]) == 0
    m = json.loads(capsys.readouterr().out)["machine"]
    assert m["key"] == "piston_small_animal" and m["class"] == "piston_small_animal"
    assert {"delivered_tidal_volume_ml", "expected_paco2_mmhg", "driving_gas_l_min", "oxygen_use_l_min",
            "supply_minutes"} <= set(m)
    assert [c["control"] for c in m["controls"]] == [c.kind for c in MACHINES.classes["piston_small_animal"].controls]
    for c in m["controls"]:
        assert {"name", "value", "unit", "min", "max", "step", "in_range"} <= set(c)


def test_plan_text_shows_the_dials_under_the_machine_name(capsys):
    assert main(["plan", "--species", "cat", "--mass", "4", "--machine", "flow-and-time"]) == 0
    out = capsys.readouterr().out
    assert "ON THE MACHINE: FLOW-AND-TIME CONTROLLED" in out
    section = out.split("ON THE MACHINE")[1].split("METABOLISM")[0]
    assert "Inspiratory flow" in section and "Inspiratory time" in section and "Expected PaCO2 as dialled" in section
    assert "NOTICE:" in out  # the standing caution is still shown


@pytest.mark.parametrize(("typed", "needle"), [("toaster", "is not a ventilator class"),
                                               ("bellows", "matches 4 ventilator classes")])
def test_bad_machine_is_one_line_naming_the_option(capsys, typed, needle):
    assert main(["plan", "--species", "dog", "--mass", "20", "--machine", typed]) == 2
    err = capsys.readouterr().err
    assert err.startswith("ventset: --machine") and needle in err and err.count("\n") == 1


def test_bad_supply_and_duration_are_refused_naming_the_field(capsys):
    assert main(["plan", "--species", "dog", "--mass", "20", "--machine", "bellows_ascending",
                 "--oxygen-supply", "0"]) == 2
    assert capsys.readouterr().err.startswith("ventset: --oxygen-supply")
    assert main(["plan", "--species", "dog", "--mass", "20", "--duration", "-1 h"]) == 2
    assert capsys.readouterr().err.startswith("ventset: --duration")


def test_case_with_a_machine_round_trips_and_one_without_keeps_its_layout(tmp_path):
    from ventset import cases
    from ventset.library import load_library
    from ventset.model import Circuit, Patient, Request, Targets, request_to_dict

    lib = load_library()
    plain = request_to_dict(Request(Patient("dog", 20.0)))
    assert "machine" not in plain["circuit"] and "duration_min" not in plain["targets"]
    req = Request(Patient("dog", 20.0), Circuit(machine="bellows_ascending", oxygen_supply_l=400.0),
                  Targets(duration_min=90.0))
    path = tmp_path / "dog.ventcase"
    cases.save_case(path, cases.case_for_request(req, lib))
    loaded = cases.load_case(path).case
    assert loaded.request == req
    assert json.loads(path.read_text())["plan"]["machine"]["key"] == "bellows_ascending"


def test_machines_ranks_the_classes_for_a_patient(capsys):
    # A 25 g mouse: only the small-patient classes reach it without danger; the large-animal bellows is last-ish.
    assert main(["machines", "--species", "mouse", "--mass", "25 g", "--json"]) == 0
    ranked = json.loads(capsys.readouterr().out)
    keys = [r["key"] for r in ranked]
    assert keys[0] in ("piston_small_patient", "pressure_small_patient")
    dangers = [sum(c["severity"] == "danger" for c in r["cautions"]) for r in ranked]
    assert dangers == sorted(dangers) and dangers[0] == 0
    assert any(c["code"] == "MACHINE_PATIENT_TOO_SMALL" for c in ranked[keys.index("bellows_large_animal")]["cautions"])
    assert main(["machines", "--species", "mouse", "--mass", "25 g"]) == 0
    out = capsys.readouterr().out
    assert "NOTICE:" in out and " inf " not in out
