"""Oxygen in water: solubility, density, barometric pressure and units (Henry's law for gill irrigation).

Solubility: Garcia & Gordon 1992 (Limnol Oceanogr 37:1307, eq. 8; erratum 1993, 38:656), their fit of the
Benson & Krause 1984 data, µmol O2 per kg of water in equilibrium with water-saturated air at 1 atm, evaluated
at the IPTS-68 temperature (t68 = 1.00024·t90) exactly as TEOS-10 ``gsw.O2sol_SP_pt`` does. Density: the
one-atmosphere International Equation of State of Seawater (Millero & Poisson 1981; UNESCO 1983 Tech Pap Mar Sci
44), which turns µmol/kg into mg/L. Altitude: C(PB) = C(1 atm)·(PB − pw)/(760 − pw) (Benson & Krause 1984 without
the second-virial θ term, < 0.1 %), pw from :func:`ventset.physiology.gas.water_vapour_pressure_mmhg`.
Salinity is practical salinity (PSS-78, about g/kg). All pressures in mmHg, temperatures in °C (ITS-90).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ventset.physiology.gas import water_vapour_pressure_mmhg

ATM_MMHG = 760.0
O2_MG_PER_UMOL = 31.9988e-3      # molar mass of O2, 31.9988 g/mol (IUPAC atomic weight of O, 15.9994)
O2_UMOL_PER_ML = 44.6596         # Garcia & Gordon 1992: real-gas molar volume of O2, 22.3916 L/mol at STP
MG_PER_ML_O2 = O2_MG_PER_UMOL * O2_UMOL_PER_ML  # 1.429 mg per mL O2 (STPD)
AIR_O2_FRACTION = 0.20946        # O2 in dry air (from memory; the value used by Garcia & Gordon 1992)
T68_PER_T90 = 1.00024            # ITS-90 → IPTS-68 (Saunders 1990; as in gsw.O2sol_SP_pt)

# Garcia & Gordon 1992 Table 1, "Benson & Krause" column, µmol/kg (seen in public code copies; reproduces gsw).
_A = (5.80871, 3.20291, 4.17887, 5.10006, -9.86643e-2, 3.80369)
_B = (-7.01577e-3, -7.70028e-3, -1.13864e-2, -9.51519e-3)
_C0 = -2.75915e-7

# UNESCO 1983 / Millero & Poisson 1981 one-atmosphere density, kg/m³ (pure water: Bigg 1967, SMOW).
_RHO_W = (999.842594, 6.793952e-2, -9.095290e-3, 1.001685e-4, -1.120083e-6, 6.536332e-9)
_RHO_A = (8.24493e-1, -4.0899e-3, 7.6438e-5, -8.2467e-7, 5.3875e-9)
_RHO_B = (-5.72466e-3, 1.0227e-4, -1.6546e-6)
_RHO_C = 4.8314e-4

FIT_TEMPERATURE_C = (0.0, 40.0)   # Benson & Krause data range (Garcia & Gordon 1992)
FIT_SALINITY = (0.0, 40.0)


def _poly(coeffs: tuple[float, ...], x: float) -> float:
    return sum(c * x**i for i, c in enumerate(coeffs))


def o2_solubility_umol_kg(temp_c: float, salinity: float) -> float:
    """O2 in water at equilibrium with water-saturated air at 1 atm, µmol/kg (Garcia & Gordon 1992, B&K fit).

    ln C = A0 + A1·Ts + … + A5·Ts⁵ + S·(B0 + B1·Ts + B2·Ts² + B3·Ts³) + C0·S²,
    Ts = ln[(298.15 − t68)/(273.15 + t68)]. 284.6 µmol/kg at 20 °C in fresh water.
    """
    t68 = temp_c * T68_PER_T90
    ts = math.log((298.15 - t68) / (273.15 + t68))
    return math.exp(_poly(_A, ts) + salinity * _poly(_B, ts) + _C0 * salinity * salinity)


def water_density_kg_l(temp_c: float, salinity: float) -> float:
    """Density of fresh or sea water at 1 atm, kg/L (UNESCO 1983 one-atmosphere equation, t68).

    ρ = ρw(t) + A(t)·S + B(t)·S^1.5 + C·S². 0.99821 at 20 °C fresh, 1.0248 at 20 °C and S 35.
    """
    t = temp_c * T68_PER_T90
    s = max(salinity, 0.0)
    rho = _poly(_RHO_W, t) + _poly(_RHO_A, t) * s + _poly(_RHO_B, t) * s**1.5 + _RHO_C * s * s
    return float(rho) / 1000.0


def pressure_factor(temp_c: float, barometric_mmhg: float) -> float:
    """Gas solubility at barometric pressure PB relative to 1 atm: (PB − pw)/(760 − pw), pw at the water temperature.

    Benson & Krause 1984 non-standard-pressure correction without the θ term (< 0.1 %). pw of pure water
    (IAPWS-IF97); salt lowers it by ~2 % at S 35 (Green & Carritt 1967), < 0.1 % of the result.
    """
    pw = water_vapour_pressure_mmhg(temp_c)
    return (barometric_mmhg - pw) / (ATM_MMHG - pw)


def saturated_o2_mg_l(temp_c: float, salinity: float, barometric_mmhg: float = ATM_MMHG) -> float:
    """O2 content of air-saturated water at barometric pressure PB, mg/L.

    µmol/kg × density (kg/L) × 31.9988 mg/mmol × (PB − pw)/(760 − pw). 9.09 mg/L at 20 °C fresh at sea level.
    """
    umol_l = o2_solubility_umol_kg(temp_c, salinity) * water_density_kg_l(temp_c, salinity)
    return umol_l * O2_MG_PER_UMOL * pressure_factor(temp_c, barometric_mmhg)


def mg_to_ml_o2(mg: float) -> float:
    """mg O2 → mL O2 (STPD), 1.429 mg/mL (Garcia & Gordon 1992 molar volume)."""
    return mg / MG_PER_ML_O2


def air_po2_mmhg(temp_c: float, barometric_mmhg: float) -> float:
    """PO2 of water in equilibrium with moist air: FO2·(PB − pw), mmHg (155.5 mmHg at 20 °C, sea level)."""
    return AIR_O2_FRACTION * (barometric_mmhg - water_vapour_pressure_mmhg(temp_c))


@dataclass(frozen=True)
class WaterO2:
    """The supply water's oxygen. Contents in mg/L and mL(STPD)/L; pressures in mmHg; ``alpha`` is Henry's
    coefficient of the water (mL O2 per L per mmHg), so content = alpha × PO2."""

    temp_c: float
    salinity: float
    barometric_mmhg: float
    water_vapour_mmhg: float
    density_kg_l: float
    solubility_umol_kg: float
    saturated_mg_l: float
    saturation_percent: float
    o2_mg_l: float
    o2_ml_l: float
    po2_mmhg: float
    alpha_ml_l_mmhg: float
    measured: bool


def water_o2(temp_c: float, salinity: float, barometric_mmhg: float, *, saturation_percent: float = 100.0,
             measured_o2_mg_l: float | None = None) -> WaterO2:
    """The supply water's O2 from its saturation (% of air saturation at local pressure) or a measured mg/L.

    A measured content wins; its saturation is then measured/saturated. PO2 = saturation × FO2 × (PB − pw)
    (Henry's law: content ∝ partial pressure, not the O2 fraction).
    """
    sat_mg_l = saturated_o2_mg_l(temp_c, salinity, barometric_mmhg)
    if measured_o2_mg_l is not None:
        o2 = measured_o2_mg_l
        saturation_percent = 100.0 * o2 / sat_mg_l
    else:
        o2 = sat_mg_l * saturation_percent / 100.0
    po2_air = air_po2_mmhg(temp_c, barometric_mmhg)
    return WaterO2(temp_c, salinity, barometric_mmhg, water_vapour_pressure_mmhg(temp_c),
                   water_density_kg_l(temp_c, salinity), o2_solubility_umol_kg(temp_c, salinity), sat_mg_l,
                   saturation_percent, o2, mg_to_ml_o2(o2), po2_air * saturation_percent / 100.0,
                   mg_to_ml_o2(sat_mg_l) / po2_air, measured_o2_mg_l is not None)

