"""Gas laws: water vapour, barometric pressure, alveolar ventilation and alveolar gas equations."""

from __future__ import annotations

import math

PA_PER_MMHG = 133.322387415
STD_ATM_PA = 101325.0
KELVIN = 273.15

# IAPWS-IF97 region 4 (saturation line) coefficients, Wagner et al. 2000, J Eng Gas Turbines Power 122:150.
_N = (
    0.11670521452767e4, -0.72421316598502e6, -0.17073846940092e2, 0.12020824702470e5,
    -0.32325550322333e7, 0.14915108613530e2, -0.48232657361591e4, 0.40511340542057e6,
    -0.23855557567849, 0.65017534844798e3,
)


def water_vapour_pressure_mmhg(temp_c: float) -> float:
    """Saturated water vapour pressure over liquid water, mmHg (IAPWS-IF97 saturation equation).

    47.12 mmHg at 37 °C, 51.11 mmHg at 38.5 °C. Valid 0-370 °C.
    """
    t = temp_c + KELVIN
    n = _N
    theta = t + n[8] / (t - n[9])
    a = theta * theta + n[0] * theta + n[1]
    b = n[2] * theta * theta + n[3] * theta + n[4]
    c = n[5] * theta * theta + n[6] * theta + n[7]
    p_mpa = (2.0 * c / (-b + math.sqrt(b * b - 4.0 * a * c))) ** 4
    return p_mpa * 1e6 / PA_PER_MMHG


def barometric_pressure_mmhg(altitude_m: float) -> float:
    """Barometric pressure at geometric altitude (m) in the ICAO/ISA troposphere, mmHg.

    ISA (ICAO Doc 7488): geopotential H = r0·h/(r0 + h); P = 101325·(1 − L·H/T0)^(g0·M/(R·L)).
    Valid below 11 km.
    """
    r0 = 6356766.0
    h_geo = r0 * altitude_m / (r0 + altitude_m)
    exponent = 9.80665 * 0.0289644 / (8.31432 * 0.0065)
    p_pa = STD_ATM_PA * (1.0 - 0.0065 * h_geo / 288.15) ** exponent
    return p_pa / PA_PER_MMHG


def alveolar_constant_mmhg(body_temp_c: float) -> float:
    """K(T) = 760·(273.15+T)/273.15 so that VA(BTPS) = VCO2(STPD)·K/PaCO2; 862.9 at 37 °C.

    The classic "0.863" constant (L/min, mL/min, mmHg); barometric pressure cancels.
    """
    return 760.0 * (KELVIN + body_temp_c) / KELVIN


def alveolar_ventilation_ml_min(vco2_ml_min: float, paco2_mmhg: float, body_temp_c: float) -> float:
    """Alveolar ventilation (mL/min BTPS) needed to hold PaCO2 at a CO2 output in mL/min STPD.

    VA = VCO2·K(T)/PaCO2 (alveolar ventilation equation).
    """
    return vco2_ml_min * alveolar_constant_mmhg(body_temp_c) / paco2_mmhg


def paco2_mmhg_from_va(vco2_ml_min: float, va_ml_min: float, body_temp_c: float) -> float:
    """PaCO2 (mmHg) reached by alveolar ventilation va_ml_min (BTPS): inverse of the above."""
    return vco2_ml_min * alveolar_constant_mmhg(body_temp_c) / va_ml_min


def alveolar_po2_mmhg(fio2: float, pb_mmhg: float, ph2o_mmhg: float, paco2_mmhg: float, rq: float) -> float:
    """Alveolar PO2 by the full alveolar gas equation (Riley & Cournand form), mmHg.

    PAO2 = FiO2·(PB − PH2O) − PaCO2·[FiO2 + (1 − FiO2)/R].
    """
    return fio2 * (pb_mmhg - ph2o_mmhg) - paco2_mmhg * (fio2 + (1.0 - fio2) / rq)


def btps_to_stpd_factor(pb_mmhg: float, body_temp_c: float) -> float:
    """Volume factor BTPS → STPD: (PB − PH2O)/760 · 273.15/(273.15 + T)."""
    ph2o = water_vapour_pressure_mmhg(body_temp_c)
    return (pb_mmhg - ph2o) / 760.0 * KELVIN / (KELVIN + body_temp_c)
