"""Case files: round trip, migration, refusal of hostile or newer files, crash safety, autosave recovery."""

from __future__ import annotations

import dataclasses
import json
import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ventset import __version__, autosave, cases, storage
from ventset.errors import VentsetError
from ventset.fields import FIELDS
from ventset.library import load_library
from ventset.model import ApparatusPart, Circuit, Patient, Request, Strategy, Targets, request_from_dict
from ventset.planner import plan
from ventset.report import plan_to_dict

ROOT = Path(__file__).resolve().parent.parent
# Text the text policy accepts in names (ventset.textpolicy refuses controls, direction controls, line breaks
# and lone surrogates at entry, in the writers and in the loader alike).
ALLOWED = st.characters(blacklist_categories=("Cc", "Cs"),
                        blacklist_characters="\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069"
                                             "\u200e\u200f\u061c\u2028\u2029")
LIB = load_library()
SUPPRESS = [HealthCheck.function_scoped_fixture, HealthCheck.too_slow]


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _request(name: str = "Juniper (invented)") -> Request:
    return Request(Patient("dog", 18.5, name=name),
                   Circuit(parts=(ApparatusPart("Clinic HME, small", 12.0, "measured at Brookfield clinic"),
                                  ApparatusPart("Elbow", 4.0)), tube_id_mm=8.0, tube_length_cm=6.0),
                   Targets(etco2_mmhg=38.0, peep_cmh2o=4.0), Strategy("volume_first", vt_ml_kg=9.0))


def _saved(tmp_path: Path, request: Request | None = None) -> tuple[Path, cases.Case]:
    case = cases.case_for_request(request or _request(), LIB)
    path = tmp_path / f"juniper{cases.SUFFIX}"
    return path, cases.save_case(path, case)


# --------------------------------------------------------------------------------------------
# round trip
# --------------------------------------------------------------------------------------------

def test_save_and_open_give_the_same_request_and_plan(tmp_path):
    path, saved = _saved(tmp_path)
    opened = cases.open_case(path, LIB)
    assert opened.case == saved
    assert opened.case.request == _request()
    assert opened.case.plan == plan_to_dict(plan(_request(), LIB))
    assert plan_to_dict(opened.plan) == saved.plan
    assert opened.differences == () and opened.messages == ()
    raw = json.loads(path.read_text(encoding="utf-8"))
    assert raw["format"] == "ventset-case" and raw["schema_version"] == cases.SCHEMA_VERSION
    assert raw["ventset_version"] == __version__ and raw["species_version"] == LIB.species_version


def _float_for(spec):
    lo = spec.lo if spec.lo is not None else -1e6
    hi = spec.hi if spec.hi is not None else 1e6
    return st.floats(lo, hi, allow_nan=False, allow_infinity=False, exclude_min=spec.lo_open)


def _nullable(path: str) -> bool:
    group, name = path.split(".")
    cls = {"patient": Patient, "circuit": Circuit, "targets": Targets, "strategy": Strategy}[group]
    return "None" in str(next(f.type for f in dataclasses.fields(cls) if f.name == name))


@st.composite
def any_request(draw):
    """Any request within the hard limits of every field (most do not plan; they must still round-trip)."""
    data: dict = {"patient": {}, "circuit": {}, "targets": {}, "strategy": {}}
    for spec in FIELDS.values():
        group, name = spec.path.split(".")
        value = draw(st.none() | _float_for(spec)) if _nullable(spec.path) else draw(_float_for(spec))
        data[group][name] = value
    data["patient"]["species"] = draw(st.sampled_from(sorted(LIB.species)) | st.text(ALLOWED, max_size=12))
    data["patient"]["name"] = draw(st.text(ALLOWED, max_size=40))
    data["circuit"]["parts"] = draw(st.lists(st.fixed_dictionaries(
        {"name": st.text(ALLOWED, min_size=1, max_size=30), "volume_ml": st.floats(0, 500),
         "source": st.text(ALLOWED, max_size=40)}), max_size=4))
    data["circuit"]["mode"] = draw(st.sampled_from([None, "volume", "pressure"]))
    data["circuit"]["circuit_type"] = draw(st.sampled_from([None, *LIB.circuits]))
    data["strategy"]["name"] = draw(st.sampled_from(["volume_first", "least_work"]))
    return request_from_dict(data)


@st.composite
def plannable_request(draw):
    """A request of a real species within its mass range, the rest mostly defaults: these plan."""
    sp = LIB.species[draw(st.sampled_from(sorted(LIB.species)))]
    mass = draw(st.floats(sp.mass_kg.min, sp.mass_kg.max))
    parts = tuple(ApparatusPart(n, v) for n, v in draw(st.lists(
        st.tuples(st.text(ALLOWED, min_size=1, max_size=20), st.floats(0, max(0.1, mass * 2))), max_size=3)))
    return Request(Patient(sp.key, mass, name=draw(st.text(ALLOWED, max_size=30))), Circuit(parts=parts),
                   Targets(paco2_mmhg=draw(st.none() | st.floats(30, 60))),
                   Strategy(draw(st.sampled_from(["volume_first", "least_work"]))))


def _round_trip(tmp_path: Path, request: Request) -> None:
    case = cases.case_for_request(request, LIB)
    path = tmp_path / "prop.ventcase"
    saved = cases.save_case(path, case, replace_any=True)
    loaded = cases.load_case(path)
    assert loaded.case == saved
    assert loaded.case.request == request
    assert loaded.case.plan == case.plan
    opened = cases.open_case(path, LIB)
    assert opened.differences == ()
    if case.plan is not None:
        assert plan_to_dict(opened.plan) == case.plan
    else:
        assert opened.plan is None and opened.plan_error == case.plan_error != ""


@settings(suppress_health_check=SUPPRESS)
@given(any_request())
def test_round_trip_any_request(tmp_path, request):
    _round_trip(tmp_path, request)


@settings(suppress_health_check=SUPPRESS)
@given(plannable_request())
def test_round_trip_plannable_request(tmp_path, request):
    _round_trip(tmp_path, request)


def test_every_model_field_type_is_checked_on_load():
    # If model.py gains a field type the case loader does not know, this fails (rather than a user's file).
    for cls in (Patient, Circuit, Targets, Strategy, ApparatusPart):
        for f in dataclasses.fields(cls):
            cases._field_checker(str(f.type))


def test_unplannable_request_is_kept_with_the_reason(tmp_path):
    request = Request(Patient("cat", 400.0, name="Too heavy (invented)"))
    path, saved = _saved(tmp_path, request)
    assert saved.plan is None and "Body mass" in saved.plan_error
    opened = cases.open_case(path, LIB)
    assert opened.case.request == request and opened.plan is None
    assert any("cannot be planned" in m for m in opened.messages)


def test_a_case_the_planner_cannot_compute_still_opens(tmp_path):
    # A subnormal airway resistance passes the field's open lower bound (> 0) but gives a zero time constant.
    path, _ = _saved(tmp_path)
    _tamper(path, lambda d: d["request"]["patient"].update(resistance_cmh2o_l_s=5e-324))
    opened = cases.open_case(path, LIB)
    assert opened.plan is None and opened.case.request.patient.resistance_cmh2o_l_s == 5e-324
    assert any("no longer give a plan" in d for d in opened.differences) or "internal error" in opened.plan_error


# --------------------------------------------------------------------------------------------
# a stored plan that no longer matches
# --------------------------------------------------------------------------------------------

def _tamper(path: Path, change) -> None:
    data = json.loads(path.read_text(encoding="utf-8"))
    change(data)
    path.write_text(json.dumps(data), encoding="utf-8")


def test_differences_from_the_stored_plan_are_reported_not_replaced(tmp_path):
    path, saved = _saved(tmp_path)

    def change(d):
        d["species_version"] = "0-old"
        d["plan"]["ventilation"]["rate_per_min"] = 31.0
        d["plan"]["cautions"] = [{"severity": "danger", "code": "OLD_RULE", "message": "old"}]
        d["plan"]["assumptions"][0]["source"] = "an older table"

    _tamper(path, change)
    before = path.read_bytes()
    opened = cases.open_case(path, LIB)
    text = "\n".join(opened.messages)
    assert "species data changed" in text and "0-old" in text
    assert any(d.startswith("Rate: stored 31 /min, now") for d in opened.differences)
    assert "Caution no longer raised: OLD_RULE" in opened.differences
    assert any(d.startswith("New caution:") for d in opened.differences)
    assert any("source changed" in d for d in opened.differences)
    assert opened.case.plan["ventilation"]["rate_per_min"] == 31.0  # the stored plan is still there
    assert path.read_bytes() == before
    # Saving keeps the replaced plan under earlier_plans.
    current = cases.make_case(opened.case.request, opened.plan, library=LIB, previous=opened.case)
    assert current.earlier_plans[-1]["plan"]["ventilation"]["rate_per_min"] == 31.0
    assert current.earlier_plans[-1]["species_version"] == "0-old"
    resaved = cases.save_case(path, current)
    assert cases.load_case(path).case.earlier_plans == resaved.earlier_plans


def test_edits_do_not_pile_up_earlier_plans(tmp_path):
    path, saved = _saved(tmp_path)
    edited = dataclasses.replace(saved.request, patient=dataclasses.replace(saved.request.patient, mass_kg=20.0))
    case = cases.make_case(edited, plan(edited, LIB), library=LIB, previous=saved)
    assert case.earlier_plans == () and case.created_at == saved.created_at


def test_compare_plan_dicts_on_identical_and_odd_input():
    d = plan_to_dict(plan(_request(), LIB))
    assert cases.compare_plan_dicts(d, json.loads(json.dumps(d))) == []
    assert cases.compare_plan_dicts(d, None) == ["One of the plans is missing."]
    assert cases.compare_plan_dicts([1], d) == ["The stored plan is not in a form this version can compare."]
    many = json.loads(json.dumps(d))
    for section in ("ventilation", "pressures", "metabolism", "dead_space", "oxygen"):
        for k, v in many[section].items():
            if isinstance(v, float):
                many[section][k] = v + 1
    lines = cases.compare_plan_dicts(d, many)
    assert len(lines) <= cases.MAX_DIFFERENCES
    assert lines[0].startswith("Set tidal volume: stored")  # the settings come first
    assert lines[-1].startswith("Derived values") and lines[-1].endswith("more")


# --------------------------------------------------------------------------------------------
# migration
# --------------------------------------------------------------------------------------------

V0 = {
    "ventset": "0.0.3",
    "saved": 1709546400,  # 2024-03-04T10:00:00Z
    "patient": {"species": "cat", "mass_kg": 3.9, "name": "Pebble (invented)"},
    "circuit": {"apparatus": {"Y-piece, small": 3.5, "Capnograph adapter": 1.0}, "tube_id_mm": 4.0,
                "tube_length_cm": 4.0},
    "targets": {"paco2_mmhg": 42.0},
}


def test_schema_0_is_migrated_in_memory_and_backed_up_on_save(tmp_path):
    path = tmp_path / "pebble.json"
    path.write_text(json.dumps(V0), encoding="utf-8")
    before = path.read_bytes()
    opened = cases.open_case(path, LIB)
    assert opened.migrated_from == 0
    assert "older layout (schema 0)" in opened.messages[0]
    req = opened.case.request
    assert req.patient == Patient("cat", 3.9, name="Pebble (invented)")
    assert req.circuit.parts == (ApparatusPart("Y-piece, small", 3.5), ApparatusPart("Capnograph adapter", 1.0))
    assert req.targets.paco2_mmhg == 42.0 and req.circuit.tube_id_mm == 4.0
    assert opened.case.created_at == "2024-03-04T10:00:00Z" and opened.case.ventset_version == "0.0.3"
    assert opened.plan is not None
    assert path.read_bytes() == before  # opening changes nothing
    cases.save_case(path, cases.make_case(req, opened.plan, library=LIB, previous=opened.case))
    assert (tmp_path / "pebble.json.schema0.bak").read_bytes() == before
    again = cases.load_case(path)
    assert again.migrated_from is None and again.case.request == req


def test_every_migration_step_leads_to_the_current_schema():
    assert set(cases.MIGRATIONS) == set(range(cases.SCHEMA_VERSION))
    data, old = cases.migrate(json.loads(json.dumps(V0)))
    assert old == 0 and data["schema_version"] == cases.SCHEMA_VERSION


@pytest.mark.parametrize("change, reason", [
    (lambda d: d.update(schema_version=cases.SCHEMA_VERSION + 1), "written by a newer ventset"),
    (lambda d: d.update(schema_version=999), "update ventset to open it"),
    (lambda d: d.update(schema_version=-1), "which no ventset has written"),
    (lambda d: d.update(schema_version="1"), "must be a whole number"),
    (lambda d: d.update(schema_version=True), "must be a whole number"),
    (lambda d: d.pop("schema_version"), "not a ventset case file"),
    (lambda d: d.update(format="something-else"), "not a ventset case file"),
])
def test_newer_or_wrong_schema_is_refused_and_the_file_untouched(tmp_path, change, reason):
    path, _ = _saved(tmp_path)
    _tamper(path, change)
    before, mtime = path.read_bytes(), path.stat().st_mtime_ns
    with pytest.raises(cases.CaseError, match=reason):
        cases.open_case(path, LIB)
    assert path.read_bytes() == before and path.stat().st_mtime_ns == mtime
    assert sorted(p.name for p in tmp_path.iterdir()) == [path.name, "data"] or \
        sorted(p.name for p in tmp_path.iterdir()) == [path.name]


def test_saving_over_a_newer_case_or_a_foreign_file_is_refused(tmp_path):
    path, saved = _saved(tmp_path)
    _tamper(path, lambda d: d.update(schema_version=7))
    before = path.read_bytes()
    with pytest.raises(cases.CaseSaveError, match="newer ventset"):
        cases.save_case(path, saved)
    assert path.read_bytes() == before
    notes = tmp_path / "notes.txt"
    notes.write_text("theatre list for Tuesday")
    with pytest.raises(cases.CaseSaveError, match="not a readable ventset case"):
        cases.save_case(notes, saved)
    assert notes.read_text() == "theatre list for Tuesday"
    cases.save_case(notes, saved, replace_any=True)  # after the user confirmed "replace"
    assert cases.load_case(notes).case.request == saved.request


# --------------------------------------------------------------------------------------------
# hostile files
# --------------------------------------------------------------------------------------------

def _valid_doc() -> dict:
    return cases.case_to_dict(cases.case_for_request(_request(), LIB))


def _with(path_keys: tuple, value):
    def make():
        d = _valid_doc()
        obj = d
        for k in path_keys[:-1]:
            obj = obj[k]
        obj[path_keys[-1]] = value
        return json.dumps(d).encode()
    return make


HOSTILE = {
    "truncated": (lambda: json.dumps(_valid_doc()).encode()[:300], "not complete, valid JSON"),
    "empty": (lambda: b"", "is empty"),
    "binary": (lambda: os.urandom(4096).replace(b"{", b"x"), "not"),
    "deeply_nested": (lambda: b"[" * 100_000, "nested too deeply"),
    "nan": (lambda: json.dumps(_valid_doc()).replace('"mass_kg": 18.5', '"mass_kg": NaN').encode(), "NaN"),
    "infinity": (lambda: json.dumps(_valid_doc()).replace('"mass_kg": 18.5', '"mass_kg": Infinity').encode(),
                 "Infinity"),
    "duplicate_keys": (lambda: json.dumps(_valid_doc()).replace('"mass_kg": 18.5', '"mass_kg": 18.5, "mass_kg": 1')
                       .encode(), "twice"),
    "lone_surrogate": (lambda: json.dumps(_valid_doc()).replace('"name": "Juniper (invented)"',
                                                                '"name": "Juniper \\ud83d"').encode(),
                       "lone UTF-16 surrogate"),
    "mass_is_text": (_with(("request", "patient", "mass_kg"), "twenty"), "request.patient.mass_kg' must be a number"),
    "mass_is_bool": (_with(("request", "patient", "mass_kg"), True), "must be a number"),
    "mass_huge_int": (lambda: json.dumps(_valid_doc()).replace('"mass_kg": 18.5', '"mass_kg": 1' + "0" * 400)
                      .encode(), "too large"),
    "species_is_number": (_with(("request", "patient", "species"), 5), "request.patient.species' must be text"),
    "parts_not_list": (_with(("request", "circuit", "parts"), {"a": 1}), "must be a list"),
    "part_missing_volume": (_with(("request", "circuit", "parts"), [{"name": "x"}]), "volume_ml' is missing"),
    "unknown_field": (_with(("request", "patient", "colour"), "tabby"), "not a field this version knows"),
    "unknown_top_level": (_with(("macro",), "run me"), "not part of case schema"),
    "no_patient": (_with(("request",), {}), "request.patient' is missing"),
    "request_is_list": (_with(("request",), []), "must be an object"),
    "plan_is_list": (_with(("plan",), [1, 2]), "'plan' must be an object or null"),
    "timeline_is_text": (_with(("timeline",), "x"), "'timeline' must be a list"),
    "bad_timestamp": (_with(("saved_at",), "last Tuesday"), "ISO 8601"),
    "top_level_list": (lambda: b"[1, 2, 3]", "not a ventset case file"),
    "top_level_string": (lambda: b'"hello"', "not a ventset case file"),
    "v0_with_bad_apparatus": (lambda: json.dumps({**V0, "circuit": {"apparatus": [1]}}).encode(),
                              "must map part names"),
}


@pytest.mark.parametrize("name", sorted(HOSTILE))
def test_hostile_case_files_are_refused_clearly_and_nothing_changes(tmp_path, name):
    make, reason = HOSTILE[name]
    good_path, good = _saved(tmp_path)
    good_bytes = good_path.read_bytes()
    bad = tmp_path / f"{name}.ventcase"
    raw = make()
    bad.write_bytes(raw)
    with pytest.raises(cases.CaseError) as info:
        cases.open_case(bad, LIB)
    message = str(info.value)
    assert isinstance(info.value, VentsetError)
    assert reason in message and str(bad) in message and "\n" not in message
    assert bad.read_bytes() == raw and good_path.read_bytes() == good_bytes
    assert cases.load_case(good_path).case == good  # the open case is untouched


def test_oversized_file_and_folder_are_refused(tmp_path):
    big = tmp_path / "big.ventcase"
    with big.open("wb") as fh:
        fh.truncate(50 * 1024 * 1024)
    with pytest.raises(cases.CaseError, match="MB; this kind of file is at most 10 MB"):
        cases.load_case(big)
    with pytest.raises(cases.CaseError, match="folder, not a file"):
        cases.load_case(tmp_path)
    with pytest.raises(cases.CaseSaveError, match="folder, not a file"):
        cases.save_case(tmp_path, cases.case_for_request(_request(), LIB))


# --------------------------------------------------------------------------------------------
# crash safety: a writer killed at random points leaves the old or the new case, never a torn one
# --------------------------------------------------------------------------------------------

ATOMIC_CHILD = r"""
import dataclasses, json, os, sys, time
from ventset.cases import case_from_dict, save_case
real_fsync = os.fsync
def slow_fsync(fd):  # a slow disk (USB stick, network share): widens the window a kill has to survive
    time.sleep(0.004)
    real_fsync(fd)
os.fsync = slow_fsync
target, base, start = sys.argv[1], sys.argv[2], int(sys.argv[3])
case, _ = case_from_dict(json.loads(open(base, encoding="utf-8").read()))
print("ready", flush=True)
k = start
while True:
    k += 1
    patient = dataclasses.replace(case.request.patient, name=f"seq {k}")
    save_case(target, dataclasses.replace(case, note=f"save {k}",
                                          request=dataclasses.replace(case.request, patient=patient)))
"""

NAIVE_CHILD = r"""
import json, sys
target, base, start = sys.argv[1], sys.argv[2], int(sys.argv[3])
doc = json.loads(open(base, encoding="utf-8").read())
print("ready", flush=True)
k = start
while True:
    k += 1
    doc["note"] = f"save {k}"
    with open(target, "w", encoding="utf-8") as fh:  # the naive way: truncate, then write in pieces
        json.dump(doc, fh, indent=2)
"""


def _big_case_doc() -> dict:
    """A valid case with a long (invented) anaesthetic record, so each write takes a while."""
    doc = cases.case_to_dict(cases.case_for_request(_request("seq 0"), LIB))
    doc["note"] = "save 0"
    doc["timeline"] = [{"time_min": i * 5.0, "etco2_mmhg": 38.0 + (i % 7), "note": "routine check " * 4}
                       for i in range(300)]
    return doc


def _kill_loop(tmp_path: Path, child: str, kills: int, budget_s: float) -> list[tuple[bool, int, bool]]:
    """Start ``child`` repeatedly, SIGKILL it after a random delay; returns (opens, seq, temp left) per kill."""
    base = tmp_path / "base.json"
    doc = _big_case_doc()
    base.write_text(json.dumps(doc), encoding="utf-8")
    target = tmp_path / "crash.ventcase"
    target.write_text(json.dumps(doc, indent=2), encoding="utf-8")
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    rng = random.Random(20240304)
    results = []
    seq = 0
    deadline = time.monotonic() + budget_s
    while len(results) < kills and time.monotonic() < deadline:
        proc = subprocess.Popen([sys.executable, "-c", child, str(target), str(base), str(seq)],
                                stdout=subprocess.PIPE, env=env)
        assert proc.stdout.readline().strip() == b"ready"
        time.sleep(rng.uniform(0.0, 0.1))
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        proc.stdout.close()
        temp_left = any(p.name.startswith(".crash.ventcase.") for p in tmp_path.iterdir())
        try:
            loaded = cases.load_case(target).case
            seq = int(loaded.note.split()[1])
            ok = loaded.request.patient.name in {f"seq {seq}", "seq 0"} and len(loaded.timeline) == 300
            results.append((ok, seq, temp_left))
        except cases.CaseError:
            results.append((False, seq, temp_left))
            target.write_text(json.dumps(doc, indent=2), encoding="utf-8")
    return results


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs SIGKILL (POSIX)")
def test_killed_atomic_writer_always_leaves_an_openable_case(tmp_path):
    results = _kill_loop(tmp_path, ATOMIC_CHILD, kills=40, budget_s=13.0)
    assert len(results) >= 30
    assert all(ok for ok, _, _ in results), results
    seqs = [s for _, s, _ in results]
    assert seqs == sorted(seqs) and seqs[-1] > 0  # always the old or a newer save, never older
    assert any(temp for _, _, temp in results), "no kill landed mid-write; the test did not bite"
    assert not any(p.name.endswith(".tmp") for p in tmp_path.iterdir())  # the loader cleaned them


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs SIGKILL (POSIX)")
def test_negative_control_a_naive_writer_does_get_torn(tmp_path):
    results = _kill_loop(tmp_path, NAIVE_CHILD, kills=12, budget_s=4.0)
    assert any(not ok for ok, _, _ in results), "the naive writer was never torn: the kill test would not bite"


# --------------------------------------------------------------------------------------------
# autosave and recovery
# --------------------------------------------------------------------------------------------

CRASH_CHILD = r"""
import json, os, signal, sys, time
from ventset.autosave import AutosaveSession
from ventset.cases import case_from_dict
case, _ = case_from_dict(json.loads(open(sys.argv[1], encoding="utf-8").read()))
session = AutosaveSession()
session.save(case, "/clinic/cases/juniper.ventcase")
print("saved", flush=True)
if sys.argv[2] == "crash":
    os.kill(os.getpid(), signal.SIGKILL)
time.sleep(30)
"""


def _child_session(tmp_path: Path, how: str) -> tuple[subprocess.Popen, cases.Case]:
    case = cases.case_for_request(_request(), LIB)
    doc = tmp_path / "doc.json"
    doc.write_text(json.dumps(cases.case_to_dict(case)), encoding="utf-8")
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    proc = subprocess.Popen([sys.executable, "-c", CRASH_CHILD, str(doc), how], stdout=subprocess.PIPE, env=env)
    assert proc.stdout.readline().strip() == b"saved"
    return proc, case


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs SIGKILL (POSIX)")
def test_recovery_is_offered_after_a_crash(tmp_path):
    proc, case = _child_session(tmp_path, "crash")
    proc.wait()
    proc.stdout.close()
    assert proc.returncode == -signal.SIGKILL
    found = autosave.find_recoverable()
    assert len(found) == 1
    rec = found[0]
    assert rec.case == case and rec.source_path == Path("/clinic/cases/juniper.ventcase")
    assert "Juniper (invented)" in rec.title and "juniper.ventcase" in rec.title
    session = autosave.AutosaveSession()
    restored = autosave.restore(rec, session)
    assert restored == case
    assert autosave.find_recoverable(exclude=session) == []
    assert session.path.exists()  # the new window holds it now
    assert (autosave.autosave_dir() / "dismissed" / rec.path.name).exists()  # old copy kept aside
    session.close(keep_unsaved=False)
    assert autosave.find_recoverable() == []


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs SIGKILL (POSIX)")
def test_a_running_window_is_not_offered_for_recovery(tmp_path):
    proc, _ = _child_session(tmp_path, "stay")
    try:
        assert autosave.find_recoverable() == []
    finally:
        proc.kill()
        proc.wait()
        proc.stdout.close()
    assert len(autosave.find_recoverable()) == 1


def test_clean_close_and_saved_case_leave_nothing_to_recover(tmp_path):
    case = cases.case_for_request(_request(), LIB)
    session = autosave.AutosaveSession()
    assert session.save(case) is True
    assert session.save(case) is False  # unchanged: not written again
    session.clear()
    assert not session.path.exists()
    session.save(case)
    session.close()  # unsaved work on a clean exit goes to dismissed, not to the bin
    assert autosave.find_recoverable() == []
    assert len(list((autosave.autosave_dir() / "dismissed").glob("session-*.json"))) == 1


def test_unreadable_autosave_is_listed_with_the_reason_and_can_be_dismissed(tmp_path):
    folder = autosave.autosave_dir()
    broken = folder / "session-20240101T000000-99999999-abcdef.json"
    broken.write_bytes(b'{"format": "ventset-autosave", "case": ')
    found = autosave.find_recoverable()
    assert len(found) == 1 and found[0].case is None and "not complete" in found[0].error
    with autosave.AutosaveSession() as session, pytest.raises(storage.ReadError):
        autosave.restore(found[0], session)
    autosave.dismiss(found[0])
    assert not broken.exists() and (folder / "dismissed" / broken.name).exists()


# --------------------------------------------------------------------------------------------
# recent files and the titration record
# --------------------------------------------------------------------------------------------

def test_recent_files_newest_first_without_duplicates(tmp_path):
    paths = [tmp_path / f"c{i}.ventcase" for i in range(12)]
    for p in paths:
        cases.add_recent(p)
    cases.add_recent(paths[3])
    recent = cases.recent_files()
    assert recent[0] == paths[3].resolve() and len(recent) == cases.RECENT_MAX
    assert len(set(recent)) == len(recent)
    cases.remove_recent(paths[3].resolve())
    assert paths[3].resolve() not in cases.recent_files()


def test_damaged_recent_list_reads_as_empty_and_is_rewritten(tmp_path):
    (storage.data_dir() / cases.RECENT_FILE).write_bytes(b"\x00\xff garbage")
    assert cases.recent_files() == []
    cases.add_recent(tmp_path / "a.ventcase")
    assert cases.recent_files() == [(tmp_path / "a.ventcase").resolve()]


def test_titration_record_round_trips_through_the_case(tmp_path):
    titrate = pytest.importorskip("ventset.titrate")
    request = _request()
    p = plan(request, LIB)
    m = titrate.Measurement(20.0, p.ventilation.tidal_volume_ml, p.ventilation.rate_per_min, paco2_mmhg=52.0,
                            etco2_mmhg=47.0, clock="09:40", note="after positioning")
    entries = titrate.record_measurement((), request, m, library=LIB)
    case = cases.make_case(request, p, library=LIB, timeline=entries)
    assert case.timeline == titrate.timeline_to_dict(entries)
    path = tmp_path / "t.ventcase"
    cases.save_case(path, case)
    opened = cases.open_case(path, LIB)
    assert cases.case_timeline(opened.case) == entries
    assert opened.messages == ()


def test_unreadable_titration_record_is_kept_and_reported(tmp_path):
    pytest.importorskip("ventset.titrate")
    path, saved = _saved(tmp_path)
    odd = {"schema": "ventset.timeline", "version": 99, "entries": []}
    _tamper(path, lambda d: d.update(timeline=odd))
    opened = cases.open_case(path, LIB)
    assert any("anaesthetic record" in m and "kept unchanged" in m for m in opened.messages)
    assert opened.case.timeline == odd
    resaved = cases.save_case(path, cases.make_case(opened.case.request, opened.plan, library=LIB,
                                                    previous=opened.case))
    assert resaved.timeline == odd
