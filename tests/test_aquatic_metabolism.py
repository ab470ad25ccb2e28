"""Fish VO2 against the published equations (constants typed from the papers, values computed by hand)."""

import math

import pytest

from ventset.aquatic import metabolism as met
from ventset.aquatic.data import aquatic_data


@pytest.mark.parametrize(("temp_c", "mmol_h"), [(10, 0.131451), (20, 0.240667)])
def test_clarke_johnston_arrhenius_at_two_temperatures(temp_c, mmol_h):
    # Oracle: Clarke & Johnston 1999 (J Anim Ecol 68:893) ln Rb = 15.7 − 5.02·(1000/T), 50-g fish, by hand:
    # 10 °C: 15.7 − 5.02·3.531697 = −2.029119 → 0.131451 mmol/h; 20 °C: 15.7 − 5.02·3.411223 = −1.424341 → 0.240667.
    assert met.clarke_johnston_rb_mmol_h(50, temp_c) == pytest.approx(mmol_h, rel=1e-5)


@pytest.mark.parametrize(("temp_c", "mg_kg_h"), [(0, 44), (10, 84), (20, 154), (24, 194), (30, 271)])
def test_clarke_johnston_table_of_the_sheet(temp_c, mg_kg_h):
    # Oracle: reference sheet A2.1 derived table (50-g fish, mg/kg/h, integers).
    assert met.clarke_johnston_mg_kg_h(0.05, temp_c) == pytest.approx(mg_kg_h, abs=0.6)


def test_mass_scaling_worked_value():
    # Oracle: reference sheet A2.1: 2 kg at 20 °C → 154 × 40^−0.2 = 74 mg/kg/h.
    assert met.clarke_johnston_mg_kg_h(2.0, 20) == pytest.approx(74, abs=0.5)


def test_koi_group_reference_and_q10():
    data = aquatic_data()
    koi = data.find_group("koi")
    # Reference point: the paper's 50-g line at 20 °C, 0.240667 mmol/h × 31.9988 / 0.05 kg = 154.03 mg/kg/h (by hand).
    assert koi.resting_vo2.mg_kg_h == pytest.approx(154.03, abs=0.02)
    at_ref = met.resting_vo2_mg_h(0.05, 20, koi.resting_vo2, koi.mass_exponent.value, koi.q10.value)
    assert at_ref == pytest.approx(7.7015, abs=1e-3)  # 154.03 × 0.05
    # Q10 2.4 (Clarke & Johnston 1999 within-species median): 5 °C warmer → × 2.4^0.5 = 1.549193.
    warm = met.resting_vo2_mg_h(0.05, 25, koi.resting_vo2, koi.mass_exponent.value, koi.q10.value)
    assert warm / at_ref == pytest.approx(1.549193, rel=1e-6)


def test_koi_default_within_published_range():
    # Oracle: reference sheet A2.2 / A5.3: carp SMR 50-90 mg/kg/h at 20 °C for 0.5-2 kg; C&J line 74, Winberg 94.
    koi = aquatic_data().find_group("koi")
    rate = met.resting_vo2_mg_h(2.0, 20, koi.resting_vo2, koi.mass_exponent.value, koi.q10.value) / 2.0
    assert 70 <= rate <= 94


def test_zebrafish_reference_at_two_temperatures():
    # Oracle: Lucas & Priede 1992: SMR 364 mg/kg/h at 24 °C, 0.43-0.55 g; at 28 °C × 2.4^0.4 = 1.419333 (by hand).
    z = aquatic_data().find_group("zebrafish")
    m = 0.00049
    at24 = met.resting_vo2_mg_h(m, 24, z.resting_vo2, z.mass_exponent.value, z.q10.value) / m
    at28 = met.resting_vo2_mg_h(m, 28, z.resting_vo2, z.mass_exponent.value, z.q10.value) / m
    assert at24 == pytest.approx(364, rel=1e-9)
    assert at28 == pytest.approx(364 * 1.419333, rel=1e-5)


def test_lemon_shark_reference_and_sheet_scaling():
    # Oracle: Bushnell et al. 1989: SMR 95 mL O2/kg/h = 135.76 mg/kg/h (× 1.429); sheet A5.4 scales to 10 kg with
    # b = 0.8 → × (10/1.5)^−0.2 = 0.684 → 93 mg/kg/h; with b = 0.79 (ours) within 3 %.
    s = aquatic_data().find_group("shark")
    assert s.resting_vo2.mg_kg_h == pytest.approx(135.76, abs=0.05)
    at10 = met.resting_vo2_mg_h(10, 25, s.resting_vo2, s.mass_exponent.value, s.q10.value) / 10
    assert at10 == pytest.approx(93, rel=0.03)


def test_design_vo2_applies_factors_and_units():
    koi = aquatic_data().find_group("koi")
    m = met.metabolism(2.0, 20, koi.resting_vo2, 0.84, 2.4, anaesthesia_factor=1.0, demand_factor=1.0,
                       entered_mg_kg_h=80)
    # Oracle: reference sheet A5.3: 80 mg/kg/h × 2 kg = 160 mg/h = 2.67 mg/min = 1.87 mL/min (1.429 mg/mL).
    assert m.vo2_mg_h == pytest.approx(160)
    assert m.vo2_mg_min == pytest.approx(2.667, abs=1e-3)
    assert m.vo2_ml_min == pytest.approx(1.87, abs=0.005)
    doubled = met.metabolism(2.0, 20, koi.resting_vo2, 0.84, 2.4, anaesthesia_factor=1.0, demand_factor=2.0,
                             entered_mg_kg_h=80)
    assert doubled.vo2_mg_min == pytest.approx(5.33, abs=0.01)


def test_teleost_line_reported_beside_the_group_value():
    koi = aquatic_data().find_group("koi")
    m = met.metabolism(2.0, 20, koi.resting_vo2, 0.84, 2.4, anaesthesia_factor=1.0, demand_factor=1.5)
    assert m.teleost_line_mg_kg_h == pytest.approx(74, abs=0.5)  # sheet A2.1
    assert math.isclose(m.vo2_mg_h, m.resting_mg_h * 1.5)
