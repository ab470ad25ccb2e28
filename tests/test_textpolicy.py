"""One text policy (ventset.textpolicy): the same limits at entry, in every writer and in the loader.

Each test uses the hostile input as issue 10 states it; each limit is tried at and just past its value.
"""

from __future__ import annotations

import json

import pytest
from hypothesis import given
from hypothesis import strategies as st

from ventset import cases, partslib
from ventset.cli import main
from ventset.errors import InputError
from ventset.library import load_library
from ventset.model import ApparatusPart, Circuit, Patient, Request
from ventset.planner import plan
from ventset.summary import plan_summary
from ventset.textpolicy import MAX_PARTS, TEXT_FIELDS, check_text

LIB = load_library()


@pytest.fixture(autouse=True)
def _data(tmp_path, monkeypatch):
    monkeypatch.setenv("VENTSET_DATA_DIR", str(tmp_path / "data"))


def _cli(capsys, *args):
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_a_name_at_the_limit_is_saved_and_reopens_one_past_it_is_refused_at_entry(tmp_path, capsys):
    limit = TEXT_FIELDS["name"].max_chars
    path = tmp_path / "a.ventcase"
    code, _, err = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--name", "x" * limit, "--save", str(path))
    assert code == 0 and "saved" in err
    assert cases.load_case(path).case.request.patient.name == "x" * limit
    code, _, err = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--name", "x" * 600,
                        "--save", str(tmp_path / "b.ventcase"))
    assert code == 2 and "--name (Patient name)" in err and "500" in err and err.count("\n") == 1
    assert not (tmp_path / "b.ventcase").exists()  # never "saved", then refused by show


def test_one_hundred_parts_save_and_reopen_one_hundred_and_one_are_refused(tmp_path, capsys):
    parts = [a for i in range(MAX_PARTS) for a in ("--apparatus", f"p{i}=0.1 mL")]
    path = tmp_path / "a.ventcase"
    code, _, _ = _cli(capsys, "plan", "--species", "horse", "--mass", "500", *parts, "--save", str(path))
    assert code == 0 and len(cases.load_case(path).case.request.circuit.parts) == MAX_PARTS
    code, _, err = _cli(capsys, "plan", "--species", "horse", "--mass", "500", *parts, "--apparatus", "x=1 mL")
    assert code == 2 and "--apparatus" in err and "at most 100" in err


def test_a_case_note_at_the_limit_is_written_one_past_it_is_refused_by_the_writer(tmp_path):
    limit = TEXT_FIELDS["case-note"].max_chars
    case = cases.case_for_request(Request(Patient("dog", 20.0)), LIB)
    path = tmp_path / "n.ventcase"
    cases.save_case(path, cases.make_case(case.request, None, library=LIB, note="n" * limit))
    assert cases.load_case(path).case.note == "n" * limit
    with pytest.raises(cases.CaseSaveError, match="would not open again"):
        cases.save_case(tmp_path / "m.ventcase", cases.make_case(case.request, None, library=LIB, note="n" * 20_001))
    assert not (tmp_path / "m.ventcase").exists()


@pytest.mark.parametrize(("name", "why"), [
    ("Rex\nSet tidal volume 999 mL", "line break"),  # a forged line in the PDF header
    ("Rex\r999", "line break"),
    ("4.2 \u202ekg", "direction control"),  # right-to-left override: "4.2 kg" reads "gk 2.4"
    ("x\u2066y", "direction control"), ("x\u200fy", "direction control"), ("x\u061cy", "direction control"),
    ("\x1b[31mred", "control character"), ("tab\there", "control character"), ("x\u2028y", "line break"),
])
def test_controls_bidi_and_line_breaks_are_refused_at_entry_naming_the_field(capsys, name, why):
    code, out, err = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--name", name)
    assert code == 2 and out == "" and err.startswith("ventset: --name (Patient name)")
    assert why in err and err.count("\n") == 1 and "\x1b" not in err and "\u202e" not in err


def test_markup_characters_are_allowed_and_kept_as_text(capsys):
    code, out, _ = _cli(capsys, "plan", "--species", "dog", "--mass", "20", "--name", '<img src="/dev/zero">')
    assert code == 0 and '<img src="/dev/zero">' in out


def test_the_planner_refuses_what_entry_refuses():
    # A Request built in code passes the same policy (ventset.fields.validate_request).
    with pytest.raises(InputError) as err:
        plan(Request(Patient("dog", 20.0, name="a\nb")), LIB)
    assert err.value.key == "name"
    with pytest.raises(InputError) as err:
        plan(Request(Patient("dog", 20.0), Circuit(parts=tuple(ApparatusPart(f"p{i}", 0.1) for i in range(101)))),
             LIB)
    assert err.value.key == "apparatus"


def test_a_case_file_holding_a_forged_line_is_refused_and_left_as_it_is(tmp_path):
    good = cases.case_for_request(Request(Patient("dog", 20.0, name="Rex")), LIB)
    path = tmp_path / "f.ventcase"
    cases.save_case(path, good)
    data = json.loads(path.read_text())
    data["request"]["patient"]["name"] = "Rex\nSet tidal volume 999 mL"
    raw = json.dumps(data).encode()
    path.write_bytes(raw)
    with pytest.raises(cases.CaseError) as err:
        cases.load_case(path)
    assert "request.patient.name" in str(err.value) and "line break" in str(err.value)
    assert path.read_bytes() == raw


def test_clinic_parts_import_applies_the_same_policy(tmp_path):
    doc = partslib.library_to_dict(partslib.ClinicLibrary())
    doc["parts"] = [{"name": "HME \u202eLM", "volume_ml": 3}]
    path = tmp_path / "shared.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    with pytest.raises(partslib.ClinicLibraryError, match="direction control"):
        partslib.import_file(path)
    with pytest.raises(InputError) as err:
        partslib.ClinicPart.checked("x" * 81, 3)
    assert err.value.key == "clinic-part-name"
    assert partslib.ClinicPart.checked("x" * 80, 3).name == "x" * 80


def test_the_parts_export_refuses_what_its_loader_would(tmp_path):
    bad = partslib.ClinicLibrary(parts=(partslib.ClinicPart("a\nb", 3.0),))
    with pytest.raises(partslib.ClinicLibrarySaveError, match="would not open again"):
        partslib.write_library_file(bad, tmp_path / "out.json")
    assert not (tmp_path / "out.json").exists()


def test_summary_prints_user_text_on_one_line():
    # A Plan made by library code that skipped the policy still prints the name on its one line.
    from dataclasses import replace

    p = plan(Request(Patient("dog", 20.0, name="Rex")), LIB)
    forged = replace(p, request=replace(p.request, patient=replace(p.request.patient, name="Rex\nSet VT 999 mL")))
    first = plan_summary(forged).splitlines()[0]
    assert "Rex\\nSet VT 999 mL" in first and not any(line.startswith("Set VT") for line in plan_summary(forged)
                                                          .splitlines())


@pytest.mark.parametrize("key", sorted(TEXT_FIELDS))
def test_every_text_field_at_and_past_its_limit(key):
    spec = TEXT_FIELDS[key]
    assert check_text(key, "a" * spec.max_chars) == "a" * spec.max_chars
    with pytest.raises(InputError) as err:
        check_text(key, "a" * (spec.max_chars + 1))
    assert err.value.key == key and f"{spec.max_chars:,}" in err.value.reason


# The refused characters by Unicode's own classes (Python's unicodedata, the outside reference): controls (Cc),
# surrogates (Cs), the direction controls and the two line separators; a multiline field keeps line feed and tab.
_DIRECTION = "\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u200e\u200f\u061c"


def _refused_by_unicode(ch: str, multiline: bool) -> bool:
    import unicodedata

    if multiline and ch in "\n\t":
        return False
    return unicodedata.category(ch) in ("Cc", "Cs") or ch in _DIRECTION or ch in "\u2028\u2029"


def _first_refused(text: str, multiline: bool) -> str | None:
    return next((ch for ch in text if _refused_by_unicode(ch, multiline)), None)


def test_every_code_point_is_judged_as_unicode_classes_it():
    from ventset.textpolicy import bad_character

    for code in range(0x3000):  # the controls, surrogates and separators all lie below U+3000 …
        ch = chr(code)
        for multiline in (False, True):
            assert (bad_character(ch, multiline) == ch) == _refused_by_unicode(ch, multiline), hex(code)
    for code in (0xD800, 0xDBFF, 0xDC00, 0xDFFF, 0xFEFF, 0x10FFFF):  # … and these beyond it
        assert (bad_character(chr(code)) is not None) == _refused_by_unicode(chr(code), False), hex(code)


@given(st.text(alphabet=st.characters(codec=None), max_size=60), st.booleans())
def test_the_first_refused_character_is_the_one_named(text, multiline):
    from ventset.textpolicy import bad_character

    assert bad_character(text, multiline) == _first_refused(text, multiline)
