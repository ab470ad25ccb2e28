"""The validation set (resources/validation.toml) and `ventset validate`."""

import json
from pathlib import Path

import pytest

from ventset.cli import main
from ventset.errors import DataError
from ventset.library import load_library
from ventset.planner import plan
from ventset.resources import resource_path
from ventset.validation import Result, evaluate, result_to_dict, run, summarise
from ventset.validation_data import SEEN, Conditions, Observation, Published, load_file, load_validation

ROWS = load_validation()


@pytest.fixture(scope="module")
def results() -> tuple[Result, ...]:
    return run()


def test_file_is_shipped_with_the_other_resources():
    # setup.py copies resources/*.toml into the package; resource_path finds it in a checkout too.
    assert resource_path("validation.toml").is_file()


def test_set_meets_the_counts_and_every_row_is_sourced():
    # Issue 9 item 1: at least 60 rows, 30 distinct sources, 15 species; every row names its source.
    assert len(ROWS) >= 60
    assert len({o.source for o in ROWS}) >= 30
    assert len({o.species for o in ROWS}) >= 15
    for o in ROWS:
        assert o.source.strip() and o.quote.strip(), o.id
        assert o.seen in SEEN, o.id


@pytest.mark.xfail(strict=True, reason="only 15 published outcome rows with both settings and a measured PaCO2/EtCO2 "
                                       "were found in the literature searches so far (issue 9 item 1 asks for 25)")
def test_set_has_25_outcomes():
    assert sum(o.kind == "outcome" for o in ROWS) >= 25


def test_every_species_key_is_in_the_library():
    keys = set(load_library().species)
    assert {o.species for o in ROWS} <= keys


def test_kpa_conversion_in_the_data():
    # Moens 1989 published 1.6 ± 0.8 kPa; 1 kPa = 7.50062 mmHg (definition of the torr/kPa ratio).
    row = next(o for o in ROWS if o.id == "horse_moens1989_gradient")
    assert row.published.mean == pytest.approx(1.6 * 7.50062, abs=0.05)
    assert row.published.sd == pytest.approx(0.8 * 7.50062, abs=0.05)


def _write(tmp_path: Path, row: str) -> Path:
    path = tmp_path / "validation.toml"
    path.write_text("schema_version = 1\n\n[[observation]]\n" + row, encoding="utf-8")
    return path


GOOD = ('id = "x1"\nspecies = "dog"\nkind = "input"\nquantity = "rq"\npublished = { mean = 0.8 }\n'
        'conditions = { mass_kg = 20 }\nsource = "Someone 2000. J 1:1"\nseen = "abstract"\nquote = "RQ 0.8"\n')


def test_loader_accepts_a_good_row(tmp_path):
    rows = load_file(_write(tmp_path, GOOD), frozenset({"dog"}))
    assert rows[0].published.mean == 0.8


@pytest.mark.parametrize("change, field", [
    ('colour = "red"\n', "unknown field 'colour'"),
    ('conditions = { mass_kg = 20, weather = 3 }\n', "field 'conditions' has unknown key 'weather'"),
    ('published = { mean = 0.8, median = 1 }\n', "field 'published' has unknown key 'median'"),
    ('seen = "heard"\n', "field 'seen' must be one of"),
    ('quantity = "paco2_mmhg"\n', "field 'quantity' 'paco2_mmhg' is an outcome, not an input"),
    ('conditions = { mass_kg = 20, rate_min = 5 }\n', "field 'conditions' rate_min is given without rate_max"),
])
def test_loader_refuses_with_one_line_naming_row_and_field(tmp_path, change, field):
    key = change.split(" ")[0]
    lines = [ln for ln in GOOD.splitlines(keepends=True) if not ln.startswith(key + " ")]
    with pytest.raises(DataError) as err:
        load_file(_write(tmp_path, "".join(lines) + change), frozenset({"dog"}))
    msg = str(err.value)
    assert "\n" not in msg and msg.startswith("validation.toml: observation 'x1': ") and field in msg, msg


@pytest.mark.parametrize("old, new, needle", [
    ("mass_kg = 20", "mass_kg = -20",
     "field 'conditions' mass_kg must be above 0.001 and at most 10000 kg (got -20 kg)"),
    ('seen = "abstract"', "seen = true", "field 'seen' must be one of abstract, full text, from memory (got true)"),
    ("published = { mean = 0.8 }", "published = { sd = 0.1 }", "field 'published' needs a mean or a low/high band"),
    ('quote = "RQ 0.8"', 'quote = ""', "field 'quote' must not be empty"),
    ('id = "x1"', 'id = "x1"\nid2 = "x2"', "unknown field 'id2' (did you mean 'id'?)"),
])
def test_a_bad_row_names_its_field(tmp_path, old, new, needle):
    assert old in GOOD
    with pytest.raises(DataError) as err:
        load_file(_write(tmp_path, GOOD.replace(old, new)), frozenset({"dog"}))
    msg = str(err.value)
    assert msg.startswith("validation.toml: observation 'x1': ") and needle in msg and "\n" not in msg, msg


def test_loader_refuses_an_unknown_species(tmp_path):
    with pytest.raises(DataError, match="species"):
        load_file(_write(tmp_path, GOOD.replace('"dog"', '"dragon"')), frozenset({"dog"}))


def test_outcome_needs_rate_and_volume(tmp_path):
    row = GOOD.replace('kind = "input"', 'kind = "outcome"').replace('"rq"', '"paco2_mmhg"')
    with pytest.raises(DataError, match="rate"):
        load_file(_write(tmp_path, row), frozenset({"dog"}))


def _obs(**kw) -> Observation:
    base = dict(id="t", species="dog", kind="input", quantity="compliance_ml_cmh2o_kg", published=Published(1.3),
                conditions=Conditions(mass_kg=20), source="test", seen="abstract", quote="test")
    base.update(kw)
    return Observation(**base)


def test_input_tolerance_is_25_percent():
    # The dog default compliance is 1.3 mL/cmH2O/kg (Asorey et al. 2020, species.toml).
    # ±25 % of 1.1 is 0.825-1.375, which holds 1.3; ±25 % of 1.0 is 0.75-1.25, which does not.
    assert evaluate(_obs(published=Published(1.1))).within
    assert not evaluate(_obs(published=Published(1.0))).within


def test_rq_tolerance_is_absolute():
    # Dog RQ default 0.8 (species.toml): 0.84 is within ±0.05, 0.97 (a pig value) is not.
    assert evaluate(_obs(quantity="rq", published=Published(0.84))).within
    assert not evaluate(_obs(quantity="rq", published=Published(0.97))).within


def test_outcome_prediction_is_the_planners_own_at_the_study_settings():
    from ventset.model import Patient, Request, Strategy

    obs = _obs(kind="outcome", quantity="paco2_mmhg", published=Published(40.0),
               conditions=Conditions(mass_kg=20, vt_ml_kg=15, rate_per_min=10))
    expected = plan(Request(Patient("dog", 20), strategy=Strategy(vt_ml_kg=15, rate_per_min=10)))
    r = evaluate(obs)
    assert r.predicted == pytest.approx(expected.ventilation.expected_paco2_mmhg)
    assert r.within == (abs(r.predicted - 40.0) <= 8.0)


def test_band_over_a_rate_range():
    # A band reached somewhere inside 6-30/min is within; the same band at 1-2/min is not.
    wide = _obs(kind="outcome", quantity="paco2_mmhg", published=Published(low=35, high=45),
                conditions=Conditions(mass_kg=20, vt_ml_kg=12, rate_min=6, rate_max=30))
    r = evaluate(wide)
    assert r.within and 6 <= r.needed_rate_per_min <= 30
    narrow = _obs(kind="outcome", quantity="paco2_mmhg", published=Published(low=35, high=45),
                  conditions=Conditions(mass_kg=20, vt_ml_kg=12, rate_min=30, rate_max=40))
    assert not evaluate(narrow).within


def test_summary_counts(results):
    s = summarise(results)
    assert s["rows"] == len(ROWS) and s["outcomes"] + s["inputs"] == len(ROWS)
    assert s["inputs_known_disagreement"] + s["inputs_unexplained"] == s["inputs"] - s["inputs_within"]
    assert set(s["per_species"]) == {o.species for o in ROWS}


def test_known_disagreements_are_listed_not_dropped(results):
    listed = [result_to_dict(r) for r in results if r.observation.known_disagreement]
    assert listed and all(d["known_disagreement"] for d in listed)


def test_validate_json(capsys):
    assert main(["validate", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out) >= {"observations", "summary"}
    assert len(out["observations"]) == len(ROWS)
    for row in out["observations"]:
        assert {"id", "species", "kind", "quantity", "source", "published", "predicted", "within"} <= set(row)
        assert row["kind"] in ("input", "outcome")


def test_validate_text_and_filters(capsys):
    assert main(["validate", "--species", "dog", "--kind", "outcome"]) == 0
    text = capsys.readouterr().out
    assert "Outcomes within tolerance" in text and "dog_bumbacher2017_vt10" in text
    assert "Tolerance:" in text and "licensed veterinarian" in text


def test_validate_unknown_species_is_one_line(capsys):
    assert main(["validate", "--species", "dragon"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "--species" in err


@pytest.mark.xfail(strict=True, reason="after calibration 9 of 15 outcomes within tolerance (was 5) and 7 inputs "
                                       "outside tolerance with no stated reason (was 16); see docs/validation.md")
def test_issue9_acceptance(results):
    s = summarise(results)
    assert s["outcome_fraction_within"] >= 0.80
    assert s["inputs_unexplained"] == 0
