"""A species not listed, planned by its metabolic group alone (issue 13): species.toml [taxa.<group>].

Checks against published equations written out here, not the project's code: Kleiber 1947 (basal metabolic rate
70·M^0.75 kcal/day), Stahl 1967 (mammal dead space 2.76·M^0.96 mL, lung compliance 1.56·M^1.04 mL/cmH2O,
breath frequency ∝ M^-0.26), Lasiewski & Calder 1971 (bird breath frequency ∝ M^-0.31) and the Q10 law
R(T) = R(T0)·Q10^((T − T0)/10).
"""

from __future__ import annotations

import json
import math

import pytest

from ventset import cases, storage
from ventset.cli import main
from ventset.errors import InputError
from ventset.fields import request_from_inputs
from ventset.gui import formstate as fs
from ventset.library import TAXON_PREFIX, load_library
from ventset.model import Patient, Request
from ventset.planner import plan

LIB = load_library()
KCAL_DAY_TO_W = 4184 / 86400  # thermochemical calorie, per day


def _taxon_plan(taxon: str, mass: float, **patient):
    return plan(Request(Patient("", mass, taxon=taxon, **patient)), LIB)


def test_every_metabolic_group_has_taxon_only_values():
    assert set(LIB.taxa) == set(LIB.groups)
    for key, tx in LIB.taxa.items():
        assert tx.key == TAXON_PREFIX + key and tx.group.key == key
        assert tx.key not in LIB.species  # never taken for a listed species


@pytest.mark.parametrize("key", sorted(LIB.taxa))
@pytest.mark.parametrize("where", ["min", "mid", "max"])
def test_taxon_plans_across_its_mass_range_and_says_so(key, where):
    tx = LIB.taxa[key]
    lo, hi = tx.mass_kg.min, tx.mass_kg.max
    mass = {"min": lo, "mid": math.sqrt(lo * hi), "max": hi}[where]
    p = _taxon_plan(key, mass)
    codes = [c.code for c in p.cautions]
    assert "TAXON_ONLY" in codes and "CUSTOM_SPECIES" not in codes
    assert [c.code for c in p.cautions if c.severity == "danger"] == []
    assert p.ventilation.target_reached
    assert p.resolved.species == TAXON_PREFIX + key
    assert p.assumption("taxon_only") is not None
    message = next(c for c in p.cautions if c.code == "TAXON_ONLY").message
    assert tx.group.label.lower() in message and "blood gas" in message


def test_placental_taxon_follows_kleiber_and_stahl():
    m = 12.0
    p = _taxon_plan("placental", m, body_temp_c=38.0)
    # Kleiber 1947: 70·M^0.75 kcal/day, × the anaesthesia factor the taxon entry declares
    kleiber_w = 70 * m ** 0.75 * KCAL_DAY_TO_W
    assert p.metabolism.metabolic_rate_w == pytest.approx(kleiber_w * LIB.taxa["placental"].anaesthesia_factor.value)
    # Stahl 1967: dead space 2.76·M^0.96 mL (× the share kept after intubation), compliance 1.56·M^1.04 taken per kg
    share = LIB.taxa["placental"].intubated_fraction
    assert p.dead_space.anatomical_ml == pytest.approx(2.76 * m ** 0.96 * share)
    assert p.pressures.compliance_ml_cmh2o == pytest.approx(1.56 * m, rel=1e-9)
    assert p.pressures.compliance_ml_cmh2o == pytest.approx(1.56 * m ** 1.04, rel=0.11)  # M^0.04 at 12 kg: 1.10


@pytest.mark.parametrize("key, exponent", [("placental", -0.26), ("non_passerine", -0.31)])
def test_usual_rate_range_scales_as_published(key, exponent):
    # Stahl 1967 (mammals) and Lasiewski & Calder 1971 (birds): the breath rate range moves with mass as M^b
    tx = LIB.taxa[key]
    small, large = tx.rate_span_for(1.0), tx.rate_span_for(100.0)
    assert large.max / small.max == pytest.approx(100.0 ** exponent)


def test_reptile_taxon_metabolism_follows_q10():
    warm, cool = _taxon_plan("reptile_lizard", 2.0, body_temp_c=30.0), _taxon_plan("reptile_lizard", 2.0,
                                                                                   body_temp_c=25.0)
    q10 = LIB.groups["reptile_lizard"].q10.value
    assert cool.metabolism.metabolic_rate_w / warm.metabolism.metabolic_rate_w == pytest.approx(q10 ** -0.5)


def test_taxon_default_temperature_is_the_groups_reference():
    for key, tx in LIB.taxa.items():
        assert tx.body_temperature_c.start == pytest.approx(tx.group.reference_temperature_c.value), key


def test_a_named_species_not_listed_keeps_its_name():
    p = _taxon_plan("marsupial", 4.0, custom_species="Quokka (invented case)")
    assert p.resolved.species_label.startswith("Quokka (invented case)")
    assert "by marsupial allometry" in p.resolved.species_label
    taxon = next(c for c in p.cautions if c.code == "TAXON_ONLY")
    assert "Quokka (invented case)" in taxon.message
    assert "CUSTOM_SPECIES" not in {c.code for c in p.cautions}


def test_species_and_taxon_together_or_neither_are_refused():
    _, errors = request_from_inputs({"mass": "3 kg", "species": "dog", "taxon": "placental"}, library=LIB)
    assert [e.key for e in errors] == ["species"]
    _, errors = request_from_inputs({"mass": "3 kg"}, library=LIB)
    assert [e.key for e in errors] == ["species"] and "--taxon" in errors[0].reason
    _, errors = request_from_inputs({"mass": "3 kg", "taxon": "fish"}, library=LIB)
    assert [e.key for e in errors] == ["taxon"]
    with pytest.raises(InputError) as err:
        plan(Request(Patient("dog", 3.0, taxon="placental")), LIB)
    assert err.value.key == "taxon"
    with pytest.raises(InputError) as err:
        _taxon_plan("passerine", 20.0)  # outside the group's mass range
    assert err.value.key == "mass"


def test_cli_taxon_plan_says_so(capsys):
    args = ["plan", "--taxon", "placental", "--mass", "12kg", "--temperature", "38"]
    assert main([*args, "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["patient"]["species"] == "taxon:placental" and data["patient"]["body_temp_c"] == 38.0
    assert "TAXON_ONLY" in {c["code"] for c in data["cautions"]}
    assert main(args) == 0
    out = capsys.readouterr().out
    assert "not listed" in out and "TAXON_ONLY" in out
    assert main(["plan", "--taxon", "placental", "--species", "dog", "--mass", "12kg"]) == 2
    assert "--species" in capsys.readouterr().err
    assert main(["plan", "--taxon", "fish", "--mass", "12kg"]) == 2
    assert "--taxon" in capsys.readouterr().err


def test_window_state_picks_a_group_and_round_trips():
    state = fs.blank_state()
    state.update({"species": "taxon:non_passerine", fs.TEXT + "mass": "3"})
    request, errors = fs.request_from_state(state, LIB)
    assert errors == [] and request is not None
    assert request.patient.taxon == "non_passerine" and request.patient.species == ""
    assert fs.state_from_request(request, {}, LIB)["species"] == "taxon:non_passerine"


def test_case_file_keeps_the_taxon(tmp_path, monkeypatch):
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    request = Request(Patient("", 5.0, name="Invented patient", taxon="reptile_boid"))
    path = tmp_path / f"boid{cases.SUFFIX}"
    saved = cases.save_case(path, cases.case_for_request(request, LIB))
    opened = cases.open_case(path, LIB)
    assert opened.case.request == request and opened.differences == ()
    assert opened.plan is not None and opened.plan.resolved.species == "taxon:reptile_boid"
    assert saved.plan is not None
