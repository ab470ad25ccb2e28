"""Metabolic equations against hand oracles from the published formulas."""

import pytest

from ventset.physiology import metabolism as m


@pytest.mark.parametrize(("mass", "kcal"), [(10, 393.6389), (0.25, 24.7487), (500, 7401.599)])
def test_kleiber(mass, kcal):
    # Oracle: Kleiber 1947, 70·M^0.75 kcal/day (values in test-references A5).
    assert m.allometric_rate_kcal_day(mass, 70, 0.75) == pytest.approx(kcal, rel=1e-6, abs=1e-4)


def test_weir_energy_expenditure():
    # Oracle: Weir 1949 hand value: VO2 250, VCO2 200 mL/min → 1737.288 kcal/day.
    assert m.weir_kcal_day(250, 200) == pytest.approx(1737.288, abs=1e-3)


@pytest.mark.parametrize(("rq", "kj"), [(0.7, 19.73), (0.8, 20.19), (1.0, 21.12)])
def test_o2_energy_equivalent(rq, kj):
    # Oracle: Weir 1949 energy equivalent table (kJ/L = 16.49 + 4.63·RQ).
    assert m.o2_energy_kj_per_l(rq) == pytest.approx(kj, abs=0.01)


def test_vo2_from_power_worked_example():
    # Worked example (physiology sheet §1.3): 10 W at RQ 0.8 → 29.7 mL O2/min.
    assert m.vo2_ml_min(10, 0.8) == pytest.approx(29.7, abs=0.05)


def test_vo2_power_round_trip():
    assert m.power_w_from_vo2(m.vo2_ml_min(42.0, 0.85), 0.85) == pytest.approx(42.0, rel=1e-12)


def test_brody_vo2_for_20_kg_dog():
    # Lowe & Ernst 1981 closed-circuit rule VO2 ≈ 10·M^0.75 mL/min; Kleiber via Weir gives 10.1·M^0.75.
    w = m.kcal_day_to_w(m.allometric_rate_kcal_day(20, 70, 0.75))
    assert m.vo2_ml_min(w, 0.8) == pytest.approx(10.1 * 20**0.75, rel=0.01)


def test_kcal_day_to_watts_matches_si_definition():
    # Oracle: 1 W = 86400 J/day / 4184 J/kcal = 20.6500956 kcal/day (pint 0.25.3 gives the same).
    assert m.kcal_day_to_w(20.6500956) == pytest.approx(1.0, rel=1e-8)


@pytest.mark.parametrize(("q10", "pct"), [(2.0, 7.2), (2.5, 9.6), (3.0, 11.6)])
def test_q10_percent_per_degree(q10, pct):
    # Oracle: physiology sheet §1.4 table, (Q10^0.1 − 1)·100 % per °C.
    assert (m.q10_factor(38, 37, q10) - 1) * 100 == pytest.approx(pct, abs=0.05)


def test_iguana_worked_example():
    # Maxwell, Jacobson & McNab 2003 iguana: 1.27 mL O2/min at 30 °C → 0.82 mL/min at 25 °C with Q10 2.4.
    assert 1.27 * m.q10_factor(25, 30, 2.4) == pytest.approx(0.82, abs=0.01)
