"""Case files that hold a fish's gill irrigation plan: round trip through `irrigate --save` and `show`, strict refusal
of hostile or mutated files (one line naming the field, the file unchanged), the kind check in both directions, and
the schema 1 → 2 migration of ventilation cases."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ventset import case_irrigation as ci
from ventset import cases, storage
from ventset.aquatic.data import aquatic_data
from ventset.aquatic.irrigation import IrrigationRequest, plan_irrigation
from ventset.aquatic.report import irrigation_to_dict
from ventset.cli import main
from ventset.model import STANDING_NOTICE, Patient, Request

KOI = ["irrigate", "--species", "koi", "--mass", "2 kg", "--water-temperature", "20", "--salinity", "0",
       "--name", "Goldie (invented)"]
SUPPRESS = [HealthCheck.function_scoped_fixture, HealthCheck.too_slow]
ALLOWED = st.characters(blacklist_categories=("Cc", "Cs"),
                        blacklist_characters="\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069"
                                             "\u200e\u200f\u061c\u2028\u2029")


@pytest.fixture(autouse=True)
def _data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))


def _koi_case(tmp_path: Path) -> Path:
    path = tmp_path / "goldie.ventcase"
    request = IrrigationRequest("koi", 2.0, 20.0, 0.0, name="Goldie (invented)", system_volume_l=40.0)
    ci.save_irrigation_case(path, ci.irrigation_case_for_request(request))
    return path


# --------------------------------------------------------------------------------------------
# round trip
# --------------------------------------------------------------------------------------------

def test_irrigate_save_then_show_gives_the_same_plan(tmp_path, capsys):
    path = tmp_path / "goldie.ventcase"
    assert main([*KOI, "--saturation", "95", "--system-volume", "40 L", "--json", "--save", str(path)]) == 0
    out = capsys.readouterr()
    planned = json.loads(out.out)  # --save keeps stdout pure JSON; the note goes to stderr
    assert f"saved case to {path}" in out.err
    assert main(["show", str(path), "--json"]) == 0
    shown = capsys.readouterr()
    assert json.loads(shown.out) == planned and shown.err == ""  # nothing differs: no notes
    assert main(["show", str(path), "--stored"]) == 0
    assert json.loads(capsys.readouterr().out) == planned
    raw = json.loads(path.read_text(encoding="utf-8"))
    assert raw["kind"] == "irrigation" and raw["schema_version"] == cases.SCHEMA_VERSION
    assert raw["request"]["name"] == "Goldie (invented)" and raw["plan"] == planned


def test_show_text_and_summary_carry_the_flow_and_the_notice(tmp_path, capsys):
    path = _koi_case(tmp_path)
    plan = plan_irrigation(ci.load_irrigation_case(path).case.request)
    assert main(["show", str(path)]) == 0
    text = capsys.readouterr().out
    assert "Irrigation flow: 1.56 L/min" in text and STANDING_NOTICE in text  # 2 kg koi, 20 °C (test_aquatic_*)
    assert main(["show", str(path), "--summary"]) == 0
    summary = capsys.readouterr().out
    assert "Goldie (invented)" in summary and "Irrigation flow: 1.56 L/min" in summary
    assert "IRRIGATE_MOUTH_TO_GILLS" in summary and summary.rstrip().endswith(STANDING_NOTICE)
    assert all(f"{c.severity.upper()} {c.code}" in summary for c in plan.cautions)


@st.composite
def any_irrigation_request(draw) -> IrrigationRequest:
    """Any group, a mass in its usual range, water within the hard limits, some options left to defaults."""
    group = draw(st.sampled_from(list(aquatic_data().groups.values())))
    opt = lambda s: draw(st.none() | s)  # noqa: E731
    return IrrigationRequest(
        draw(st.sampled_from([group.key, *group.aliases[:2]])), draw(st.floats(group.mass_kg.min, group.mass_kg.max)),
        opt(st.floats(0.0, 40.0)), opt(st.floats(0.0, 42.0)), draw(st.floats(-400.0, 5000.0)),
        opt(st.floats(400.0, 800.0)), opt(st.floats(20.0, 200.0)), None, opt(st.floats(1.0, 600.0)),
        opt(st.floats(0.5, 5000.0)), opt(st.floats(1.0, 2000.0)), opt(st.floats(0.05, 0.8)), opt(st.floats(1.0, 3.0)),
        draw(st.text(ALLOWED, max_size=40)))


@settings(suppress_health_check=SUPPRESS, max_examples=120)
@given(any_irrigation_request())
def test_round_trip_any_request(tmp_path, request):
    path = tmp_path / "any.ventcase"
    case = ci.irrigation_case_for_request(request)
    saved = ci.save_irrigation_case(path, case, replace_any=True)
    loaded = ci.load_irrigation_case(path)
    assert loaded.case == saved and loaded.case.request == request
    opened = ci.open_any_case(path)
    assert isinstance(opened, ci.OpenedIrrigationCase) and opened.differences == () and opened.messages == ()
    if case.plan is not None:
        assert irrigation_to_dict(opened.plan) == case.plan
    else:
        assert opened.plan is None and opened.plan_error == case.plan_error != ""


def test_a_changed_stored_plan_is_reported_and_kept_on_save(tmp_path, capsys):
    path = _koi_case(tmp_path)
    raw = json.loads(path.read_text(encoding="utf-8"))
    raw["plan"]["irrigation"]["flow_l_min"] = 9.0
    raw["plan"]["cautions"] = raw["plan"]["cautions"][1:]
    path.write_text(json.dumps(raw), encoding="utf-8")
    assert main(["show", str(path), "--json"]) == 0
    out = capsys.readouterr()
    assert json.loads(out.out)["irrigation"]["flow_l_min"] == pytest.approx(1.5647, abs=1e-3)  # planned now
    assert "differs from the stored plan" in out.err and "Irrigation flow: stored 9 L/min, now 1.56 L/min" in out.err
    assert "New caution:" in out.err
    opened = ci.open_irrigation_case(path)
    again = ci.save_irrigation_case(path, ci.make_irrigation_case(opened.case.request, opened.plan,
                                                                  previous=opened.case))
    assert again.earlier_plans[-1]["plan"]["irrigation"]["flow_l_min"] == 9.0  # nothing saved is lost


def test_inputs_out_of_range_open_as_a_plan_error(tmp_path, capsys):
    path = _koi_case(tmp_path)
    raw = json.loads(path.read_text(encoding="utf-8"))
    raw["request"]["salinity"] = 60.0
    path.write_text(json.dumps(raw), encoding="utf-8")
    opened = ci.open_irrigation_case(path)
    assert opened.plan is None and "Salinity" in opened.plan_error
    assert any("no longer give a plan" in m for m in opened.messages)
    assert main(["show", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()[-1]
    assert "Salinity" in err and "ventset show --stored" in err and "Traceback" not in err


def test_save_keeps_a_case_with_other_inputs_unless_replace(tmp_path, capsys):
    path = tmp_path / "goldie.ventcase"
    assert main([*KOI, "--save", str(path)]) == 0
    before = path.read_bytes()
    assert main([*KOI[:4], "3 kg", *KOI[5:], "--save", str(path)]) == 2
    assert "other inputs" in capsys.readouterr().err and path.read_bytes() == before
    assert main([*KOI, "--save", str(path)]) == 0  # same inputs: saved again, the creation time kept
    assert json.loads(path.read_text())["created_at"] == json.loads(before)["created_at"]
    assert main([*KOI[:4], "3 kg", *KOI[5:], "--save", str(path), "--replace"]) == 0
    assert ci.load_irrigation_case(path).case.request.mass_kg == 3.0


# --------------------------------------------------------------------------------------------
# one kind is never taken for the other
# --------------------------------------------------------------------------------------------

def test_a_ventilation_loader_refuses_an_irrigation_case_naming_the_kind(tmp_path, capsys):
    path = _koi_case(tmp_path)
    with pytest.raises(cases.CaseError, match=r"field 'kind' is 'irrigation'.*Fish irrigation tab"):
        cases.load_case(path)
    before = path.read_bytes()
    assert main(["plan", "--species", "dog", "--mass", "20", "--save", str(path)]) == 2
    assert "holds a fish gill-irrigation case" in capsys.readouterr().err and path.read_bytes() == before


def test_an_irrigation_loader_refuses_a_ventilation_case(tmp_path, capsys):
    path = tmp_path / "dog.ventcase"
    cases.save_case(path, cases.case_for_request(Request(Patient("dog", 20.0))))
    with pytest.raises(cases.CaseError, match=r"field 'kind' is 'ventilation'"):
        ci.load_irrigation_case(path)
    before = path.read_bytes()
    assert main([*KOI, "--save", str(path)]) == 2
    assert "holds a ventilation case" in capsys.readouterr().err and path.read_bytes() == before
    assert isinstance(ci.open_any_case(path), cases.OpenedCase)


def test_a_schema_1_ventilation_case_migrates_and_is_backed_up_on_save(tmp_path):
    path = tmp_path / "dog.ventcase"
    cases.save_case(path, cases.case_for_request(Request(Patient("dog", 20.0))))
    raw = json.loads(path.read_text())
    del raw["kind"]
    raw["schema_version"] = 1
    path.write_text(json.dumps(raw), encoding="utf-8")
    before = path.read_bytes()
    loaded = cases.load_case(path)
    assert loaded.migrated_from == 1 and loaded.case.request == Request(Patient("dog", 20.0))
    cases.save_case(path, loaded.case)
    assert (tmp_path / "dog.ventcase.schema1.bak").read_bytes() == before
    assert json.loads(path.read_text())["kind"] == "ventilation"
    raw["kind"] = "irrigation"  # schema 1 had no kind: a file that claims one is refused, naming it
    path.write_text(json.dumps(raw), encoding="utf-8")
    with pytest.raises(cases.CaseError, match="field 'kind' is not part of case schema 1"):
        cases.load_case(path)


# --------------------------------------------------------------------------------------------
# hostile and mutated files
# --------------------------------------------------------------------------------------------

HOSTILE = [
    (lambda d: d["request"].update(species="koi\x1b[2J"), "field 'request.species' holds a control character"),
    (lambda d: d["request"].update(name="Goldie\u202e gk 2"), "field 'request.name' holds an invisible direction"),
    (lambda d: d["request"].update(name="x" * 501), "field 'request.name'"),
    (lambda d: d["request"].update(name="Goldie\nSet flow 99 L/min"), "field 'request.name' holds a line break"),
    (lambda d: d["request"].update(mass_kg="2"), "field 'request.mass_kg' must be a number (got text)"),
    (lambda d: d["request"].update(mass_kg=True), "field 'request.mass_kg' must be a number (got true/false)"),
    (lambda d: d["request"].update(altitude_m=None), "field 'request.altitude_m' must be a number (got null)"),
    (lambda d: d["request"].update(salinity=[35]), "field 'request.salinity' must be a number (got a list)"),
    (lambda d: d["request"].update(colour="gold"), "field 'request.colour' is not a field this version knows"),
    (lambda d: d["request"].pop("species"), "field 'request.species' is missing"),
    (lambda d: d.update(request=[1, 2]), "field 'request' must be an object"),
    (lambda d: d.pop("request"), "field 'request' is missing"),
    (lambda d: d.update(plan=[]), "field 'plan' must be an object or null"),
    (lambda d: d.update(kind="fish"), "field 'kind' must be one of ventilation, irrigation"),
    (lambda d: d.update(kind=None), "field 'kind' must be one of"),
    (lambda d: d.pop("kind"), "field 'kind' is missing"),
    (lambda d: d.update(note="\u2066hidden"), "field 'note' holds an invisible direction control"),
    (lambda d: d.update(created_at="yesterday"), "field 'created_at' must be an ISO 8601"),
    (lambda d: d.update(earlier_plans={"a": 1}), "field 'earlier_plans' must be a list of objects"),
    (lambda d: d.update(species_version="1"), "field 'species_version' is not part of an irrigation case"),
    (lambda d: d.update(timeline=[]), "field 'timeline' is not part of an irrigation case"),
]


@pytest.mark.parametrize(("change", "reason"), HOSTILE)
def test_a_hostile_irrigation_case_is_refused_in_one_line_naming_the_field(tmp_path, capsys, change, reason):
    path = _koi_case(tmp_path)
    data = json.loads(path.read_text(encoding="utf-8"))
    change(data)
    path.write_text(json.dumps(data), encoding="utf-8")
    before = path.read_bytes()
    with pytest.raises(cases.CaseError, match=reason.replace("(", r"\(").replace(")", r"\)")):
        ci.open_any_case(path)
    assert main(["show", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and reason in err and "Traceback" not in err
    assert path.read_bytes() == before


def test_a_name_the_loader_would_refuse_is_never_written(tmp_path):
    path = tmp_path / "x.ventcase"
    case = ci.irrigation_case_for_request(IrrigationRequest("koi", 2.0, name="a" * 501))
    with pytest.raises(cases.CaseSaveError, match="would not open again.*request.name"):
        ci.save_irrigation_case(path, case)
    assert not path.exists()


def _base() -> dict:
    request = IrrigationRequest("shark", 10.0, 24.0, 35.0, name="Fin (invented)", system_volume_l=500.0)
    return ci.irrigation_case_to_dict(ci.irrigation_case_for_request(request))


BASE = _base()
REPLACEMENTS = [None, True, 0, -1, 1e308, 10**14, "", "x" * 600, "Fin\nSet flow 99", "\u202e", [], {}, [1], {"a": 1},
                "20", 1.5]


def _paths(node, prefix=()):
    yield prefix
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _paths(v, (*prefix, k))


PATHS = [p for p in _paths(BASE) if p and p[0] != "plan"] + [("plan",), ("plan", "irrigation"), ("plan", "cautions")]


@st.composite
def mutated(draw) -> bytes:
    data = copy.deepcopy(BASE)
    for _ in range(draw(st.integers(1, 3))):
        path = draw(st.sampled_from(PATHS))
        parent = data
        try:
            for key in path[:-1]:
                parent = parent[key]
            how = draw(st.sampled_from(["replace", "drop", "add"]))
            if how == "replace":
                parent[path[-1]] = copy.deepcopy(draw(st.sampled_from(REPLACEMENTS)))
            elif how == "drop" and isinstance(parent, dict):
                del parent[path[-1]]
            elif isinstance(parent, dict):
                parent[draw(st.sampled_from(["extra", "x\ny", ""]))] = 1
        except (KeyError, IndexError, TypeError):
            continue
    raw = json.dumps(data).encode()
    if draw(st.booleans()) and draw(st.booleans()):
        raw = raw[: draw(st.integers(0, len(raw)))]
    return raw


@settings(suppress_health_check=SUPPRESS, deadline=None, max_examples=200)
@given(mutated())
def test_a_mutated_irrigation_case_opens_or_is_refused_in_one_line(tmp_path, raw):
    path = tmp_path / "m.ventcase"
    path.write_bytes(raw)
    try:
        opened = ci.open_any_case(path)
    except cases.CaseError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("cannot open")
    else:
        assert isinstance(opened, ci.OpenedIrrigationCase | cases.OpenedCase)
        if isinstance(opened, ci.OpenedIrrigationCase):
            assert isinstance(opened.case.request.species, str)
            assert (opened.plan is None) == (opened.plan_error != "")
        assert all("\n" not in m for m in opened.messages)
    assert path.read_bytes() == raw
