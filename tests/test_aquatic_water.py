"""Oxygen in water against outside references: TEOS-10 gsw, the reference sheet's check values, UNESCO 1983."""

import gsw
import pytest

from ventset.aquatic import water
from ventset.physiology.gas import barometric_pressure_mmhg

MMHG_PER_KPA = 1000 / 133.322387415


def _gsw_mg_l(salinity: float, temp_c: float) -> float:
    # Oracle: gsw 3.6.23 O2sol_SP_pt (µmol/kg) × gsw's own density (test-references §A3 recipe) × 31.9988/1000.
    sa = gsw.SA_from_SP(salinity, 0, 0, 0)
    rho = gsw.rho(sa, gsw.CT_from_pt(sa, temp_c), 0) / 1000
    return float(gsw.O2sol_SP_pt(salinity, temp_c)) * float(rho) * 31.9988 / 1000


@pytest.mark.parametrize("salinity", [0, 35])
@pytest.mark.parametrize("temp_c", [0, 10, 20, 30])
def test_solubility_matches_gsw(temp_c, salinity):
    # Oracle: gsw.O2sol_SP_pt (Garcia & Gordon 1992, Benson & Krause data, t68 factor), µmol/kg.
    assert water.o2_solubility_umol_kg(temp_c, salinity) == pytest.approx(
        float(gsw.O2sol_SP_pt(salinity, temp_c)), rel=1e-9)


@pytest.mark.parametrize("salinity", [0, 35])
@pytest.mark.parametrize("temp_c", [0, 10, 20, 30])
def test_content_mg_l_matches_gsw_with_its_density(temp_c, salinity):
    # Oracle: gsw µmol/kg converted with gsw.rho (TEOS-10); our density is UNESCO 1983, within 0.001 mg/L.
    assert water.saturated_o2_mg_l(temp_c, salinity) == pytest.approx(_gsw_mg_l(salinity, temp_c), abs=1e-3)


# Reference sheet A1.3 (aquatic-and-zoo-species.md): t, S → µmol/kg, mg/L, mL/L (gsw 3.6.23, 2 decimals).
SHEET_A13 = [(0, 0, 457.01, 14.62, 10.23), (10, 0, 352.84, 11.29, 7.90), (20, 0, 284.63, 9.09, 6.36),
             (30, 0, 237.22, 7.56, 5.29), (0, 35, 347.90, 11.45, 8.01), (10, 35, 274.60, 9.02, 6.31),
             (20, 35, 225.52, 7.40, 5.18), (30, 35, 190.72, 6.24, 4.36), (24, 0, 263.75, 8.42, 5.89),
             (24, 35, 210.28, 6.89, 4.82)]


@pytest.mark.parametrize(("t", "s", "umol", "mg", "ml"), SHEET_A13)
def test_sheet_check_values(t, s, umol, mg, ml):
    # Oracle: reference sheet A1.3 check values (rounded to 0.01).
    assert water.o2_solubility_umol_kg(t, s) == pytest.approx(umol, abs=0.006)
    assert water.saturated_o2_mg_l(t, s) == pytest.approx(mg, abs=0.006)
    assert water.mg_to_ml_o2(water.saturated_o2_mg_l(t, s)) == pytest.approx(ml, abs=0.006)


# test-references §A3 table (gsw + its density, 3 decimals) and the Standard Methods fresh-water column.
TESTREF_MG_L = {(0, 5): 12.770, (0, 15): 10.083, (0, 25): 8.262, (35, 5): 10.107, (35, 15): 8.135,
                (35, 25): 6.771}


@pytest.mark.parametrize(("key", "mg"), sorted(TESTREF_MG_L.items()))
def test_test_reference_table(key, mg):
    # Oracle: test-references §A3 (gsw 3.6.23 O2sol_SP_pt × gsw.rho), mg/L to 3 decimals.
    s, t = key
    assert water.saturated_o2_mg_l(t, s) == pytest.approx(mg, abs=0.0015)


@pytest.mark.parametrize(("temp_c", "altitude_m", "mg_l"), [(20, 1600, 7.457), (10, 1600, 9.280), (20, 4000, 5.448)])
def test_altitude_correction_check_values(temp_c, altitude_m, mg_l):
    # Oracle: test-references §A3: C·(PB − pw)/(101.325 − pw) with ISA PB and IAPWS pw (7.457 mg/L at 20 °C, 1600 m).
    pb = barometric_pressure_mmhg(altitude_m)
    assert water.saturated_o2_mg_l(temp_c, 0, pb) == pytest.approx(mg_l, abs=0.0015)


def test_altitude_pressure_inputs_of_the_check_value():
    # Oracle: test-references §A3: PB 83.5277 kPa at 1600 m, pw 2.3393 kPa at 20 °C.
    from ventset.physiology.gas import water_vapour_pressure_mmhg

    assert barometric_pressure_mmhg(1600) == pytest.approx(83.5277 * MMHG_PER_KPA, abs=0.01)
    assert water_vapour_pressure_mmhg(20) == pytest.approx(2.3393 * MMHG_PER_KPA, abs=0.005)


@pytest.mark.parametrize(("altitude_m", "mg_l"), [(500, 8.55), (1000, 8.04), (1500, 7.55), (2000, 7.09),
                                                  (3000, 6.23)])
def test_sheet_altitude_table(altitude_m, mg_l):
    # Oracle: reference sheet A1.4 table, 100 % air saturation, 20 °C fresh water (2 decimals).
    assert water.saturated_o2_mg_l(20, 0, barometric_pressure_mmhg(altitude_m)) == pytest.approx(mg_l, abs=0.006)


@pytest.mark.parametrize(("t", "s", "rho"), [(5, 0, 0.99996675), (5, 35, 1.02767547), (25, 35, 1.02334306)])
def test_density_unesco_check_values(t, s, rho):
    # Oracle: EOS-80 check values (UNESCO 1983 / Gill 1982) at t68; ours takes ITS-90, so within 2e-6 kg/L.
    assert water.water_density_kg_l(t, s) == pytest.approx(rho, abs=2e-6)


def test_henry_coefficient_and_water_po2():
    # Oracle: reference sheet A1.2: α ≈ 31.1 mL/L/atm at 20 °C fresh, 23.7 at 24 °C sea water; PO2 155.5 mmHg.
    fresh = water.water_o2(20, 0, 760)
    sea = water.water_o2(24, 35, 760)
    assert fresh.alpha_ml_l_mmhg * 760 == pytest.approx(31.1, abs=0.1)
    assert sea.alpha_ml_l_mmhg * 760 == pytest.approx(23.7, abs=0.1)
    assert fresh.po2_mmhg == pytest.approx(155.5, abs=0.2)


def test_content_follows_partial_pressure_not_fraction():
    # Henry's law: at 1600 m the O2 fraction of air is unchanged but content falls with (PB − pw)/(760 − pw).
    low = water.water_o2(20, 0, barometric_pressure_mmhg(1600))
    assert low.o2_mg_l / water.saturated_o2_mg_l(20, 0) == pytest.approx(
        low.po2_mmhg / water.water_o2(20, 0, 760).po2_mmhg, rel=1e-12)


def test_measured_content_wins_and_gives_saturation():
    w = water.water_o2(20, 0, 760, saturation_percent=100, measured_o2_mg_l=4.5455)
    assert w.measured and w.o2_mg_l == 4.5455
    assert w.saturation_percent == pytest.approx(50.0, abs=0.01)  # 9.091 mg/L saturated (gsw)


def test_supply_saturation_scales_content():
    assert water.water_o2(20, 0, 760, saturation_percent=50).o2_mg_l == pytest.approx(9.0913 / 2, abs=1e-3)
