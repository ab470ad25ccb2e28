"""Invariants of the planner (hypothesis)."""

import math

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from ventset.errors import InputError
from ventset.model import ApparatusPart, Circuit, Patient, Request, Targets
from ventset.physiology import gas
from ventset.planner import choose_settings, plan
from ventset.units import KG_PER_LB

SPECIES = ["dog", "cat", "horse", "rabbit", "rat", "psittacine", "chelonian", "pig", "ferret", "marsupial"]


@st.composite
def requests(draw, extra_ml=None):
    from ventset.library import load_library

    lib = load_library()
    key = draw(st.sampled_from(SPECIES))
    sp = lib.species[key]
    mass = draw(st.floats(sp.mass_kg.min, sp.mass_kg.max))
    app = draw(st.floats(0, 0.5 * sp.anatomical_coefficient_ml * mass ** sp.anatomical_exponent + 0.01))
    paco2 = draw(st.floats(30, 60))
    return Request(Patient(key, mass), Circuit(parts=(ApparatusPart("part", app),)), Targets(paco2_mmhg=paco2))


def _va_delivered(p):
    v, d = p.ventilation, p.dead_space
    return v.rate_per_min * (v.tidal_volume_ml - d.total_ml)


@given(requests())
def test_alveolar_ventilation_identity_when_target_reached(req):
    # f·(VT − VD) is the alveolar ventilation delivered, and PaCO2 = VCO2·K(T)/VA (alveolar ventilation
    # equation; K from test-references A5) for every plan; "reached" means within 1 mmHg of the target.
    p = plan(req)
    v = p.ventilation
    k = 760 * (273.15 + p.resolved.body_temp_c) / 273.15
    assert _va_delivered(p) == pytest.approx(v.delivered_alveolar_ml_min, rel=1e-9, abs=1e-9)
    if v.delivered_alveolar_ml_min > 0:
        assert v.expected_paco2_mmhg == pytest.approx(p.metabolism.vco2_ml_min * k / v.delivered_alveolar_ml_min,
                                                      rel=1e-9)
    if v.target_reached:
        assert abs(v.expected_paco2_mmhg - v.target_paco2_mmhg) < 1.0
    else:  # a plan that misses its target says so, with a danger
        said = {"TARGET_UNREACHABLE", "TARGET_BELOW_LIMITS", "VT_NOT_ABOVE_DEAD_SPACE", "SETTINGS_FIXED"}
        assert said & {c.code for c in p.cautions}


@given(requests(), st.floats(0.01, 50))
def test_more_apparatus_dead_space_never_lowers_minute_volume(req, extra):
    p1 = plan(req)
    parts = (*req.circuit.parts, ApparatusPart("extra", extra))
    p2 = plan(Request(req.patient, Circuit(parts=parts), req.targets))
    assume(p1.ventilation.target_reached and p2.ventilation.target_reached)
    assert p2.ventilation.minute_ml_min >= p1.ventilation.minute_ml_min * (1 - 1e-12)


def test_alveolar_ventilation_matches_a_worked_example():
    # West, Respiratory Physiology (from memory): VCO2 200 mL/min STPD at PaCO2 40 mmHg and 37 °C needs
    # VA = 200 · 0.863 / 40 = 4.315 L/min BTPS; 0.863 = 760 mmHg · 310.15 K / 273.15 K / 1000 (ideal gas law).
    assert gas.alveolar_ventilation_ml_min(200.0, 40.0, 37.0) == pytest.approx(4315, rel=2e-3)


@given(st.floats(0.5, 5), st.floats(1, 100), st.floats(20, 60), st.floats(20, 42))
def test_alveolar_ventilation_is_proportional_to_co2_output(factor, vco2, paco2, temp):
    # Fick's principle: at a fixed PaCO2, VA scales with VCO2 exactly (not merely rises).
    low = gas.alveolar_ventilation_ml_min(vco2, paco2, temp)
    high = gas.alveolar_ventilation_ml_min(vco2 * (1 + factor), paco2, temp)
    assert high == pytest.approx(low * (1 + factor), rel=1e-12)


@given(requests(), st.floats(1.05, 3))
def test_entered_higher_metabolic_rate_raises_plan_ventilation(req, factor):
    p1 = plan(req)
    w = p1.metabolism.metabolic_rate_w
    p2 = plan(Request(Patient(req.patient.species, req.patient.mass_kg, metabolic_rate_w=w * factor),
                      req.circuit, req.targets))
    assert p2.ventilation.alveolar_ml_min > p1.ventilation.alveolar_ml_min


@given(st.floats(2, 80))
def test_pounds_and_kilograms_give_the_same_plan(kg):
    from ventset.fields import parse_field

    lb_text = f"{kg / KG_PER_LB!r} lb"
    a = plan(Request(Patient("dog", parse_field("mass", f"{kg!r} kg"))))
    b = plan(Request(Patient("dog", parse_field("mass", lb_text))))
    assert b.ventilation.set_tidal_volume_ml == pytest.approx(a.ventilation.set_tidal_volume_ml, rel=1e-9)
    assert b.ventilation.rate_per_min == pytest.approx(a.ventilation.rate_per_min, rel=1e-9)


def test_44_092_lb_is_20_kg():
    from ventset.fields import parse_field

    a = plan(Request(Patient("dog", parse_field("mass", "20 kg"))))
    b = plan(Request(Patient("dog", parse_field("mass", "44.092 lb"))))
    # 44.092 lb × 0.45359237 = 19.99979 kg (NIST exact pound): equal within 1e-5.
    assert b.ventilation.tidal_volume_ml == pytest.approx(a.ventilation.tidal_volume_ml, rel=2e-5)
    assert b.ventilation.rate_per_min == pytest.approx(a.ventilation.rate_per_min, rel=2e-5)


@given(st.floats(1, 20000), st.floats(0, 200), st.floats(0, 0.5), st.floats(1, 400), st.floats(1, 400),
       st.floats(1, 200), st.floats(1, 200), st.floats(1, 2000), st.floats(1, 1000))
def test_solver_never_leaves_its_limits(va, vd, falv, a, b, r1, r2, vp, pref):
    vt_lo, vt_hi = sorted((a, b))
    f_lo, f_hi = sorted((r1, r2))
    c = choose_settings(va, vd, falv, vt_lo, vt_hi, f_lo, f_hi, vp, pref, None)
    top = min(vt_hi, vp)
    assert f_lo - 1e-9 <= c.rate_per_min <= f_hi * (1 + 1e-9)
    assert c.vt_ml <= top * (1 + 1e-9)
    if top >= vt_lo:
        assert c.vt_ml >= vt_lo * (1 - 1e-9)
    if c.reached:
        assert c.rate_per_min * (c.vt_ml * (1 - falv) - vd) == pytest.approx(va, rel=1e-7)


@given(st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.just(-1.0), st.just(0.0)),
       st.sampled_from(["mass_kg", "lean_mass_kg", "body_temp_c", "metabolic_rate_w", "rq"]))
def test_any_float_gives_a_plan_or_a_named_error(value, field):
    kwargs = {"species": "dog", "mass_kg": 20.0, field: value}
    try:
        p = plan(Request(Patient(**kwargs)))
    except InputError as err:
        assert err.field and err.reason
        return
    v = p.ventilation
    assert all(math.isfinite(x) for x in (v.tidal_volume_ml, v.rate_per_min, v.ti_s, p.pressures.peak_cmh2o))


def _with(req, path, value):
    from dataclasses import replace

    head, attr = path.split(".")
    return replace(req, **{head: replace(getattr(req, head), **{attr: value})})


@st.composite
def field_values(draw):
    from ventset.fields import FIELDS

    spec = draw(st.sampled_from([f for f in FIELDS.values() if f.key not in ("target-etco2",)]))
    lo, hi = spec.lo, spec.hi
    value = draw(st.one_of(st.floats(lo, hi), st.sampled_from([lo, hi, math.nextafter(lo, math.inf),
                                                                math.nextafter(hi, -math.inf)])))
    return spec, value


@given(field_values(), st.sampled_from(["dog", "psittacine", "horse", "chelonian", "mouse"]))
def test_any_value_inside_a_fields_hard_limits_plans_or_names_the_field(fv, species):
    # Every value a field accepts must give finite settings or an InputError naming a field — never a crash.
    from ventset.library import load_library

    spec, value = fv
    sp = load_library().species[species]
    mass = math.sqrt(sp.mass_kg.min * sp.mass_kg.max)
    req = Request(Patient(species, mass), Circuit(tube_id_mm=4.0, tube_length_cm=4.0))
    if spec.key == "tube-length" or spec.key == "tube-id":
        req = _with(req, "circuit.tube_id_mm", 4.0)
    req = _with(req, spec.path, value)
    try:
        p = plan(req)
    except InputError as err:
        assert err.field and err.reason
        return
    v = p.ventilation
    for x in (v.tidal_volume_ml, v.set_tidal_volume_ml, v.rate_per_min, v.ti_s, v.te_s, p.pressures.peak_cmh2o,
              p.pressures.time_constant_s, p.oxygen.fresh_gas_ml_min):
        assert math.isfinite(x), (spec.key, value)
