"""The clinic's own machines: made from a class with the clinic's ranges, steps, compressible volume and driving gas;
checked on entry, stored in the clinic library (schema 2, schema 1 still read), exported and imported with the
same conflict rules, and planned on exactly as a class is."""

from __future__ import annotations

import json

import pytest

from ventset import partslib, storage
from ventset.cli import main
from ventset.errors import InputError
from ventset.evaluate import evaluate
from ventset.fields import request_from_inputs
from ventset.library import load_library
from ventset.machines.data import load_machines
from ventset.machines.stage import find_machine, on_machine
from ventset.partslib_machines import ClinicMachine
from ventset.planner import plan, plan_at

LIB = load_library()
CLASSES = load_machines()


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _theatre() -> ClinicMachine:
    """An invented clinic bellows: whole breaths in steps of 2 from 4 to 40, a measured 1.2 mL/cmH2O, air-driven."""
    return ClinicMachine.checked("Theatre 2 bellows", "bellows_ascending",
                                 [{"control": "rate", "min": 4, "max": 40, "step": 2},
                                  {"control": "tidal_volume", "step": 25}], "1.2 mL/cmH2O", "air", 1.2,
                                 "left-hand theatre (invented)")


def _library() -> partslib.ClinicLibrary:
    lib = partslib.ClinicLibrary(clinic="Hollin Vale Vets (invented)")
    lib = lib.with_part(partslib.ClinicPart.checked("Blue HME, cat", 9.5, measured_by="R. Okafor"))
    lib = lib.with_preset(partslib.CircuitPreset.checked("Cat theatre 2", [lib.part("Blue HME, cat").as_apparatus()]))
    lib = lib.with_machine(_theatre())
    return lib.with_machine(ClinicMachine.checked("Rodent piston", "piston_small_patient",
                                                  [{"control": "tidal_volume", "min": 0.1, "max": 3, "step": 0.05}]))


def _plan(species: str, mass: str, machine: str | None = None):
    values = {"species": species, "mass": mass}
    if machine:
        values["machine"] = machine
    request, errors = request_from_inputs(values, library=LIB)
    assert request is not None, errors
    return plan(request, LIB)


# --------------------------------------------------------------------------------------------------------------
# entry: bad input refused, one line naming the field
# --------------------------------------------------------------------------------------------------------------

@pytest.mark.parametrize(("controls", "extra", "field", "reason"), [
    ([{"control": "rate", "step": 0}], {}, "Breaths per minute step", "must be above 0"),
    ([{"control": "rate", "step": -1}], {}, "Breaths per minute step", "must be above 0"),
    ([{"control": "rate", "min": 50, "max": 20}], {}, "Breaths per minute min", "must be below the max"),
    ([{"control": "rate", "min": 20, "max": 20}], {}, "Breaths per minute min", "must be below the max"),
    ([{"control": "rate", "min": -4, "max": -1}], {}, "Breaths per minute min", "must be above 0"),
    ([{"control": "ti", "min": 0}], {}, "Inspiratory time min", "must be above 0"),
    ([{"control": "rate", "min": 4.5}], {}, "Breaths per minute min", "whole number of steps of 1"),
    ([{"control": "rate", "max": "fast"}], {}, "Breaths per minute max", "is not a number"),
    ([{"control": "rate", "max": "nan"}], {}, "Breaths per minute max", "not a finite number"),
    ([{"control": "rate", "max": 5000}], {}, "Breaths per minute max", "at most 300/min"),
    ([{"control": "tidal_volume", "min": "2 kg"}], {}, "Bellows volume min", "not a unit of this kind"),
    ([{"control": "ie", "min": 1}], {}, "Control", "is not a control of"),
    ([{"control": "rate", "step": 2}, {"control": "rate", "step": 1}], {}, "Breaths per minute", "given twice"),
    ([], {"compressible_ml_cmh2o": -1}, "Machine compressible volume", "between 0 and 500"),
    ([], {"driving_gas": "nitrogen"}, "Driving gas", "oxygen, air"),
    ([], {"driving_gas_ve_multiple": 4}, "Driving gas use", "between 0 and 3"),
    ([], {"note": "two\nlines"}, "Note", "line break"),
])
def test_bad_machine_input_is_refused_naming_the_field(controls, extra, field, reason):
    with pytest.raises(InputError) as info:
        ClinicMachine.checked("Theatre 2", "bellows_ascending", controls, **extra)
    err = info.value
    assert err.field == field and reason in err.reason and "\n" not in err.message()


@pytest.mark.parametrize(("name", "klass", "field", "reason"), [
    ("", "bellows_ascending", "Machine name", "is empty"),
    ("x" * 81, "bellows_ascending", "Machine name", "longer than 80"),
    ("bellows_ascending", "bellows_ascending", "Machine name", "name of a ventilator class"),
    ("reservoir bag squeezed by  HAND (fallback)", "bellows_ascending", "Machine name",
     "name of a ventilator class"),  # compared as names are: case and spacing aside
    ("Theatre 2", "toaster", "Ventilator class", "is not a ventilator class"),
    ("Theatre 2", "", "Ventilator class", "is needed"),
])
def test_bad_name_or_class_is_refused(name, klass, field, reason):
    with pytest.raises(InputError) as info:
        ClinicMachine.checked(name, klass)
    assert info.value.field == field and reason in info.value.reason


def test_a_driving_gas_is_refused_for_a_machine_that_uses_none():
    with pytest.raises(InputError, match="uses no driving gas"):
        ClinicMachine.checked("Piston 1", "piston_small_animal", driving_gas="air")
    assert ClinicMachine.checked("Piston 1", "piston_small_animal").driving_gas is None


def test_parts_not_given_keep_the_class_values_and_units_are_read():
    m = _theatre()
    cls = CLASSES.classes["bellows_ascending"]
    rate, vt = m.range_of("rate"), m.range_of("tidal_volume")
    assert (rate.min, rate.max, rate.step) == (4, 40, 2)
    vt_class = cls.control("tidal_volume")
    assert (vt.min, vt.max, vt.step) == (vt_class.min, vt_class.max, 25)
    litres = ClinicMachine.checked("Big one", "piston_large_animal", [{"control": "tidal_volume", "max": "9000 mL"}])
    assert litres.range_of("tidal_volume").max == 9.0  # this class reads its volume in L
    ie = ClinicMachine.checked("Desc", "bellows_descending", [{"control": "ie", "min": "1:1.5", "step": 0.5}])
    assert ie.range_of("ie").min == 1.5


# --------------------------------------------------------------------------------------------------------------
# the library file: round trip, schema 1 still read, export/import with conflicts
# --------------------------------------------------------------------------------------------------------------

def test_clinic_machines_round_trip_through_save():
    lib = _library()
    partslib.save_clinic_library(lib)
    again = partslib.load_clinic_library()
    assert again == lib and again.machine("theatre  2 BELLOWS") == _theatre()
    raw = json.loads(partslib.library_path().read_text(encoding="utf-8"))
    assert raw["schema_version"] == 2
    assert raw["machines"][1]["controls"] == [{"control": "tidal_volume", "min": 200.0, "max": 1600.0, "step": 25.0},
                                              {"control": "rate", "min": 4.0, "max": 40.0, "step": 2.0}]


def test_a_schema_1_file_still_reads_and_is_kept_when_saved_over(tmp_path):
    old = {"format": "ventset-clinic-parts", "schema_version": 1, "clinic": "", "saved_at": "2024-01-01T00:00:00Z",
           "parts": [{"name": "Elbow", "volume_ml": 4.0, "note": "", "measured_by": "", "measured_on": ""}],
           "presets": []}
    path = partslib.library_path()
    path.write_text(json.dumps(old), encoding="utf-8")
    lib = partslib.load_clinic_library()
    assert lib.part("Elbow").volume_ml == 4.0 and lib.machines == ()
    partslib.save_clinic_library(lib.with_machine(_theatre()))
    previous = json.loads(path.with_name(partslib.PREVIOUS_NAME).read_text(encoding="utf-8"))
    assert previous == old  # the schema-1 file is kept as it was
    assert partslib.load_clinic_library().machine("Theatre 2 bellows") == _theatre()
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({**old, "machines": []}), encoding="utf-8")
    with pytest.raises(partslib.ClinicLibraryError, match="not part of clinic parts schema 1"):
        partslib.read_library_file(bad)


@pytest.mark.parametrize(("machine", "reason"), [
    ({"name": "A", "class": "bellows_ascending", "controls": [{"control": "rate", "min": 4, "max": 40, "step": 0}]},
     "machines[0] ('A'): Breaths per minute step: 0 — must be above 0"),
    ({"name": "A", "class": "bellows_ascending", "controls": [{"control": "rate", "min": 4}]},
     "needs control, min, max and step"),
    ({"name": "A", "class": "bellows_ascending", "colour": "red"}, "unknown fields: colour"),
    ({"name": "A", "class": "bellows_ascending", "compressible_ml_cmh2o": "1"}, "must be a number or null"),
    ({"name": "A", "class": "zzz"}, "is not a ventilator class"),
])
def test_bad_machines_in_a_file_are_refused_with_the_entry_named(tmp_path, machine, reason):
    path = tmp_path / "shared.json"
    path.write_text(json.dumps({"format": "ventset-clinic-parts", "schema_version": 2, "machines": [machine]}),
                    encoding="utf-8")
    with pytest.raises(partslib.ClinicLibraryError) as info:
        partslib.read_library_file(path)
    assert reason in str(info.value) and "\n" not in str(info.value)


def test_export_and_import_carry_machines_with_the_same_conflict_rules(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "a"))
    partslib.save_clinic_library(_library())
    shared = tmp_path / "shared.json"
    partslib.write_library_file(partslib.load_clinic_library(), shared)
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "b"))
    mine = ClinicMachine.checked("Theatre 2 bellows", "bellows_ascending", [{"control": "rate", "step": 1}])
    partslib.save_clinic_library(partslib.ClinicLibrary().with_machine(mine))
    report = partslib.import_file(shared)
    b = partslib.load_clinic_library()
    assert b.machine("Theatre 2 bellows") == mine  # kept, never overwritten silently
    assert b.machine("Rodent piston") == _library().machine("Rodent piston") and b.part("Blue HME, cat")
    (conflict,) = report.conflicts
    assert conflict.kind == "ventilator" and "rate 2-60 by 1" in conflict.local
    assert "rate 4-40 by 2" in conflict.incoming
    assert partslib.import_file(shared).added == ()  # twice: nothing new
    report = partslib.import_file(shared, "rename")
    assert partslib.load_clinic_library().machine("Theatre 2 bellows (imported)") == \
        ClinicMachine(**{**_theatre().__dict__, "name": "Theatre 2 bellows (imported)"})
    partslib.import_file(shared, "replace")
    assert partslib.load_clinic_library().machine("Theatre 2 bellows") == _theatre()


# --------------------------------------------------------------------------------------------------------------
# planned on as a class is
# --------------------------------------------------------------------------------------------------------------

def test_a_clinic_machine_is_dialled_on_its_own_steps_and_re_evaluated_as_dialled():
    partslib.save_clinic_library(_library())
    p = _plan("dog", "20 kg", "theatre 2 bellows")
    ms = p.machine
    assert ms is not None and ms.machine.key == "Theatre 2 bellows" and ms.machine.class_of == "bellows_ascending"
    rate, vt = ms.setting("rate"), ms.setting("tidal_volume")
    assert rate.value % 2 == 0 and 4 <= rate.value <= 40  # on the clinic's step of 2, not the class's 1
    assert vt.value % 25 == 0
    ev = evaluate(ms.delivery.subject, ms.evaluation.vt_ml, ms.evaluation.rate_per_min)
    assert ev.paco2_mmhg == ms.expected_paco2_mmhg
    # Compressible volume: the circuit's plus the measured 1.2 mL/cmH2O of the machine, replacing the Boyle
    # estimate of its internal gas (hand sum).
    circuit = p.subject.compressible_ml_cmh2o
    assert ms.rig.compressible_ml_cmh2o == pytest.approx(circuit + 1.2, abs=1e-12)
    # Hand calculation: set volume = patient VT + C × (peak − PEEP) (gas compressed in circuit and machine by
    # the pressure rise of the breath),
    # and what enters the breath path is the bellows volume + FGF × Ti (fresh gas coupled in this class).
    fgf_ml_s = p.oxygen.fresh_gas_ml_min / 60.0
    entering = vt.value + fgf_ml_s * ms.evaluation.ti_s
    compressed = (circuit + 1.2) * (ms.evaluation.peak_cmh2o - ms.evaluation.peep_cmh2o)
    assert ms.evaluation.vt_ml == pytest.approx(entering - compressed, rel=1e-9)


def test_an_air_driven_machine_draws_no_driving_gas_from_the_oxygen_supply():
    partslib.save_clinic_library(_library())
    ms = _plan("dog", "20 kg", "Theatre 2 bellows").machine
    o = ms.oxygen
    # Hand calculation: driving gas = 1.2 × the bellows' minute volume (the entered multiple), as air.
    machine_minute_l = ms.delivery.machine_ml * ms.evaluation.rate_per_min / 1000.0
    assert o.driving_gas_l_min == pytest.approx(1.2 * machine_minute_l, rel=1e-12) and o.driving_gas == "air"
    assert o.use_l_min == o.fresh_gas_l_min  # oxygen is the fresh gas only
    # A full E cylinder, 680 L of free gas (the class's usual supply), lasts content ÷ use minutes.
    assert o.supply_min == pytest.approx(680.0 / o.fresh_gas_l_min, rel=1e-12)
    assert "MACHINE_DRIVING_AIR" in {c.code for c in ms.cautions}
    oxygen = ClinicMachine.checked("O2 bellows", "bellows_ascending", driving_gas="oxygen", driving_gas_ve_multiple=1.2)
    ms2 = on_machine(_plan("dog", "20 kg"), oxygen.as_machine(), LIB, plan_at)
    assert ms2.oxygen.use_l_min == pytest.approx(ms2.oxygen.fresh_gas_l_min + ms2.oxygen.driving_gas_l_min)


def test_a_clinic_range_that_cannot_reach_the_patient_is_said():
    partslib.save_clinic_library(partslib.ClinicLibrary().with_machine(ClinicMachine.checked(
        "Big bellows", "bellows_ascending", [{"control": "tidal_volume", "min": 400, "max": 1600, "step": 50}])))
    ms = _plan("cat", "4 kg", "Big bellows").machine
    codes = {c.code for c in ms.cautions}
    assert "MACHINE_PATIENT_TOO_SMALL" in codes and ms.setting("tidal_volume").value == 400
    text = next(c.message for c in ms.cautions if c.code == "MACHINE_PATIENT_TOO_SMALL")
    assert "Big bellows" in text and "no lower than 400 mL" in text


def test_find_machine_prefers_classes_then_clinic_names_and_says_what_it_cannot_find():
    own = (_theatre(),)
    assert find_machine("bellows_ascending", clinic=own).key == "bellows_ascending"
    assert find_machine("THEATRE 2  bellows", clinic=own).key == "Theatre 2 bellows"
    assert find_machine("theatre", clinic=own).key == "Theatre 2 bellows"  # a unique part of a name
    with pytest.raises(InputError, match="matches 4 ventilator classes .* and 1 of the clinic's machines"):
        find_machine("bellows", clinic=own)
    with pytest.raises(InputError, match="or one of the clinic's machines"):
        find_machine("toaster", clinic=own)


def test_a_damaged_library_is_said_when_a_clinic_machine_is_asked_for(capsys):
    partslib.library_path().write_text('{"format": "ventset-clinic-parts", "schema_version": 2, "machines": [1]}',
                                       encoding="utf-8")
    assert main(["plan", "--species", "dog", "--mass", "20", "--machine", "Theatre 2"]) == 2
    err = capsys.readouterr().err
    assert "--machine" in err and "cannot be read" in err and err.count("\n") == 1
    # a class still plans: the clinic file is not read for a class key
    assert main(["plan", "--species", "dog", "--mass", "20", "--machine", "bellows_ascending"]) == 0


def test_a_case_with_a_clinic_machine_opens_where_the_machine_is_missing(tmp_path, capsys, monkeypatch):
    from ventset import cases

    partslib.save_clinic_library(_library())
    case = tmp_path / "rufus.ventcase"
    assert main(["plan", "--species", "dog", "--mass", "20", "--machine", "theatre 2", "--save", str(case)]) == 0
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "elsewhere"))
    opened = cases.open_case(case, LIB)
    assert opened.case.request.circuit.machine == "Theatre 2 bellows"  # kept as entered
    assert opened.plan is None and "Theatre 2 bellows" in opened.plan_error


# --------------------------------------------------------------------------------------------------------------
# command line
# --------------------------------------------------------------------------------------------------------------

def _run(capsys, *args) -> tuple[int, str, str]:
    rc = main(list(args))
    out, err = capsys.readouterr()
    return rc, out, err


def test_machines_add_edit_list_plan_export_import_remove(tmp_path, capsys, monkeypatch):
    rc, _, err = _run(capsys, "machines", "add", "Theatre 2 bellows", "--class", "bellows_ascending",
                      "--min", "rate=4", "--max", "rate=40", "--step", "rate=2", "--compressible-volume", "1.2",
                      "--driving-gas", "air", "--note", "left-hand theatre (invented)")
    assert rc == 0 and "added ventilator 'Theatre 2 bellows'" in err
    rc, out, _ = _run(capsys, "machines", "--json")
    own = [m for m in json.loads(out) if m["origin"] == "clinic"]
    assert len(own) == 1 and own[0]["class"] == "bellows_ascending" and own[0]["compressible_ml_cmh2o"] == 1.2
    rate = next(c for c in own[0]["controls"] if c["control"] == "rate")
    assert (rate["min"], rate["max"], rate["step"]) == (4, 40, 2)
    rc, out, _ = _run(capsys, "machines")
    assert "THE CLINIC'S MACHINES" in out and "Theatre 2 bellows" in out and "4/min to 40/min in steps of 2/min" in out

    rc, out, _ = _run(capsys, "plan", "--species", "dog", "--mass", "20 kg", "--machine", "theatre 2", "--json")
    block = json.loads(out)["machine"]
    assert block["key"] == block["name"] == "Theatre 2 bellows" and block["class"] == "bellows_ascending"
    assert block["origin"] == "clinic" and block["driving_gas"] == "air"
    dial = next(c for c in block["controls"] if c["control"] == "rate")
    assert dial["step"] == 2 and dial["value"] % 2 == 0
    rc, out, _ = _run(capsys, "plan", "--species", "dog", "--mass", "20 kg", "--machine", "theatre 2")
    assert "ON THE MACHINE: THEATRE 2 BELLOWS\n  The clinic's own machine, made from the class: Ascending" in out

    rc, _, err = _run(capsys, "machines", "edit", "Theatre 2 bellows", "--step", "rate=1", "--reset",
                      "compressible-volume", "--rename", "Theatre 2")
    assert rc == 0 and "changed ventilator 'Theatre 2'" in err
    edited = partslib.load_clinic_library().machine("Theatre 2")
    assert edited.range_of("rate").step == 1 and edited.compressible_ml_cmh2o is None
    assert edited.driving_gas == "air" and edited.note == "left-hand theatre (invented)"  # kept

    shared = tmp_path / "shared.json"
    rc, _, err = _run(capsys, "machines", "export", str(shared))
    assert rc == 0 and "exported 1 ventilators" in err
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "other"))
    partslib.save_clinic_library(partslib.ClinicLibrary().with_machine(ClinicMachine.checked("Theatre 2",
                                                                                             "bellows_paediatric")))
    rc, _, err = _run(capsys, "machines", "import", str(shared))
    assert rc == 1 and "Conflicts (1)" in err  # kept, and the exit code tells a script
    rc, _, err = _run(capsys, "machines", "import", str(shared), "--on-conflict", "replace")
    assert rc == 0 and partslib.load_clinic_library().machine("Theatre 2") == edited
    rc, _, err = _run(capsys, "machines", "remove", "theatre 2")
    assert rc == 0 and partslib.load_clinic_library().machines == ()


@pytest.mark.parametrize(("args", "needle"), [
    (("--step", "rate=0"), "Breaths per minute step: 0 — must be above 0"),
    (("--min", "rate=50", "--max", "rate=20"), "Breaths per minute min: 50/min — must be below the max (20/min)"),
    (("--min", "rate=-3"), "Breaths per minute min: -3/min — must be above 0"),
    (("--min", "rate"), "--min: rate — needs CONTROL=VALUE"),
    (("--min", "flow=3"), "Control: flow — is not a control of"),
    (("--driving-gas-use", "lots"), "Driving gas use"),
])
def test_bad_machine_options_are_one_line_naming_the_field(capsys, args, needle):
    rc, _, err = _run(capsys, "machines", "add", "Theatre 2", "--class", "bellows_ascending", *args)
    assert rc == 2 and needle in err and err.count("\n") == 1 and "Traceback" not in err
    assert partslib.load_clinic_library().machines == ()  # nothing saved


def test_ranking_includes_the_clinic_machines(capsys):
    partslib.save_clinic_library(_library())
    rc, out, _ = _run(capsys, "machines", "--species", "mouse", "--mass", "25 g", "--json")
    keys = [m["key"] for m in json.loads(out)]
    assert rc == 0 and "Rodent piston" in keys and "Theatre 2 bellows" in keys
    assert keys.index("Rodent piston") < keys.index("Theatre 2 bellows")  # the small-patient piston serves a mouse
    ranked = {m["key"]: m for m in json.loads(out)}
    assert any(c["code"] == "MACHINE_PATIENT_TOO_SMALL" for c in ranked["Theatre 2 bellows"]["cautions"])
