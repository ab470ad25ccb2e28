"""The planner end to end: hand-checked figures and the solver's limits."""

import math

import pytest

from ventset.errors import InputError
from ventset.model import ApparatusPart, Circuit, Patient, Request, Strategy, Targets
from ventset.physiology import deadspace, gas, metabolism
from ventset.planner import choose_settings, paco2_grid, plan


def dog(**kw):
    kw.setdefault("circuit", Circuit(tube_id_mm=8.0, tube_length_cm=8.0))
    return Request(Patient("dog", 20.0), **kw)


def test_dog_plan_matches_hand_calculation(library):
    # Hand calculation from published equations (Kleiber 1947; Weir 1949; alveolar ventilation equation):
    # 70·20^0.75 kcal/day = 661.9 kcal/day = 32.04 W; × anaesthesia factor 0.85 = 27.23 W;
    # VO2 = 27.23·60/20.19 = 80.9 mL/min; VCO2 = 0.8·VO2 = 64.7 mL/min;
    # VA = 64.7·867.12/40 = 1403 mL/min.
    p = plan(dog(), library)
    assert p.metabolism.metabolic_rate_w == pytest.approx(32.04 * 0.85, rel=2e-3)
    assert p.metabolism.vo2_ml_min == pytest.approx(80.9, abs=0.2)
    assert p.metabolism.vco2_ml_min == pytest.approx(64.7, abs=0.2)
    assert p.ventilation.alveolar_ml_min == pytest.approx(1403, abs=3)
    # Dead space: Stahl 2.76·20^0.96 = 48.97 mL, 0.8 kept after intubation (species.toml, PubMed 3083738);
    # tube π·0.4²·8 = 4.02 mL.
    assert p.dead_space.anatomical_ml == pytest.approx(39.17, abs=0.01)
    assert p.dead_space.tube_ml == pytest.approx(4.02, abs=0.01)
    # 10 mL/kg start → 200 mL; rate = VA/(VT·0.9 − VD_fixed).
    assert p.ventilation.tidal_volume_ml == pytest.approx(200)
    assert p.ventilation.rate_per_min == pytest.approx(1403 / (180 - 43.19), rel=2e-3)
    assert p.ventilation.target_reached
    assert p.ventilation.expected_paco2_mmhg == pytest.approx(40, abs=1e-6)
    # Plateau = 200/(1.3·20) + 5 (equation of motion).
    assert p.pressures.plateau_cmh2o == pytest.approx(200 / 26 + 5)


def test_every_output_carries_the_standing_notice(library):
    p = plan(dog(), library)
    assert "licensed veterinarian" in p.standing_notice and "starting point" in p.standing_notice


def test_assumptions_have_sources(library):
    p = plan(dog(), library)
    names = {a.name for a in p.assumptions}
    assert {"Body temperature", "Water vapour pressure", "Barometric pressure", "PEEP"} <= names
    assert all(a.source for a in p.assumptions)


def test_hme_on_small_rabbit_raises_danger(library):
    r = Request(Patient("rabbit", 1.2), Circuit(parts=(ApparatusPart("HME", 20.0),), tube_id_mm=2.5,
                                              tube_length_cm=4.0))
    p = plan(r, library)
    codes = {c.code: c.severity for c in p.cautions}
    assert codes["VT_NOT_ABOVE_DEAD_SPACE"] == "danger"
    assert codes["APPARATUS_DEAD_SPACE"] == "danger"
    assert not p.ventilation.target_reached
    assert p.cautions[0].severity == "danger"


def test_rate_held_at_species_maximum_is_said(library):
    # Large apparatus dead space forces the rate up; the plan keeps rate ≤ max and says which limit moved it.
    r = Request(Patient("cat", 4.0), Circuit(parts=(ApparatusPart("elbow", 7.5),)))
    p = plan(r, library)
    sp = library.species["cat"]
    # At 7.5 mL of elbow the preferred 10 mL/kg would need more than 20/min, so the rate limit binds.
    assert p.ventilation.rate_per_min == pytest.approx(sp.rate_per_min.max)
    assert p.limits.binding == ("rate_max",)
    assert any(c.code == "LIMIT_BINDING" for c in p.cautions)


def test_target_from_etco2_and_gradient(library):
    p = plan(dog(targets=Targets(etco2_mmhg=38.0, gradient_mmhg=4.0)), library)
    assert p.ventilation.target_paco2_mmhg == pytest.approx(42.0)
    assert p.ventilation.expected_etco2_mmhg == pytest.approx(38.0)


def test_least_work_strategy_uses_otis_rate(library):
    p = plan(dog(strategy=Strategy("least_work")), library)
    otis = next(a for a in p.assumptions if a.name.startswith("Rate of least work"))
    sp = library.species["dog"]
    # Otis, Fenn & Rahn 1950 by hand for this dog: VA' = 1.404/0.9 = 1.560 L/min, VD' = 43.19/0.9 = 48.0 mL,
    # RC 0.2108 s, a = 2π²/60: f = (√(1 + 2a·RC·VA'/VD') − 1)/(a·RC) = 19.4/min; there the tidal volume
    # would be 1404/19.4/0.9 + 48 = 128 mL (6.4 mL/kg), below the dog's 8 mL/kg, so the solver must move
    # along the target line and say so.
    assert otis.value == pytest.approx(19.42, abs=0.05)
    assert sp.rate_per_min.min <= p.ventilation.rate_per_min <= sp.rate_per_min.max
    assert p.ventilation.tidal_volume_ml == pytest.approx(sp.tidal_volume_ml_kg.min * 20)
    assert p.limits.binding and any(c.code == "LIMIT_BINDING" for c in p.cautions)
    assert p.ventilation.target_reached


def test_fixed_rate(library):
    p = plan(dog(strategy=Strategy(rate_per_min=12.0)), library)
    assert p.ventilation.rate_per_min == pytest.approx(12.0)
    assert p.ventilation.target_reached


def test_pressure_mode_inspiratory_pressure(library):
    p = plan(dog(circuit=Circuit(mode="pressure", tube_id_mm=8.0, tube_length_cm=8.0)), library)
    pr, v = p.pressures, p.ventilation
    # Square pressure: VT = C·ΔP·(1 − e^(−Ti/τ)).
    delivered = pr.compliance_ml_cmh2o * pr.inspiratory_pressure_cmh2o * (1 - math.exp(-v.ti_s / pr.time_constant_s))
    assert delivered == pytest.approx(v.tidal_volume_ml)
    assert v.set_tidal_volume_ml == pytest.approx(v.tidal_volume_ml)


def test_compressible_volume_added_in_volume_mode(library):
    p = plan(dog(circuit=Circuit(compressible_ml_cmh2o=3.0, tube_id_mm=8.0, tube_length_cm=8.0)), library)
    assert p.ventilation.set_tidal_volume_ml == pytest.approx(
        p.ventilation.tidal_volume_ml + 3.0 * (p.pressures.peak_cmh2o - p.pressures.peep_cmh2o))


def test_altitude_lowers_alveolar_po2(library):
    sea = plan(dog(targets=Targets(fio2=0.21)), library)
    high = plan(dog(targets=Targets(fio2=0.21, altitude_m=3000)), library)
    assert high.oxygen.barometric_mmhg == pytest.approx(525.952, abs=0.05)  # ambiance 1.3.1 at 3000 m
    assert high.oxygen.pao2_alveolar_mmhg < sea.oxygen.pao2_alveolar_mmhg
    assert any(c.code == "LOW_ALVEOLAR_O2" for c in high.cautions)


def test_reptile_temperature_correction(library):
    warm = plan(Request(Patient("chelonian", 10.0, body_temp_c=30.0)), library)
    cool = plan(Request(Patient("chelonian", 10.0, body_temp_c=20.0)), library)
    q10 = library.groups["reptile"].q10.value
    assert cool.metabolism.metabolic_rate_w / warm.metabolism.metabolic_rate_w == pytest.approx(1 / q10)


def test_entered_metabolic_rate_is_used(library):
    p = plan(Request(Patient("dog", 20.0, metabolic_rate_w=40.0)), library)
    assert p.metabolism.metabolic_rate_w == 40.0 and p.metabolism.entered
    assert p.metabolism.vo2_ml_min == pytest.approx(metabolism.vo2_ml_min(40.0, 0.8))


def test_lean_mass_drives_tidal_volume(library):
    p = plan(Request(Patient("dog", 40.0, lean_mass_kg=30.0)), library)
    assert p.ventilation.tidal_volume_ml / 30.0 == pytest.approx(library.species["dog"].tidal_volume_ml_kg.start)


@pytest.mark.parametrize(("request_", "field"), [
    (Request(Patient("mouse", 50000.0)), "Body mass"),
    (Request(Patient("dog", -1.0)), "Body mass"),
    (Request(Patient("dog", float("nan"))), "Body mass"),
    (Request(Patient("dog", float("inf"))), "Body mass"),
    (Request(Patient("unicorn", 20.0)), "species"),
    (Request(Patient("dog", 20.0, lean_mass_kg=25.0)), "Lean (ideal) mass"),
    (Request(Patient("dog", 20.0), targets=Targets(fio2=1.5)), "FiO2"),
    (Request(Patient("dog", 20.0), targets=Targets(peep_cmh2o=10, pressure_limit_cmh2o=8)), "Pressure limit"),
    (Request(Patient("dog", 20.0), Circuit(tube_id_mm=8.0)), "Tube beyond incisors"),
])
def test_bad_requests_name_the_field(library, request_, field):
    with pytest.raises(InputError) as err:
        plan(request_, library)
    assert err.value.field == field


def test_choose_settings_reaches_target_inside_box():
    c = choose_settings(1000, 30, 0.1, 80, 150, 8, 20, 300, preferred_vt=100, preferred_rate=None)
    assert c.reached and c.binding == ()
    assert c.rate_per_min * (c.vt_ml * 0.9 - 30) == pytest.approx(1000)


def test_choose_settings_unreachable_names_limits():
    c = choose_settings(5000, 30, 0.1, 80, 150, 8, 20, 300, preferred_vt=100, preferred_rate=None)
    assert not c.reached and set(c.binding) >= {"vt_max", "rate_max"}
    assert (c.vt_ml, c.rate_per_min) == (150, 20)


def test_choose_settings_pressure_limit_binds():
    c = choose_settings(5000, 30, 0.1, 80, 400, 8, 20, 200, preferred_vt=100, preferred_rate=None)
    assert "pressure_limit" in c.binding and c.vt_ml == 200


def test_paco2_grid_matches_scalar_equation():
    grid = paco2_grid([100, 200], [10, 20], 60.0, 38.5, 30.0, 0.1)
    expected = 60.0 * gas.alveolar_constant_mmhg(38.5) / (20 * (200 * 0.9 - 30))
    assert grid.shape == (2, 2) and grid[1, 1] == pytest.approx(expected)
    assert math.isinf(paco2_grid([20], [10], 60.0, 38.5, 30.0, 0.1)[0, 0])


def test_tube_volume_is_apparatus_dead_space(library):
    p = plan(dog(), library)
    assert p.dead_space.tube_ml == pytest.approx(deadspace.tube_volume_ml(8.0, 8.0))


def test_species_defaults_plan_for_every_species(library):
    for key, sp in library.species.items():
        mass = math.sqrt(sp.mass_kg.min * sp.mass_kg.max)
        p = plan(Request(Patient(key, mass)), library)
        assert p.ventilation.rate_per_min > 0 and p.ventilation.tidal_volume_ml > 0, key
        assert all(math.isfinite(x) for x in (p.pressures.plateau_cmh2o, p.oxygen.pao2_alveolar_mmhg)), key


@pytest.mark.parametrize(("vt", "bag"), [(50, 0.5), (200, 2.0), (6900, 30.0), (30, 0.25)])
def test_reservoir_bag_is_about_six_tidal_volumes(vt, bag):
    # Common practice (AAFP/ISFM 2018): bag about 5-6 x VT, rounded up to a stocked size.
    from ventset.planner import reservoir_bag_l

    assert reservoir_bag_l(vt, 6.0) == bag


def test_rate_range_scales_with_mass_in_birds(library):
    # Lasiewski & Calder 1971: bird breath rate ∝ M^-0.31, so a 35 g budgerigar's usual range is
    # (0.035/0.4)^-0.31 = 2.13 × the range listed for a 400 g parrot.
    sp = library.species["psittacine"]
    small, ref = sp.rate_span_for(0.035), sp.rate_span_for(0.4)
    assert small.max / ref.max == pytest.approx((0.035 / 0.4) ** -0.31, rel=1e-9)
    assert (ref.min, ref.max) == (sp.rate_per_min.min, sp.rate_per_min.max)
    p = plan(Request(Patient("psittacine", 0.035)), library)
    assert p.ventilation.target_reached and p.ventilation.rate_per_min <= small.max + 1e-9


def test_rate_range_scales_with_mass_in_dogs(library):
    # Stahl 1967: mammalian breath rate ∝ M^-0.26; a 3 kg dog's range sits above a 60 kg dog's.
    sp = library.species["dog"]
    assert sp.rate_span_for(3).min > sp.rate_span_for(20).min > sp.rate_span_for(60).min
    assert sp.rate_span_for(3).max / sp.rate_span_for(60).max == pytest.approx(20 ** 0.26, rel=1e-9)


def test_both_vt_and_rate_fixed_are_evaluated_as_entered(library):
    # Alveolar ventilation equation: PaCO2 = VCO2·K(T)/(f·(VT(1 − f_alv) − VD_fixed)).
    p = plan(dog(strategy=Strategy(vt_ml_kg=12.0, rate_per_min=10.0)), library)
    v, d = p.ventilation, p.dead_space
    assert (v.tidal_volume_ml, v.rate_per_min) == (240.0, 10.0)
    va = 10.0 * (240.0 * 0.9 - (d.total_ml - d.alveolar_ml))
    assert v.expected_paco2_mmhg == pytest.approx(p.metabolism.vco2_ml_min * gas.alveolar_constant_mmhg(38.5) / va)
    codes = {c.code for c in p.cautions}
    assert "SETTINGS_FIXED" in codes and "TARGET_UNREACHABLE" not in codes and "LIMIT_BINDING" not in codes
