"""Gas equations against outside references (values quoted beside each check)."""

import math

import pytest

from ventset.physiology import gas

# IAPWS-IF97 saturation pressure (iapws 1.5.5, IAPWS97(T, x=0).P) in kPa, and IAPWS-95 (CoolProp 8.0.0).
IF97_KPA = {25: 3.16975, 30: 4.24669, 35: 5.62862, 37: 6.28185, 38.5: 6.81388, 39: 6.99968, 40: 7.38443,
            41: 7.78731, 42: 8.20901}
IAPWS95_MMHG = {25: 23.776, 30: 31.855, 35: 42.221, 37: 47.121, 38.5: 51.112, 39: 52.506, 40: 55.392,
                41: 58.414, 42: 61.577}


@pytest.mark.parametrize("t", sorted(IF97_KPA))
def test_water_vapour_matches_iapws_if97_table(t):
    # Oracle: iapws 1.5.5 IAPWS97 saturation pressure (committed table).
    assert gas.water_vapour_pressure_mmhg(t) * 133.322387415 / 1000 == pytest.approx(IF97_KPA[t], abs=1e-5)


@pytest.mark.parametrize("t", sorted(IAPWS95_MMHG))
def test_water_vapour_within_0p02_mmhg_of_iapws95(t):
    # Oracle: CoolProp 8.0.0 PropsSI('P','T',T,'Q',0,'Water') (IAPWS-95), tolerance ±0.02 mmHg.
    assert gas.water_vapour_pressure_mmhg(t) == pytest.approx(IAPWS95_MMHG[t], abs=0.02)


@pytest.mark.parametrize("t", [20, 25, 30, 37, 38.5, 41, 42])
def test_water_vapour_agrees_with_psychrolib(t):
    # Oracle: psychrolib 2.5.0 GetSatVapPres (ASHRAE Hyland-Wexler), an independent formulation.
    psychrolib = pytest.importorskip("psychrolib")
    psychrolib.SetUnitSystem(psychrolib.SI)
    pa = psychrolib.GetSatVapPres(t)
    assert gas.water_vapour_pressure_mmhg(t) * 133.322387415 == pytest.approx(pa, rel=5e-4)


# ambiance 1.3.1 Atmosphere(h).pressure (ICAO standard atmosphere, geometric height), kPa.
AMBIANCE_KPA = {0: 101.3250, 500: 95.4613, 1000: 89.8763, 1600: 83.5277, 2240: 77.1623, 3000: 70.1211,
                4000: 61.6604}


@pytest.mark.parametrize("h", sorted(AMBIANCE_KPA))
def test_barometric_pressure_matches_ambiance(h):
    # Oracle: ambiance 1.3.1 (ISA), tolerance ±5 Pa.
    assert gas.barometric_pressure_mmhg(h) * 133.322387415 == pytest.approx(AMBIANCE_KPA[h] * 1000, abs=5)


@pytest.mark.parametrize(("t", "k"), [(37, 862.947), (38.5, 867.121), (39, 868.512)])
def test_alveolar_constant(t, k):
    # Oracle: K = 760·(273.15+t)/273.15 built from scipy.constants (test-references A5); 0.863 at 37 °C.
    assert gas.alveolar_constant_mmhg(t) == pytest.approx(k, abs=1e-3)


def test_alveolar_ventilation_textbook_example():
    # Textbook relation VA = VCO2 × 0.863 / PaCO2: 200 mL/min at 40 mmHg, 37 °C → 4.31 L/min.
    assert gas.alveolar_ventilation_ml_min(200, 40, 37) == pytest.approx(200 * 0.863 / 40 * 1000, rel=1e-3)


def test_paco2_inverse_of_alveolar_ventilation():
    va = gas.alveolar_ventilation_ml_min(61.3, 42.0, 38.5)
    assert gas.paco2_mmhg_from_va(61.3, va, 38.5) == pytest.approx(42.0, rel=1e-12)


@pytest.mark.parametrize(("fio2", "pb", "t", "paco2", "expected"), [
    (0.21, 760.0, 37, 40, 101.80),
    (1.0, 760.0, 37, 40, 672.88),
    (1.0, 760.0, 38.5, 40, 668.89),
    (0.21, 626.509, 38.5, 40, 72.93),
    (0.21, 462.491, 38.5, 35, 44.48),
])
def test_alveolar_gas_equation_full_form(fio2, pb, t, paco2, expected):
    # Oracle: test-references A5, full alveolar gas equation with PH2O from CoolProp, RQ 0.8.
    ph2o = gas.water_vapour_pressure_mmhg(t)
    assert gas.alveolar_po2_mmhg(fio2, pb, ph2o, paco2, 0.8) == pytest.approx(expected, abs=0.02)


@pytest.mark.parametrize(("pb", "t", "factor"), [(760, 37, 0.82610), (760, 38.5, 0.81752), (760, 39, 0.81461),
                                                 (626.509, 38.5, 0.66357)])
def test_btps_to_stpd(pb, t, factor):
    # Oracle: test-references A5 BTPS→STPD factors.
    assert gas.btps_to_stpd_factor(pb, t) == pytest.approx(factor, abs=2e-5)


def test_pao2_rises_with_fio2_and_pb():
    ph2o = gas.water_vapour_pressure_mmhg(38.5)
    vals = [gas.alveolar_po2_mmhg(f, 760, ph2o, 40, 0.8) for f in (0.21, 0.4, 0.6, 1.0)]
    assert vals == sorted(vals) and not math.isclose(vals[0], vals[-1])
