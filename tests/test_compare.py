"""Comparing setups for one patient: the spec parser, the plans and their differences."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from ventset import fields
from ventset.compare import (
    MAX_SETUPS,
    apply_spec,
    comparison_to_dict,
    input_keys,
    parse_spec,
    plan_setups,
)
from ventset.errors import InputError
from ventset.model import ApparatusPart, Circuit, Patient, Request, Strategy, Targets
from ventset.planner import plan
from ventset.report import plan_to_dict

CAT = Request(Patient("cat", 3.0))
DOG = Request(Patient("dog", 20.0))


def _q(comparison, key):
    return next(q for q in comparison.quantities if q.key == key)


# --- the spec parser -------------------------------------------------------------------------------------


def test_none_is_the_base_as_it_is(library):
    spec = parse_spec(" None ")
    assert spec.items == () and spec.label == "as entered"
    request, notes = apply_spec(DOG, spec, library)
    assert request == DOG and notes == ()


def test_items_joined_by_commas_change_those_inputs(library):
    spec = parse_spec("peep=5, fio2=50 %, circuit=non_rebreathing, tube_id=7, tube-length=12 cm")
    request, _ = apply_spec(DOG, spec, library)
    assert request.targets.peep_cmh2o == 5 and request.targets.fio2 == pytest.approx(0.5)
    assert request.circuit.circuit_type == "non_rebreathing"
    assert (request.circuit.tube_id_mm, request.circuit.tube_length_cm) == (7.0, 12.0)
    assert request.patient == DOG.patient


def test_every_input_of_the_field_table_is_a_spec_key():
    keys = set(input_keys())
    assert set(fields.FIELDS) <= keys and set(fields.TEXT_INPUTS) <= keys
    for key in keys:
        assert parse_spec(f"{key}=default").items == ((key, "default"),)


def test_a_new_input_in_the_field_table_needs_no_change_here(monkeypatch, library):
    # An input added to the field table (as a machine or situation input will be) is a spec key at once.
    spec = fields.FieldSpec("test-peep", "Test PEEP", "targets.peep_cmh2o", "cmH2O", ("cmH2O",), 0.0, 30.0, "t",
                            lo_open=False)
    monkeypatch.setitem(fields.FIELDS, "test-peep", spec)
    request, _ = apply_spec(DOG, parse_spec("test-peep=7"), library)
    assert request.targets.peep_cmh2o == 7.0


def test_apparatus_replaces_and_add_adds(library):
    base = Request(Patient("cat", 3.0), Circuit(parts=(ApparatusPart("elbow", 3.0),)))
    replaced, _ = apply_spec(base, parse_spec("apparatus=hme_paediatric"), library)
    added, _ = apply_spec(base, parse_spec("add=hme_paediatric"), library)
    cleared, _ = apply_spec(base, parse_spec("apparatus=none"), library)
    named, _ = apply_spec(base, parse_spec("apparatus=hme=12 mL, apparatus=elbow=3"), library)
    hme = library.parts["hme_paediatric"].volume_ml.value
    assert [p.volume_ml for p in replaced.circuit.parts] == [hme]
    assert [p.volume_ml for p in added.circuit.parts] == [3.0, hme]
    assert cleared.circuit.parts == ()
    assert [(p.name, p.volume_ml) for p in named.circuit.parts] == [("hme", 12.0), ("elbow", 3.0)]


def test_tube_without_length_takes_the_usual_length_and_says_so(library):
    from ventset.stages.airway import usual_tube

    request, notes = apply_spec(CAT, parse_spec("tube=3.5"), library)
    assert request.circuit.tube_id_mm == 3.5
    assert request.circuit.tube_length_cm == pytest.approx(usual_tube(3.0, library)[1])
    assert len(notes) == 1 and "usual" in notes[0]
    request, notes = apply_spec(CAT, parse_spec("tube=3.5/8"), library)
    assert request.circuit.tube_length_cm == 8.0 and notes == ()


@pytest.mark.parametrize("text,shown", [
    ("peeep=5", "did you mean 'peep'"),
    ("peep", "needs KEY=VALUE"),
    ("", "is empty"),
    (",,", "is empty"),
    ("x" * 600, "at most 500 characters"),
])
def test_bad_specs_are_one_line_naming_the_setup(text, shown):
    with pytest.raises(InputError) as err:
        parse_spec(text, 3)
    message = str(err.value)
    assert err.value.key == "setup" and message.startswith("setup 3") and shown in message and "\n" not in message


@pytest.mark.parametrize("text,field", [
    ("tube=abc", "Tube internal diameter"),
    ("fio2=3", "FiO2"),
    ("circuit=nope", "Circuit type"),
    ("apparatus=no_such_part", "Apparatus"),
    ("mass=50 kg", "Body mass"),
    ("peep=40", "PEEP"),
])
def test_bad_values_name_the_setup_and_the_field(text, field, library):
    with pytest.raises(InputError) as err:
        plan_setups(CAT, ["none", text], library)
    assert err.value.key == "setup"
    assert str(err.value).startswith(f"setup 2, {field}"), str(err.value)


def test_two_to_four_setups(library):
    for n in (1, MAX_SETUPS + 1):
        with pytest.raises(InputError) as err:
            plan_setups(CAT, ["none"] * n, library)
        assert "compare 2 to 4 setups" in str(err.value)


# --- plans and differences ---------------------------------------------------------------------------------


def test_each_setup_is_the_plan_of_its_request(library):
    c = plan_setups(CAT, ["none", "apparatus=hme_paediatric", "circuit=rebreathing_paediatric"], library)
    for s in c.setups:
        assert plan_to_dict(s.plan) == plan_to_dict(plan(s.request, library))
    d = comparison_to_dict(c)
    assert d["setups"] == [plan_to_dict(s.plan) for s in c.setups]
    assert d["standing_notice"] == c.setups[0].plan.standing_notice


def test_hme_needs_more_ventilation_than_without(library):
    # Alveolar ventilation equation (physiology.md §3.1): VA = f·(VT(1 − f_alv) − VD) is fixed by VCO2 and the
    # target, so 20 mL more dead space at the same tidal volume needs f = VA/(VT(1 − f_alv) − VD − 20).
    c = plan_setups(DOG, ["none", "apparatus=hme_paediatric"], library)
    bare, hme = c.plans
    assert bare.ventilation.target_reached and hme.ventilation.target_reached
    assert _q(c, "ventilation.minute_ml_min").values[1] > _q(c, "ventilation.minute_ml_min").values[0]
    va, vt = bare.ventilation.alveolar_ml_min, hme.ventilation.tidal_volume_ml
    f_alv = hme.resolved.alveolar_dead_space_fraction
    vd = bare.subject.vd_fixed_ml + library.parts["hme_paediatric"].volume_ml.value
    assert hme.ventilation.rate_per_min == pytest.approx(va / (vt * (1 - f_alv) - vd), rel=1e-9)
    assert _q(c, "dead_space.apparatus_ml").changed and not _q(c, "metabolism.vco2_ml_min").changed


def test_cat_with_a_paediatric_hme_adds_cautions_and_removing_it_removes_them(library):
    c = plan_setups(CAT, ["none", "apparatus=hme_paediatric"], library)
    added = {x.code for x in c.cautions[0].added}
    assert "APPARATUS_DEAD_SPACE" in added and not c.cautions[0].removed
    back = plan_setups(CAT, ["apparatus=hme_paediatric", "none"], library)
    assert {x.code for x in back.cautions[0].removed} == added
    diffs = comparison_to_dict(c)["differences"]
    assert any(d["kind"] == "cautions" and d["setup"] == 1 for d in diffs)
    assert any(d["kind"] == "text" and d["key"] == "parts" for d in diffs)
    assert all(d["kind"] != "quantity" or d["values"][0] != d["values"][1] for d in diffs)


def test_identical_setups_have_no_differences(library):
    d = comparison_to_dict(plan_setups(DOG, ["none", "peep=default"], library))
    assert d["differences"] == []


@given(key=st.sampled_from(["dog", "cat", "rabbit", "ferret", "pig", "psittacine"]), where=st.floats(0, 1),
       extra=st.floats(0.01, 30), base_part=st.floats(0, 10), strategy=st.sampled_from(["volume_first", "least_work"]),
       paco2=st.one_of(st.none(), st.floats(32, 55)))
def test_property_adding_dead_space_never_lowers_the_minute_volume_needed(library, key, where, extra, base_part,
                                                                          strategy, paco2):
    # VE = VA + f·VD (physiology.md §3.1): with VA fixed by VCO2 and the target, more dead space needs more VE;
    # where a limit stops the plan, it stays at the limit and never drops.
    sp = library.species[key]
    mass = sp.mass_kg.min * (sp.mass_kg.max / sp.mass_kg.min) ** where
    base = Request(Patient(key, mass), Circuit(parts=(ApparatusPart("base", base_part),)), Targets(paco2_mmhg=paco2),
                   Strategy(strategy))
    c = plan_setups(base, ["none", f"add=extra={extra!r} mL"], library)
    minute = _q(c, "ventilation.minute_ml_min").values
    assert minute[1] >= minute[0] * (1 - 1e-12)
    assert _q(c, "dead_space.total_ml").values[1] > _q(c, "dead_space.total_ml").values[0]
