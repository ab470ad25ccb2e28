"""The arrays behind the plots (ventset.plotdata, Qt-free) against the planner and published equations."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from ventset import plotdata
from ventset.evaluate import Subject, TimingRule
from ventset.model import ApparatusPart, Circuit, Patient, Request, Targets
from ventset.physiology import gas
from ventset.planner import paco2_grid, plan


def _plan(species="dog", mass=20.0, parts=(), **targets):
    circuit = Circuit(parts=tuple(ApparatusPart(n, v) for n, v in parts), tube_id_mm=8.0, tube_length_cm=6.0)
    return plan(Request(Patient(species, mass), circuit, Targets(**targets)))


def test_isoline_matches_the_alveolar_ventilation_equation():
    # West, Respiratory Physiology: VA = VCO2 × 0.863 / PaCO2; VCO2 200 mL/min at PaCO2 40 mmHg needs
    # about 4.3 L/min of alveolar ventilation; with VT 500 mL and 150 mL dead space, 4315/350 = 12.3/min.
    s = Subject(vco2_ml_min=200.0, body_temp_c=37.0, vd_fixed_ml=150.0, alveolar_fraction=0.0,
                compliance_ml_cmh2o=50.0, resistance_cmh2o_l_s=5.0, peep_cmh2o=5.0, pressure_limit_cmh2o=30.0,
                compressible_ml_cmh2o=2.0, gradient_mmhg=3.0, mode="volume",
                timing=TimingRule(None, None, 1.0, 2.0), lean_mass_kg=70.0, fio2=1.0, barometric_mmhg=760.0,
                water_vapour_mmhg=47.0, rq=0.8)
    rate = plotdata.isopaco2_rate(40.0, np.array([500.0]), s)[0]
    assert rate == pytest.approx(200 * 0.863 / 40 * 1000 / 350, rel=2e-3)


def test_isolines_lie_on_the_paco2_grid():
    p = _plan()
    m = p.subject
    for line in plotdata.isolines(p):
        ok = np.isfinite(line.rate_per_min)
        assert ok.any()
        for vt, rate in zip(line.vt_ml[ok][::20], line.rate_per_min[ok][::20], strict=True):
            grid = paco2_grid(np.array([vt]), np.array([rate]), m.vco2_ml_min, m.body_temp_c, m.vd_fixed_ml,
                              m.alveolar_fraction)
            assert grid[0, 0] == pytest.approx(line.level_mmhg, rel=1e-9)


def test_target_line_passes_through_the_recommended_point_when_reached():
    p = _plan()
    assert p.ventilation.target_reached
    rate = plotdata.isopaco2_rate(p.ventilation.target_paco2_mmhg, np.array([p.ventilation.tidal_volume_ml]),
                                  p.subject)[0]
    assert rate == pytest.approx(p.ventilation.rate_per_min, rel=1e-6)


def test_contour_levels_are_round_in_the_users_unit():
    mm = plotdata.contour_levels(40.0, "mmHg")
    assert 40.0 in mm and all(abs(x / 10 - round(x / 10)) < 1e-9 for x in mm if x != 40.0)
    kpa = plotdata.contour_levels(40.0, "kPa")
    # 1 kPa = 7.500615758 mmHg (conventional mmHg, 133.322387415 Pa; BIPM SI brochure).
    assert all(abs(x / 7.500615758 - round(x / 7.500615758)) < 1e-9 for x in kpa if x != 40.0)


def test_breath_composition_adds_up_to_the_set_breath():
    p = _plan(parts=[("HME", 20.0), ("elbow", 7.5)])
    b = plotdata.breath_composition(p)
    tot = b.total_by_category()
    assert tot["apparatus"] == pytest.approx(20.0 + 7.5 + p.dead_space.tube_ml)
    assert tot["anatomical"] == pytest.approx(p.dead_space.anatomical_ml)
    assert sum(tot.values()) == pytest.approx(p.ventilation.set_tidal_volume_ml)
    assert [s.category for s in b.segments][:1] == ["circuit"]
    assert all(a.end_ml == pytest.approx(b_.start_ml) for a, b_ in zip(b.segments, b.segments[1:], strict=False))


def test_breath_with_more_dead_space_than_volume_exchanges_nothing():
    p = _plan("cat", 3.0, parts=[("huge filter", 200.0)])
    b = plotdata.breath_composition(p)
    assert b.exchange_ml == 0.0
    assert b.patient_start_ml + b.dead_space_ml > b.patient_end_ml


def test_zone_of_the_recommended_point_and_of_the_pressure_region():
    p = _plan()
    s = plotdata.point_summary(p, p.ventilation.tidal_volume_ml, p.ventilation.rate_per_min)
    assert s.zone == plotdata.ZONE_USUAL
    assert s.plateau_cmh2o == pytest.approx(p.pressures.plateau_cmh2o)
    assert s.top_cmh2o == pytest.approx(p.pressures.peak_cmh2o)
    assert s.paco2_mmhg == pytest.approx(p.ventilation.expected_paco2_mmhg)
    beyond = p.limits.vt_pressure_max_ml * 1.05
    assert plotdata.point_summary(p, beyond, p.ventilation.rate_per_min).zone == plotdata.ZONE_PLATEAU


def test_settings_map_shape_band_and_zones():
    p = _plan()
    m = plotdata.settings_map(p, 50, 40)
    assert m.paco2_mmhg.shape == m.zone.shape == (40, 50)
    band = m.in_band
    assert band.any()
    assert np.all(np.abs(m.paco2_mmhg[band] - p.ventilation.target_paco2_mmhg) <= plotdata.BAND_HALF_WIDTH_MMHG)
    assert set(np.unique(m.cell)) <= set(range(2 * plotdata.N_ZONES))
    # Plateau zone is exactly VT > (limit − PEEP)·C (equation of motion, no flow).
    plateau_cols = m.vt_ml > p.limits.vt_pressure_max_ml + 1e-9
    assert np.all(m.zone[:, plateau_cols] == plotdata.ZONE_PLATEAU)


def test_ti_rule_matches_the_plan():
    for kw in ({}, {"ie_expiratory_part": 3.0}, {"ti_s": 1.2}):
        p = _plan(**kw)
        ti = plotdata.ti_at_rates(p, np.array([p.ventilation.rate_per_min]))[0]
        assert ti == pytest.approx(p.ventilation.ti_s, rel=1e-9)


def test_pressure_boundary_is_where_peak_equals_the_limit():
    p = _plan()
    rates = np.array([8.0, 12.0, 20.0])
    for rate, vt in zip(rates, plotdata.pressure_boundary_vt(p, rates), strict=True):
        s = plotdata.point_summary(p, float(vt), float(rate))
        assert s.top_cmh2o == pytest.approx(p.pressures.pressure_limit_cmh2o, rel=1e-9)


def test_waveform_end_expiratory_volume_is_exponential_emptying():
    # Passive single-compartment emptying leaves VT·e^(−Te/τ) after one breath (Bates, Lung Mechanics 2009);
    # after three identical breaths the geometric sum VT·(x + x² + x³) with x = e^(−Te/τ).
    p = _plan("cat", 4.0)
    w = plotdata.waveforms(p)
    x = math.exp(-p.ventilation.te_s / p.pressures.time_constant_s)
    assert w.end_expiratory_ml == pytest.approx(p.ventilation.tidal_volume_ml * (x + x * x + x ** 3), rel=1e-9)
    assert w.complete == (w.te_tau >= 3.0)
    assert w.time_s.shape == w.pressure_cmh2o.shape == w.flow_l_min.shape == w.volume_ml.shape
    assert w.pressure_range[1] >= max(np.max(w.pressure_cmh2o), p.pressures.pressure_limit_cmh2o)


def test_sensitivity_at_the_fitted_apparatus_is_the_plans_paco2():
    p = _plan(parts=[("HME", 30.0)])
    s = plotdata.dead_space_sensitivity(p)
    assert s.current_ml == pytest.approx(30.0 + p.dead_space.tube_ml)
    assert s.current_paco2_mmhg == pytest.approx(p.ventilation.expected_paco2_mmhg, rel=1e-9)
    ok = np.isfinite(s.paco2_mmhg)
    assert np.all(np.diff(s.paco2_mmhg[ok]) > 0)  # more dead space, more CO2
    # Slope dP/dx = P²·f/(K·VCO2): derivative of the alveolar ventilation equation.
    k = p.metabolism.vco2_ml_min * gas.alveolar_constant_mmhg(p.resolved.body_temp_c)
    assert s.slope_mmhg_per_ml == pytest.approx(s.current_paco2_mmhg ** 2 * p.ventilation.rate_per_min / k)


def test_field_defaults_are_the_values_the_plan_used():
    p = _plan()
    d = plotdata.field_defaults(p)
    assert d["body-temperature"] == p.resolved.body_temp_c
    assert d["peep"] == p.pressures.peep_cmh2o
    assert d["target-etco2"] == pytest.approx(p.ventilation.expected_etco2_mmhg, abs=1e-6)
    assert all(math.isfinite(v) for v in d.values())


@given(mass=st.floats(1.0, 90.0), hme=st.floats(0.0, 120.0), rate=st.one_of(st.none(), st.floats(6.0, 30.0)))
def test_every_view_is_finite_where_it_is_drawn(mass, hme, rate):
    from ventset.model import Strategy

    req = Request(Patient("dog", mass), Circuit(parts=(ApparatusPart("hme", hme),)),
                  strategy=Strategy(rate_per_min=rate))
    p = plan(req)
    m = plotdata.settings_map(p, 30, 30)
    assert np.all(m.zone < plotdata.N_ZONES)
    w = plotdata.waveforms(p)
    assert np.all(np.isfinite(w.pressure_cmh2o)) and np.all(np.isfinite(w.volume_ml))
    assert all(math.isfinite(x) for r in (w.pressure_range, w.flow_range, w.volume_range) for x in r)
    s = plotdata.dead_space_sensitivity(p)
    assert math.isfinite(s.x_range[1]) and s.x_range[1] > 0
    b = plotdata.breath_composition(p)
    assert all(seg.volume_ml >= 0 for seg in b.segments)
    assert b.segments[-1].end_ml == pytest.approx(max(b.set_ml, b.patient_start_ml + b.dead_space_ml))


def test_custom_species_is_named_and_planned_from_its_base():
    req = Request(Patient("cat", 1.4, custom_species="Fennec fox"))
    p = plan(req)
    base = plan(Request(Patient("cat", 1.4)))
    assert p.resolved.species_label == "Fennec fox (values from Cat)"
    assert p.ventilation.rate_per_min == base.ventilation.rate_per_min
    assert any(c.code == "CUSTOM_SPECIES" and "Fennec fox" in c.message for c in p.cautions)
    assert any(a.name == "Species values" and a.value == "Cat" for a in p.assumptions)


def test_same_compares_plot_data_bit_for_bit():
    """plotdata.same: arrays the same bits (a NaN equals the same NaN), through tuples and dataclasses; a changed
    element, shape, dtype or type is a difference. Wherever numpy.array_equal (equal_nan=True, numpy's own
    definition) says two arrays differ, so does same: it never skips a redraw that was due."""
    a = np.array([1.0, np.nan, 3.0])
    rng = np.random.default_rng(7)
    for _ in range(200):
        x = rng.choice([0.0, -0.0, 1.0, np.nan, 2.5], size=4)
        y = rng.choice([0.0, -0.0, 1.0, np.nan, 2.5], size=4)
        if not np.array_equal(x, y, equal_nan=True):
            assert not plotdata.same(x, y)
    assert not plotdata.same(np.array([1, 2]), np.array([1.0, 2.0]))
    assert not plotdata.same(np.array([0.0]), np.array([-0.0]))  # equal, not the same bits: drawn once more
    assert plotdata.same(a, a.copy()) and not plotdata.same(a, np.array([1.0, np.nan, 3.5]))
    assert not plotdata.same(a, a[:2]) and not plotdata.same(a, list(a))
    assert plotdata.same((a, "mmHg", 2.0), (a.copy(), "mmHg", 2.0))
    assert not plotdata.same((a, "mmHg"), (a, "kPa")) and plotdata.same(float("nan"), float("nan"))
    p = plan(Request(Patient(species="dog", mass_kg=20.0)))
    w = plotdata.waveforms(p)
    assert plotdata.same(w, plotdata.waveforms(p))
    assert not plotdata.same(w, plotdata.waveforms(plan(Request(Patient(species="dog", mass_kg=21.0)))))
