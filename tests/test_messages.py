"""Messages keep to one line (issue 10 item 7): escapes are shown, not echoed; long values are cut; keys, not
labels (issue 8 item 5)."""

from __future__ import annotations

import ast
import dataclasses
import json
from pathlib import Path

import pytest

from ventset import cases
from ventset.cli import main
from ventset.errors import DataError, InputError, visible
from ventset.fields import (
    FIELDS,
    PARTS_PATH,
    SITUATIONS_PATH,
    TEXT_INPUTS,
    inputs_from_request,
    parse_field,
    request_from_inputs,
)
from ventset.library import load_library
from ventset.model import Circuit, Patient, Request, Strategy, Targets
from ventset.titrate import MEASURED_FIELDS

LIB = load_library()
ROOT = Path(__file__).resolve().parent.parent


def _cli(capsys, *args):
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.mark.parametrize(("value", "shown"), [
    ("20\nkg", "20\\nkg"), ("20\rkg", "20\\rkg"), ("\x1b[2J20", "\\x1b[2J20"), ("20\u202ekg", "20\\u202ekg"),
    ("2\x9b0", "2\\x9b0"), ("20\tkg", "20\\tkg"),
])
def test_echoed_values_show_escapes_and_keep_to_one_line(capsys, value, shown):
    code, _, err = _cli(capsys, "plan", "--species", "dog", "--mass", value)
    assert code == 2 and err.count("\n") == 1 and "\r" not in err and "\x1b" not in err and shown in err


def test_a_long_unknown_unit_is_cut_with_an_ellipsis(capsys):
    code, _, err = _cli(capsys, "plan", "--species", "dog", "--mass", "5 " + "furlong" * 8)
    assert code == 2 and "…" in err and len(err) < 250


def test_unknown_circuit_lists_the_options(capsys):
    code, _, err = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--circuit", "nope")
    assert code == 2 and all(key in err for key in LIB.circuits)


def test_a_data_error_is_made_safe_too():
    assert "\n" not in str(DataError("bad\nline")) and "\\n" in str(DataError("bad\nline"))
    assert visible("x" * 100, 10) == "x" * 9 + "…"


def test_input_errors_carry_the_key_and_show_the_label(capsys):
    with pytest.raises(InputError) as err:
        parse_field("tube-id", "0")
    assert err.value.key == "tube-id" and err.value.label == "Tube internal diameter"
    assert str(err.value).startswith("Tube internal diameter: ")
    code, _, out = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--tube-id", "0")
    assert out.startswith("ventset: --tube-id (Tube internal diameter): 0 mm — must be")


def test_parse_field_works_for_any_fieldspec():
    # The titration's measured fields use the same parser: 5.3 kPa = 39.75 mmHg (1 kPa = 7.500615758 mmHg).
    assert parse_field(MEASURED_FIELDS["paco2"], "5.3 kPa") == pytest.approx(5.3 * 7.500615758)
    assert parse_field(MEASURED_FIELDS["fio2"], "50 %") == pytest.approx(0.5)
    with pytest.raises(InputError) as err:
        parse_field(MEASURED_FIELDS["rate"], "0")
    assert err.value.key == "rate" and err.value.label == "Rate in use"


def test_every_request_field_has_exactly_one_input_path():
    # The one request builder places inputs by FieldSpec path: a Request field without a path would be lost.
    paths = [f.path for f in FIELDS.values()] + list(TEXT_INPUTS.values()) + [PARTS_PATH, SITUATIONS_PATH]
    declared = [f"{section}.{f.name}" for section, cls in (("patient", Patient), ("circuit", Circuit),
                ("targets", Targets), ("strategy", Strategy)) for f in dataclasses.fields(cls)]
    assert sorted(paths) == sorted(declared)


def test_the_builder_round_trips_a_request():
    request = Request(Patient("dog", 20.0, name="Rex", lean_mass_kg=18.0),
                      Circuit(tube_id_mm=8.0, tube_length_cm=5.0, mode="pressure"), Targets(peep_cmh2o=5.0),
                      Strategy("least_work", rate_per_min=12.0))
    values, parts = inputs_from_request(request)
    rebuilt, errors = request_from_inputs(values, parts, library=LIB)
    assert errors == [] and rebuilt == request


def test_the_builder_reports_every_error_by_key():
    _, errors = request_from_inputs({"species": "unicorn", "mass": "-1", "peep": "x", "name": "a\nb"})
    assert {e.key for e in errors} == {"mass", "peep", "name"}
    _, errors = request_from_inputs({"species": "unicorn", "mass": "20"}, library=LIB)
    assert [e.key for e in errors] == ["species"]


def test_no_label_to_key_tables_are_left():
    # Errors carry keys; nothing maps a label back (issue 8 item 5).
    offenders = []
    for path in (ROOT / "ventset").rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.DictComp) and isinstance(node.key, ast.Attribute) and node.key.attr == "label":
                offenders.append(f"{path.relative_to(ROOT)}:{node.lineno}")
    assert offenders == []


def test_show_echoes_nothing_raw_from_a_case_file(tmp_path, capsys):
    path = tmp_path / "c.ventcase"
    cases.save_case(path, cases.case_for_request(Request(Patient("dog", 20.0)), LIB))
    data = json.loads(path.read_text())
    data["plan"]["ventilation"]["rate_per_min"] = 99.0
    data["plan"]["cautions"].append({"code": "\x1b]0;owned\x07X", "severity": "danger\x1b[2J", "message": "m"})
    path.write_text(json.dumps(data))
    code, _, err = _cli(capsys, "show", str(path))
    assert code == 0 and "\x1b" not in err and "\x07" not in err and "\\x1b" in err
