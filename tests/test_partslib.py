"""The clinic parts library: entries, file format, merge on import with conflicts, both catalogues."""

from __future__ import annotations

import json
from datetime import date, timedelta

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ventset import partslib, storage
from ventset.errors import InputError
from ventset.library import load_library
from ventset.model import ApparatusPart, Circuit, Patient, Request
from ventset.planner import plan

LIB = load_library()


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _lib() -> partslib.ClinicLibrary:
    lib = partslib.ClinicLibrary(clinic="Brookfield Animal Hospital (invented)")
    lib = lib.with_part(partslib.ClinicPart.checked("Blue HME, cat", 9.5, "water fill, three repeats", "R. Okafor",
                                                    "2024-02-11"))
    lib = lib.with_part(partslib.ClinicPart.checked("Angled adapter", "3.2 mL"))
    preset = partslib.CircuitPreset.checked("Cat theatre 2", [lib.part("Blue HME, cat").as_apparatus(),
                                                              ApparatusPart("Angled adapter", 3.2)],
                                            0.6, "non_rebreathing", "the short Bain")
    return lib.with_preset(preset)


@pytest.mark.parametrize("args, field, reason", [
    (("", 3), "Part name", "is empty"),
    (("   ", 3), "Part name", "is empty"),
    (("x" * 81, 3), "Part name", "longer than 80"),
    (("tab\tname", 3), "Part name", None),
    (("ok", -1), "Part volume", "between 0 and 5000"),
    (("ok", 6000), "Part volume", "between 0 and 5000"),
    (("ok", "nan"), "Part volume", "not a finite number"),
    (("ok", "3 kg"), "Part volume", "not a unit of this kind"),
    (("ok", 3, "", "", "11/02/2024"), "Measured on", "YYYY-MM-DD"),
    (("ok", 3, "", "", (date.today() + timedelta(days=9)).isoformat()), "Measured on", "in the future"),
])
def test_bad_part_input_names_the_field(args, field, reason):
    if args[0] == "tab\tname":  # a tab is spacing: normalised, not refused
        assert partslib.ClinicPart.checked(*args).name == "tab name"
        return
    with pytest.raises(InputError) as info:
        partslib.ClinicPart.checked(*args)
    assert info.value.field == field and reason in info.value.reason


def test_names_are_unique_regardless_of_case_and_spacing():
    lib = _lib()
    with pytest.raises(InputError, match="already in the clinic library"):
        lib.with_part(partslib.ClinicPart.checked("blue  hme, CAT", 10))
    assert lib.part("BLUE HME, CAT").volume_ml == 9.5
    replaced = lib.with_part(partslib.ClinicPart.checked("blue hme, cat", 10), replace_existing=True)
    assert len(replaced.parts) == 2 and replaced.part("Blue HME, cat").volume_ml == 10


def test_save_and_load_round_trip_and_previous_version_kept(tmp_path):
    lib = _lib()
    partslib.save_clinic_library(lib)
    assert partslib.load_clinic_library() == lib
    partslib.save_clinic_library(lib.without_part("Angled adapter"))
    previous = partslib.library_path().with_name(partslib.PREVIOUS_NAME)
    assert partslib.read_library_file(previous) == lib
    raw = json.loads(partslib.library_path().read_text(encoding="utf-8"))
    assert raw["format"] == "ventset-clinic-parts" and raw["schema_version"] == 2


def test_missing_library_is_empty_but_a_damaged_one_is_refused(tmp_path):
    assert partslib.load_clinic_library() == partslib.ClinicLibrary()
    partslib.library_path().write_bytes(b'{"format": "ventset-clinic-parts", "schema_version": 1, "parts": [')
    with pytest.raises(partslib.ClinicLibraryError, match="not complete, valid JSON"):
        partslib.load_clinic_library()


def _doc(**change) -> dict:
    d = partslib.library_to_dict(_lib())
    d.update(change)
    return d


@pytest.mark.parametrize("doc, reason", [
    (_doc(format="other"), "not a ventset clinic parts file"),
    (_doc(schema_version=3), "newer ventset"),
    (_doc(schema_version="1"), "whole number"),
    (_doc(schema_version=0), "not one any ventset has written"),
    (_doc(extra=1), "'extra' is not part of"),
    (_doc(parts={"a": 1}), "'parts' must be a list"),
    (_doc(parts=[{"name": "a", "volume_ml": "3"}]), "volume_ml must be a number"),
    (_doc(parts=[{"name": "a", "volume_ml": 3}, {"name": "A", "volume_ml": 4}]), "appears twice"),
    (_doc(parts=[{"name": "a", "volume_ml": 3, "colour": "red"}]), "unknown fields"),
    (_doc(parts=[{"name": "", "volume_ml": 3}]), "parts[0]: Part name"),
    (_doc(presets=[{"name": "p", "parts": [], "circuit_type": "jet"}]), "Circuit type"),
    (_doc(presets=[{"name": "p", "parts": [{"name": "x", "volume_ml": "2"}]}]), "numeric volume_ml"),
])
def test_bad_clinic_files_are_refused_with_the_entry_named(tmp_path, doc, reason):
    path = tmp_path / "shared.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    with pytest.raises(partslib.ClinicLibraryError) as info:
        partslib.read_library_file(path)
    assert reason in str(info.value) and "\n" not in str(info.value)


def test_merge_adds_skips_identical_and_reports_conflicts_without_overwriting():
    local = _lib()
    incoming = partslib.ClinicLibrary(parts=(
        partslib.ClinicPart("Blue HME, cat", 11.0, "re-measured", "T. Brandt", "2024-05-02"),   # conflict
        partslib.ClinicPart("angled adapter", 3.2),                                             # identical
        partslib.ClinicPart("Long elbow", 6.0),                                                 # new
    ))
    merged, report = partslib.merge(local, incoming)
    assert merged.part("Blue HME, cat") == local.part("Blue HME, cat")  # kept, not overwritten
    assert merged.part("Long elbow").volume_ml == 6.0
    assert report.added == ("part 'Long elbow'",) and report.unchanged == ("part 'angled adapter'",)
    (conflict,) = report.conflicts
    text = str(conflict)
    assert "9.5 mL" in text and "11 mL" in text and "kept this machine's entry" in text
    assert any("Conflicts (1)" in line for line in report.lines())

    renamed, report = partslib.merge(local, incoming, "rename")
    assert renamed.part("Blue HME, cat").volume_ml == 9.5
    assert renamed.part("Blue HME, cat (imported)").volume_ml == 11.0
    assert "imported as 'Blue HME, cat (imported)'" in str(report.conflicts[0])

    replaced, report = partslib.merge(local, incoming, "replace")
    assert replaced.part("Blue HME, cat").volume_ml == 11.0 and "as chosen" in str(report.conflicts[0])
    with pytest.raises(InputError):
        partslib.merge(local, incoming, "overwrite")


def test_export_and_import_between_two_machines(tmp_path, monkeypatch):
    machine_a, machine_b = tmp_path / "a", tmp_path / "b"
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(machine_a))
    partslib.save_clinic_library(_lib())
    shared = tmp_path / "brookfield-parts.json"
    partslib.write_library_file(partslib.load_clinic_library(), shared)
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(machine_b))
    partslib.save_clinic_library(partslib.ClinicLibrary().with_part(partslib.ClinicPart("Blue HME, cat", 12.0)))
    report = partslib.import_file(shared)
    lib_b = partslib.load_clinic_library()
    assert lib_b.part("Blue HME, cat").volume_ml == 12.0  # this machine's value stays
    assert lib_b.part("Angled adapter") is not None and lib_b.preset("Cat theatre 2") is not None
    assert len(report.conflicts) == 1
    again = partslib.import_file(shared)  # importing twice adds nothing new
    assert again.added == () and len(again.conflicts) == 1


def test_preset_applies_to_a_circuit_and_the_plan_counts_its_parts():
    preset = _lib().preset("Cat theatre 2")
    circuit = preset.apply(Circuit(tube_id_mm=4.0, tube_length_cm=5.0, mode="volume"))
    assert circuit.parts == preset.parts and circuit.tube_id_mm == 4.0 and circuit.mode == "volume"
    assert circuit.compressible_ml_cmh2o == 0.6 and circuit.circuit_type == "non_rebreathing"
    p = plan(Request(Patient("cat", 4.0), circuit), LIB)
    assert p.dead_space.apparatus_ml == pytest.approx(9.5 + 3.2)  # by hand: the two measured parts
    assert p.pressures.compressible_ml_cmh2o == 0.6
    assert p.dead_space.parts[0].source == "clinic parts library: measured by R. Okafor on 2024-02-11"


def test_all_parts_lists_the_clinic_then_the_catalogue_with_sources():
    rows = partslib.all_parts(_lib(), LIB)
    assert [r.origin for r in rows[:2]] == ["clinic", "clinic"]
    assert len(rows) == 2 + len(LIB.parts)
    catalogue = {r.key: r for r in rows if r.origin == "catalogue"}
    for key, part in LIB.parts.items():
        assert catalogue[key].volume_ml == part.volume_ml.value and catalogue[key].source == part.volume_ml.source
    assert rows[0].as_apparatus().name == rows[0].name


names = st.text(st.characters(min_codepoint=33, max_codepoint=0x2FFF, exclude_categories=("Cs", "Cc")),
                min_size=1, max_size=12)
libraries = st.lists(st.tuples(names, st.floats(0, 5000)), max_size=8).map(
    lambda items: partslib.ClinicLibrary(parts=tuple(
        {partslib.name_key(n): partslib.ClinicPart(" ".join(n.split()), v) for n, v in items
         if n.split()}.values())))


@settings(suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(libraries, libraries, st.sampled_from(partslib.CONFLICT_CHOICES))
def test_merge_never_loses_an_entry_and_keep_never_changes_local_ones(local, incoming, how):
    merged, report = partslib.merge(local, incoming, how)
    for part in local.parts:
        mine = merged.part(part.name)
        assert mine is not None
        if how != "replace":
            assert mine == part
    for part in incoming.parts:
        assert merged.part(part.name) is not None
    assert len(report.added) + len(report.unchanged) + len(report.conflicts) == len(incoming.parts)
    again, second = partslib.merge(merged, incoming, how if how != "rename" else "keep")
    assert second.added == () and (again == merged or how == "rename")
