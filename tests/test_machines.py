"""The plan on a ventilator class (ventset/machines): gas arithmetic against hand calculations and Boyle's law,
dialled values on their steps and inside their ranges (or a caution says why not), the dialled PaCO2 from the
one evaluation, patients a class cannot reach said out loud, oxygen supply against a hand calculation."""

from __future__ import annotations

import math
from dataclasses import replace

import pint
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventset.evaluate import evaluate
from ventset.machines import physics
from ventset.machines.data import load_machines
from ventset.machines.dial import PACO2_EQUAL_MMHG, deliver, make_rig
from ventset.model import Circuit, Patient, Request, Targets
from ventset.planner import plan, plan_at
from ventset.report import plan_to_dict

MACHINES = load_machines()
UREG = pint.UnitRegistry()


def on(species: str, mass_kg: float, machine: str, **circuit):
    return plan(Request(Patient(species, mass_kg), Circuit(machine=machine, **circuit)))


def codes(p) -> set[str]:
    return {c.code for c in p.cautions}


# ---------------------------------------------------------------------------------------------------------
# Gas arithmetic, against sources outside the project
# ---------------------------------------------------------------------------------------------------------

def test_volume_is_flow_times_time():
    # Hand calculation: 12 L/min is 12000/60 = 200 mL/s; for 1.0 s that is 200 mL; 0.5 L/min for 0.3 s is 2.5 mL.
    assert physics.flow_volume_ml(12.0, 1.0) == pytest.approx(200.0)
    assert physics.flow_volume_ml(0.5, 0.3) == pytest.approx(2.5)
    assert physics.flow_time_s(5500.0, 140.0) == pytest.approx(5.5 / (140.0 / 60.0))  # 2.357 s


def test_fresh_gas_coupling_adds_fgf_times_ti():
    # Reference sheet (ventilators-and-situations, A5 item 3): FGF 3 L/min (50 mL/s) for Ti 1 s adds 50 mL.
    assert physics.coupled_ml(3000.0, 1.0) == pytest.approx(50.0)


def test_compressible_volume_is_boyle():
    # Boyle's law, isothermal: P·V constant, so a gas space V gains ΔP and shrinks by V·(1 − P/(P + ΔP)) ≈ V·ΔP/P.
    # Barometric pressure in cmH2O from pint (760 mmHg = 1033.2 cmH2O); the reference sheet's derived example
    # (A4 b): 30 L of circuit gas at 30 cmH2O loses 30000 × 30/1033 ≈ 0.87 L.
    pb = UREG.Quantity(760, "mmHg").to("cmH2O").magnitude
    assert physics.barometric_cmh2o(760.0) == pytest.approx(pb, rel=1e-9)
    per_cmh2o = physics.compressible_ml_cmh2o(30000.0, 760.0)
    assert per_cmh2o * 30 == pytest.approx(870.0, rel=0.01)
    exact = 30000.0 * (1 - pb / (pb + 1.0))
    assert per_cmh2o == pytest.approx(exact, rel=1.5e-3)  # linearised to within ΔP/PB


def test_cylinder_duration_hand_calculation():
    # Hand calculation with the volumes named: a full E cylinder of 680 L at 6 L/min driving gas + 1 L/min fresh gas
    # lasts 680/7 = 97.1 min (the reference sheet's 30 kg dog example, A3: "a full E lasts ~70-95 min").
    assert physics.supply_minutes(680.0, 6.0 + 1.0) == pytest.approx(97.142857, rel=1e-6)
    assert physics.supply_minutes(680.0, 0.0) == math.inf


def test_oxygen_use_on_a_bellows_is_fresh_gas_plus_driving_gas():
    # The class's driving gas multiple (1.5 × the minute volume the bellows delivers) plus the plan's fresh gas;
    # a supply of 300 L entered lasts 300 L / that use (hand arithmetic on the plan's own numbers).
    p = on("dog", 20.0, "bellows_ascending", oxygen_supply_l=300.0)
    ms = p.machine
    machine_minute_l = ms.delivery.machine_ml * ms.evaluation.rate_per_min / 1000.0
    assert ms.oxygen.driving_gas_l_min == pytest.approx(1.5 * machine_minute_l)
    assert ms.oxygen.fresh_gas_l_min == pytest.approx(p.oxygen.fresh_gas_ml_min / 1000.0)
    assert ms.oxygen.supply_min == pytest.approx(300.0 / (1.5 * machine_minute_l + p.oxygen.fresh_gas_ml_min / 1000))


def test_an_electric_piston_uses_no_driving_gas_and_a_demand_valve_only_the_breath():
    piston = on("dog", 20.0, "piston_small_animal").machine
    assert piston.oxygen.driving_gas_l_min == 0.0
    valve = on("horse", 450.0, "demand_valve").machine
    # Hand calculation: the valve's 150 L/min held for the dialled press time gives 150000/60 × Ti mL per breath.
    ti = valve.setting("press_time").value
    assert valve.delivery.machine_ml == pytest.approx(150000.0 / 60.0 * ti)
    assert valve.oxygen.fresh_gas_l_min == 0.0
    assert valve.oxygen.use_l_min == pytest.approx(valve.delivery.machine_ml * valve.evaluation.rate_per_min / 1000)


def test_supply_short_is_said():
    # 60 L at well over 1 L/min lasts under an hour, before the default 2 h.
    p = on("dog", 20.0, "bellows_ascending", oxygen_supply_l=60.0)
    assert p.machine.oxygen.supply_min < 60
    assert "MACHINE_SUPPLY_SHORT" in codes(p)
    assert "MACHINE_SUPPLY_SHORT" not in codes(on("dog", 20.0, "piston_small_animal"))


# ---------------------------------------------------------------------------------------------------------
# The delivered breath
# ---------------------------------------------------------------------------------------------------------

def test_delivered_breath_is_machine_volume_plus_coupling_minus_compression():
    # Conservation of gas: what enters the breath path (machine volume + FGF × Ti) is the patient's tidal volume
    # plus what the circuit and machine absorb by compression.
    p = on("cat", 4.0, "flow_time_small_animal")
    ms = p.machine
    dv, ev = ms.delivery, ms.evaluation
    flow, ti = ms.setting("flow").value, ms.setting("ti").value
    assert dv.machine_ml == pytest.approx(flow * 1000 / 60 * ti)
    assert dv.coupled_ml == pytest.approx(p.oxygen.fresh_gas_ml_min / 60 * ti)
    assert ev.vt_ml + ev.compressed_ml == pytest.approx(dv.machine_ml + dv.coupled_ml)


def test_a_decoupled_machine_adds_no_fresh_gas():
    ms = on("dog", 20.0, "bellows_descending").machine
    assert ms.delivery.coupled_ml == 0.0
    assert "MACHINE_FRESH_GAS_COUPLING" not in {c.code for c in ms.cautions}


def test_large_animal_bellows_inspiratory_time_is_volume_over_flow():
    ms = on("horse", 450.0, "bellows_large_animal").machine
    vt_l, flow = ms.setting("tidal_volume").value, ms.setting("flow").value
    assert ms.evaluation.ti_s == pytest.approx(vt_l / (flow / 60.0))  # hand calculation: V ÷ flow


def test_pressure_cycled_breath_ends_at_the_cycling_pressure():
    ms = on("dog", 20.0, "pressure_cycled_generator").machine
    assert ms.delivery.cycling == ""
    assert ms.evaluation.peak_cmh2o == pytest.approx(ms.setting("cycle_pressure").value, abs=1e-6)
    assert "MACHINE_VOLUME_FOLLOWS_LUNG" in {c.code for c in ms.cautions}


def test_dialled_paco2_is_the_evaluation_at_the_dialled_settings():
    for key in MACHINES.classes:
        p = on("dog", 20.0, key)
        ms = p.machine
        ev = evaluate(ms.delivery.subject, ms.evaluation.vt_ml, ms.evaluation.rate_per_min)
        assert ms.expected_paco2_mmhg == ev.paco2_mmhg
        if ms.dialled is not None:
            assert ms.dialled.ventilation.expected_paco2_mmhg == ev.paco2_mmhg


def test_plan_without_machine_is_unchanged():
    req = Request(Patient("dog", 20.0))
    p = plan(req)
    assert p.machine is None and "machine" not in plan_to_dict(p)
    with_machine = plan(replace(req, circuit=Circuit(machine="piston_small_animal")))
    assert with_machine.ventilation == p.ventilation and with_machine.pressures == p.pressures
    assert set(codes(p)) <= set(codes(with_machine))


def test_rounding_keeps_the_target_better_than_any_other_step():
    # Exhaustive check of the choice: no volume setting (at any rate step the dial considered) comes closer to the
    # ideal PaCO2 than the dialled one by more than the tolerance.
    p = on("dog", 20.0, "bellows_ascending")
    ms = p.machine
    rig = make_rig(p, ms.machine)
    fixed = {s.control.kind: s.control.to_core(s.value) for s in ms.settings}
    got = abs(ms.expected_paco2_mmhg - ms.aim_paco2_mmhg)
    vt = ms.machine.control("tidal_volume")
    for rate in (math.floor(p.ventilation.rate_per_min), math.ceil(p.ventilation.rate_per_min)):
        for k in range(int(vt.min / vt.step), int(vt.max / vt.step) + 1):
            ev = deliver(rig, {**fixed, "rate": rate, "tidal_volume": k * vt.step}).evaluation
            inside = p.limits.vt_min_ml <= ev.vt_ml <= p.limits.vt_max_ml
            if inside:
                assert abs(ev.paco2_mmhg - ms.aim_paco2_mmhg) >= got - PACO2_EQUAL_MMHG - 1e-9


# ---------------------------------------------------------------------------------------------------------
# Patients a class cannot serve
# ---------------------------------------------------------------------------------------------------------

def test_mouse_on_a_large_animal_bellows_is_said_out_loud():
    p = on("mouse", 0.025, "bellows_large_animal")
    too_small = [c for c in p.cautions if c.code == "MACHINE_PATIENT_TOO_SMALL"]
    assert too_small and too_small[0].severity == "danger"
    assert "1.0 L" in too_small[0].message  # the nearest feasible setting is named
    assert not p.machine.setting("tidal_volume").in_range


def test_horse_on_a_small_patient_machine_is_said_out_loud():
    p = on("horse", 450.0, "piston_small_patient")
    assert "MACHINE_PATIENT_TOO_LARGE" in codes(p)
    assert p.worst_severity() == "danger"


def test_a_setting_held_at_a_range_end_is_never_silent():
    # I:E of 1:5.6 is asked of a machine whose I:E goes to 1:4.
    p = on("dog", 20.0, "piston_small_animal")
    s = p.machine.setting("ie")
    assert not s.in_range and s.value == 4.0
    assert any(c.code == "MACHINE_CONTROL_OUT_OF_RANGE" and "I:E" in c.message for c in p.cautions)


def test_entered_duration_and_supply_are_used():
    p = plan(Request(Patient("dog", 20.0), Circuit(machine="bellows_ascending", oxygen_supply_l=500.0),
                     Targets(duration_min=30.0)))
    assert p.machine.oxygen.content_l == 500.0 and p.machine.oxygen.planned_min == 30.0
    assert "MACHINE_SUPPLY_SHORT" not in codes(p)


# ---------------------------------------------------------------------------------------------------------
# Properties over patients and classes
# ---------------------------------------------------------------------------------------------------------

PATIENTS = st.sampled_from([("mouse", 0.008, 0.1), ("rat", 0.15, 0.6), ("cat", 2.0, 8.0), ("dog", 3.0, 80.0),
                            ("horse", 150.0, 900.0), ("rabbit", 1.0, 6.0)])


@settings(max_examples=120)
@given(PATIENTS, st.floats(0.0, 1.0), st.sampled_from(sorted(MACHINES.classes)))
def test_dialled_values_are_on_steps_and_in_range_or_said(patient, where, key):
    species, lo, hi = patient
    p = on(species, lo + where * (hi - lo), key)
    ms = p.machine
    messages = [c.message for c in p.cautions if "MACHINE" in c.code]
    for s in ms.settings:
        c = s.control
        assert c.on_step(s.value), (c.label, s.value)
        assert c.min - 1e-9 <= s.value <= c.max + 1e-9
        if not s.in_range:
            assert any(c.label in m for m in messages), (c.label, messages)
        else:
            assert c.min <= c.snap(s.ideal) <= c.max
    ev = evaluate(ms.delivery.subject, ms.evaluation.vt_ml, ms.evaluation.rate_per_min)
    assert ms.expected_paco2_mmhg == ev.paco2_mmhg


@settings(max_examples=60)
@given(st.floats(3.0, 60.0), st.sampled_from(["bellows_ascending", "flow_time_small_animal", "piston_small_animal"]))
def test_dialled_plan_matches_plan_at_of_the_dialled_breath(mass, key):
    p = on("dog", mass, key)
    ms = p.machine
    if ms.dialled is None:
        assert "MACHINE_TIMING" in codes(p)
        return
    b = p.basis
    s = ms.delivery.subject
    basis = replace(b, inputs=replace(b.inputs, mode=s.mode), timing=s.timing, system=replace(
        b.system, compressible_ml_cmh2o=s.compressible_ml_cmh2o), mechanics=replace(
        b.mechanics, peep_cmh2o=s.peep_cmh2o, pressure_limit_cmh2o=s.pressure_limit_cmh2o))
    again = plan_at(replace(p, basis=basis, subject=s), ms.evaluation.vt_ml, ms.evaluation.rate_per_min)
    assert again.ventilation == ms.dialled.ventilation
