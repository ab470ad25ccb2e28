"""The sweep over body mass: the planner's stages on arrays agree with plan() at every mass."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from ventset.errors import InputError
from ventset.model import ApparatusPart, Circuit, Patient, Request, Strategy, Targets
from ventset.physiology import gas
from ventset.planner import plan
from ventset.schema import Sourced
from ventset.solver import choose_settings, choose_settings_arrays
from ventset.sweep import masses_between, sweep_mass, with_mass

SPECIES = ["dog", "cat", "horse", "rabbit", "rat", "psittacine", "chelonian", "pig", "ferret", "marsupial", "sheep"]

# Sweep field → where plan() keeps the same number.
PLAN_PATHS = {
    "metabolic_rate_w": "metabolism.metabolic_rate_w", "vo2_ml_min": "metabolism.vo2_ml_min",
    "vco2_ml_min": "metabolism.vco2_ml_min", "anatomical_ml": "dead_space.anatomical_ml",
    "apparatus_ml": "dead_space.apparatus_ml", "tube_ml": "dead_space.tube_ml", "alveolar_ml": "dead_space.alveolar_ml",
    "total_dead_space_ml": "dead_space.total_ml", "tidal_volume_ml": "ventilation.tidal_volume_ml",
    "set_tidal_volume_ml": "ventilation.set_tidal_volume_ml", "rate_per_min": "ventilation.rate_per_min",
    "minute_ml_min": "ventilation.minute_ml_min", "alveolar_ml_min": "ventilation.delivered_alveolar_ml_min",
    "needed_alveolar_ml_min": "ventilation.alveolar_ml_min", "ti_s": "ventilation.ti_s", "te_s": "ventilation.te_s",
    "ie_expiratory_part": "resolved.ie_expiratory_part", "inspiratory_flow_l_min": "ventilation.inspiratory_flow_l_min",
    "target_paco2_mmhg": "ventilation.target_paco2_mmhg", "expected_paco2_mmhg": "ventilation.expected_paco2_mmhg",
    "expected_etco2_mmhg": "ventilation.expected_etco2_mmhg", "peep_cmh2o": "pressures.peep_cmh2o",
    "plateau_cmh2o": "pressures.plateau_cmh2o", "peak_cmh2o": "pressures.peak_cmh2o",
    "driving_cmh2o": "pressures.driving_cmh2o", "inspiratory_pressure_cmh2o": "pressures.inspiratory_pressure_cmh2o",
    "pressure_limit_cmh2o": "pressures.pressure_limit_cmh2o", "compliance_ml_cmh2o": "pressures.compliance_ml_cmh2o",
    "resistance_cmh2o_l_s": "pressures.resistance_cmh2o_l_s", "compressed_ml": "pressures.compressed_ml",
    "pao2_alveolar_mmhg": "oxygen.pao2_alveolar_mmhg", "min_o2_flow_ml_min": "oxygen.min_o2_flow_ml_min",
    "fresh_gas_ml_min": "oxygen.fresh_gas_ml_min", "fresh_gas_induction_ml_min": "oxygen.fresh_gas_induction_ml_min",
    "reservoir_bag_l": "oxygen.reservoir_bag_l", "vt_min_ml": "limits.vt_min_ml", "vt_max_ml": "limits.vt_max_ml",
    "rate_min_per_min": "limits.rate_min_per_min", "rate_max_per_min": "limits.rate_max_per_min",
    "vt_pressure_max_ml": "limits.vt_pressure_max_ml",
}


def _get(obj, path):
    for part in path.split("."):
        obj = getattr(obj, part)
    return obj


def assert_rows_equal_plans(request, masses, library, rel=1e-9):
    """Every sweep row equals plan() at that mass: numbers to ``rel``, limits, target reached, circuit."""
    sw = sweep_mass(request, masses, library)
    assert len(sw) == len(masses)
    for i, m in enumerate(masses):
        p = plan(with_mass(request, m), library)
        for name, path in PLAN_PATHS.items():
            got, want = float(getattr(sw, name)[i]), float(_get(p, path))
            if math.isfinite(want):
                assert got == pytest.approx(want, rel=rel, abs=1e-12), (name, m)
            else:
                assert got == want, (name, m)
        assert sw.binding_at(i) == p.limits.binding, m
        assert bool(sw.target_reached[i]) == p.ventilation.target_reached, m
        assert sw.circuit[i] == p.oxygen.circuit_type, m
    return sw


@pytest.mark.parametrize("key", ["dog", "cat", "horse", "psittacine", "chelonian", "rat"])
def test_sweep_equals_plan_at_many_masses(key, library):
    sp = library.species[key]
    masses = np.geomspace(sp.mass_kg.min, sp.mass_kg.max, 60)
    assert_rows_equal_plans(Request(Patient(key, 1.0)), masses, library)


@pytest.mark.parametrize("strategy", [Strategy("least_work"), Strategy(vt_ml_kg=12.0), Strategy(rate_per_min=18.0),
                                      Strategy(vt_ml_kg=10.0, rate_per_min=12.0)])
@pytest.mark.parametrize("mode", ["volume", "pressure"])
def test_sweep_equals_plan_for_each_strategy_and_mode(strategy, mode, library):
    req = Request(Patient("dog", 1.0), Circuit(parts=(ApparatusPart("HME", 12.0),), mode=mode), strategy=strategy)
    assert_rows_equal_plans(req, np.linspace(2, 40, 39), library)


def test_sweep_equals_plan_with_entered_tube_circuit_and_targets(library):
    req = Request(Patient("cat", 1.0), Circuit(tube_id_mm=4.0, tube_length_cm=6.0, circuit_type="non_rebreathing",
                                               sampling_ml_min=150.0),
                  Targets(paco2_mmhg=45.0, peep_cmh2o=3.0, fio2=0.5, altitude_m=1600.0, ie_expiratory_part=2.5))
    sw = assert_rows_equal_plans(req, np.linspace(1, 8, 29), library)
    assert set(sw.circuit) == {"non_rebreathing"}


def test_sweep_follows_the_age_thresholds(library):
    """A species with neonate and juvenile masses: each age's metabolic level, as plan() gives it."""
    dog = library.species["dog"]
    young = replace(dog, neonate_below_kg=Sourced(3.0, "test"), juvenile_below_kg=Sourced(10.0, "test"))
    lib = replace(library, species={**library.species, "dog": young})
    sw = assert_rows_equal_plans(Request(Patient("dog", 1.0)), np.linspace(1.5, 20, 40), lib)
    assert list(dict.fromkeys(sw.age)) == ["neonate", "juvenile", "adult"]


@given(key=st.sampled_from(SPECIES), where=st.lists(st.floats(0, 1), min_size=1, max_size=6),
       part_ml=st.floats(0, 40), strategy=st.sampled_from(["volume_first", "least_work"]),
       paco2=st.one_of(st.none(), st.floats(30, 60)), mode=st.sampled_from([None, "volume", "pressure"]))
def test_property_sweep_equals_plan(library, key, where, part_ml, strategy, paco2, mode):
    sp = library.species[key]
    masses = [sp.mass_kg.min * (sp.mass_kg.max / sp.mass_kg.min) ** w for w in where]
    req = Request(Patient(key, 1.0), Circuit(parts=(ApparatusPart("part", part_ml),), mode=mode),
                  Targets(paco2_mmhg=paco2), Strategy(strategy))
    assert_rows_equal_plans(req, masses, library)


def test_rows_obey_the_alveolar_ventilation_equation(library):
    # Alveolar ventilation equation, VA (L/min) = VCO2 (mL/min) × K / PaCO2 with K = 0.8671 at 38.5 °C
    # (/work/shared/reference/physiology.md §3.1, table of K(T)); a dog's default body temperature is 38.5 °C.
    sw = sweep_mass(Request(Patient("dog", 1.0)), np.linspace(2, 40, 100), library)
    va_l_min = sw.rate_per_min * (sw.tidal_volume_ml - sw.total_dead_space_ml) / 1000.0
    assert sw.expected_paco2_mmhg == pytest.approx(sw.vco2_ml_min * 0.8671 / va_l_min, rel=2e-4)


def test_masses_between_steps_and_ends():
    assert list(masses_between(2.0, 10.0, 2.0)) == [2.0, 4.0, 6.0, 8.0, 10.0]
    assert list(masses_between(2.0, 9.0, 2.0)) == [2.0, 4.0, 6.0, 8.0, 9.0]  # the last row is the upper end
    m = masses_between(2.0, 40.0, count=20)
    assert m[0] == 2.0 and m[-1] == pytest.approx(40.0) and len(m) == 20
    for args, key in (((0.0, 10.0), "from"), ((5.0, 2.0), "to"), ((2.0, 10.0, -1.0), "step")):
        with pytest.raises(InputError) as err:
            masses_between(*args)
        assert err.value.key == key


def test_sweep_refuses_what_belongs_to_one_animal(library):
    with pytest.raises(InputError) as err:
        sweep_mass(Request(Patient("dog", 20.0, lean_mass_kg=15.0)), [10.0, 20.0], library)
    assert err.value.key == "lean-mass"


def test_sweep_outside_the_species_range_names_mass(library):
    hi = library.species["cat"].mass_kg.max
    with pytest.raises(InputError) as err:
        sweep_mass(Request(Patient("cat", 1.0)), [2.0, hi * 2], library)
    assert err.value.key == "mass"


@given(st.floats(1, 20000), st.floats(0, 200), st.floats(0, 0.5), st.floats(1, 400), st.floats(1, 400),
       st.floats(1, 200), st.floats(1, 200), st.floats(1, 2000), st.one_of(st.none(), st.floats(1, 1000)),
       st.one_of(st.none(), st.floats(1, 100)))
def test_property_array_choice_equals_float_choice(va, vd, falv, a, b, r1, r2, vp, pref_vt, pref_rate):
    vt_lo, vt_hi = sorted((a, b))
    f_lo, f_hi = sorted((r1, r2))
    one = choose_settings(va, vd, falv, vt_lo, vt_hi, f_lo, f_hi, vp, pref_vt, pref_rate)
    arr = choose_settings_arrays(np.array([va]), vd, falv, vt_lo, vt_hi, f_lo, f_hi, vp,
                                 None if pref_vt is None else np.array([pref_vt]), pref_rate)
    assert arr.vt_ml[0] == one.vt_ml and arr.rate_per_min[0] == one.rate_per_min
    assert bool(arr.reached[0]) == one.reached and arr.binding_at(0) == one.binding


def test_hme_raises_the_minute_volume_needed_at_every_mass(library):
    # VE = VA + f·VD (physiology.md §3.1): more dead space at the same alveolar ventilation needs more VE.
    masses = np.linspace(2, 8, 13)
    bare = sweep_mass(Request(Patient("cat", 1.0)), masses, library)
    hme = sweep_mass(Request(Patient("cat", 1.0), Circuit(parts=(ApparatusPart("HME", 12.0),))), masses, library)
    assert (hme.minute_ml_min > bare.minute_ml_min).all()
    assert hme.needed_alveolar_ml_min == pytest.approx(bare.needed_alveolar_ml_min, rel=1e-12)
    assert gas.alveolar_constant_mmhg(38.5) == pytest.approx(867.1, abs=0.05)  # K(38.5 °C), physiology.md §3.1
