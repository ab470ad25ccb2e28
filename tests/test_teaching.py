"""The teaching view's numbers: one patient, the settings held, apparatus volumes and tube length changed."""

from __future__ import annotations

import math
from dataclasses import replace

import pytest
from hypothesis import given
from hypothesis import strategies as st

from ventset.model import ApparatusPart, Circuit, Patient, Request
from ventset.physiology import gas
from ventset.planner import plan
from ventset.teaching import ADDED_PART, axis_ml, lesson, start


@pytest.fixture(scope="module")
def cat():
    return plan(Request(Patient("cat", 3.0)))


def test_start_takes_the_usual_tube_when_none_was_entered(cat, library):
    from ventset.stages.airway import usual_tube

    inp = start(cat, library)
    assert (inp.tube_id_mm, inp.tube_length_cm) == pytest.approx(usual_tube(3.0, library))
    assert inp.part_volumes_ml == () and inp.added_ml == 0 and inp.hold_settings
    first = lesson(cat, inp, library)
    assert first.plan.ventilation.expected_paco2_mmhg == pytest.approx(cat.ventilation.expected_paco2_mmhg, rel=1e-9)


def test_held_settings_follow_the_alveolar_ventilation_equation(cat, library):
    # PaCO2 = VCO2·K(T)/(f·(VT(1 − f_alv) − VD)), K = 867.1 mL-mmHg form at 38.5 °C (physiology.md §3.1: 0.8671).
    inp = start(cat, library)
    v, s = cat.ventilation, cat.subject
    for added in (0.0, 5.0, 12.0, 20.0):
        got = lesson(cat, replace(inp, added_ml=added), library)
        assert got.plan.ventilation.tidal_volume_ml == pytest.approx(v.tidal_volume_ml, rel=1e-12)
        assert got.plan.ventilation.rate_per_min == pytest.approx(v.rate_per_min, rel=1e-12)
        va = v.rate_per_min * (v.tidal_volume_ml * (1 - s.alveolar_fraction) - s.vd_fixed_ml - added)
        assert got.plan.ventilation.expected_paco2_mmhg == pytest.approx(s.vco2_ml_min * 867.1 / va, rel=1e-4)
        assert any(p.name == ADDED_PART for p in got.plan.dead_space.parts) == (added > 0)


def test_gas_exchange_stops_where_the_breath_is_all_dead_space(cat, library):
    inp = start(cat, library)
    first = lesson(cat, inp, library)
    v, s = cat.ventilation, cat.subject
    # VT(1 − f_alv) = VD_fixed: nothing left for the alveoli (physiology.md §3.1, "if VT ≤ VD_total").
    assert first.stop_ml == pytest.approx(v.tidal_volume_ml * (1 - s.alveolar_fraction) - s.vd_fixed_ml
                                          + first.apparatus_ml, rel=1e-9)
    room = first.stop_ml - first.apparatus_ml
    below = lesson(cat, replace(inp, added_ml=room * 0.98), library)
    beyond = lesson(cat, replace(inp, added_ml=room * 1.02), library)
    assert math.isfinite(below.plan.ventilation.expected_paco2_mmhg) and not below.exchange_stopped
    assert math.isinf(beyond.plan.ventilation.expected_paco2_mmhg) and beyond.exchange_stopped
    assert "VT_NOT_ABOVE_DEAD_SPACE" in {c.code for c in beyond.plan.cautions}
    assert first.stop_ml < axis_ml(cat)


def test_minute_volume_needed_rises_by_f_over_one_minus_alveolar_fraction_per_ml(cat, library):
    # VE needed at rate f = f·(VA/f + VD)/(1 − f_alv) (physiology.md §3.1), so dVE/dVD = f/(1 − f_alv).
    inp = start(cat, library)
    a, b = (lesson(cat, replace(inp, added_ml=x), library) for x in (2.0, 7.0))
    f, f_alv = cat.ventilation.rate_per_min, cat.subject.alveolar_fraction
    assert b.minute_needed_ml_min - a.minute_needed_ml_min == pytest.approx(5.0 * f / (1 - f_alv), rel=1e-9)


def test_a_longer_tube_adds_its_own_volume(library):
    # V = π·(ID/2)²·L (physiology.md §4.4: 4.0 mm, 5 cm → 0.63 mL).
    first = plan(Request(Patient("cat", 3.0), Circuit(tube_id_mm=4.0, tube_length_cm=0.0)), library)
    inp = start(first, library)
    longer = lesson(first, replace(inp, tube_length_cm=5.0), library)
    assert longer.plan.dead_space.tube_ml == pytest.approx(0.63, abs=0.005)


def test_free_settings_let_the_planner_choose_again(cat, library):
    inp = replace(start(cat, library), added_ml=20.0, hold_settings=False)
    free = lesson(cat, inp, library)
    assert free.plan.limits.binding != ("fixed_by_user",)
    assert free.plan.ventilation.minute_ml_min > cat.ventilation.minute_ml_min


@given(key=st.sampled_from(["dog", "cat", "rabbit", "ferret", "psittacine"]), where=st.floats(0, 1),
       volumes=st.lists(st.floats(0, 15), min_size=2, max_size=2), part=st.floats(0, 5))
def test_property_more_dead_space_never_lowers_the_minute_volume_needed(library, key, where, volumes, part):
    sp = library.species[key]
    mass = sp.mass_kg.min * (sp.mass_kg.max / sp.mass_kg.min) ** where
    first = plan(Request(Patient(key, mass), Circuit(parts=(ApparatusPart("elbow", part),))), library)
    inp = start(first, library)
    lo, hi = sorted(volumes)
    a, b = (lesson(first, replace(inp, added_ml=x), library, x_max_ml=10.0) for x in (lo, hi))
    assert b.minute_needed_ml_min >= a.minute_needed_ml_min
    assert b.plan.ventilation.expected_paco2_mmhg >= a.plan.ventilation.expected_paco2_mmhg


def test_k_of_the_check_above_is_the_published_constant():
    assert gas.alveolar_constant_mmhg(38.5) == pytest.approx(867.1, abs=0.05)  # physiology.md §3.1 table
