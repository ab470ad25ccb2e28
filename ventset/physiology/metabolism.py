"""Metabolic rate by allometry, temperature correction, and O2/CO2 from energy (Weir)."""

from __future__ import annotations

KCAL_DAY_PER_W = 86400.0 / 4184.0  # 1 W = 20.65 kcal/day (thermochemical kcal, 4184 J)
WEIR_O2_KCAL_PER_L = 3.941  # Weir 1949, J Physiol 109:1-9
WEIR_CO2_KCAL_PER_L = 1.106  # Weir 1949
KJ_PER_KCAL = 4.184


def allometric_rate_kcal_day(mass_kg: float, k_kcal_day: float, exponent: float) -> float:
    """Basal/minimum metabolic rate K·M^b in kcal/day, M in kg (Kleiber 1947; Sedgwick 1993)."""
    return k_kcal_day * mass_kg**exponent


def q10_factor(body_temp_c: float, reference_temp_c: float, q10: float) -> float:
    """Factor Q10^((T - T0)/10) that moves a rate measured at T0 to body temperature T (°C)."""
    return q10 ** ((body_temp_c - reference_temp_c) / 10.0)


def kcal_day_to_w(kcal_day: float) -> float:
    """Convert kcal/day (thermochemical) to watts."""
    return kcal_day / KCAL_DAY_PER_W


def o2_energy_kj_per_l(rq: float) -> float:
    """Energy released per litre O2 (STPD) at respiratory quotient ``rq``, kJ/L (Weir 1949).

    kcal/L = 3.941 + 1.106·RQ; 20.19 kJ/L at RQ 0.8.
    """
    return (WEIR_O2_KCAL_PER_L + WEIR_CO2_KCAL_PER_L * rq) * KJ_PER_KCAL


def vo2_ml_min(power_w: float, rq: float) -> float:
    """O2 consumption (mL/min STPD) for a metabolic rate in W: VO2 = P·60 / e(RQ) (Weir 1949)."""
    return power_w * 60.0 / o2_energy_kj_per_l(rq)


def power_w_from_vo2(vo2_ml_min_: float, rq: float) -> float:
    """Metabolic rate (W) from VO2 in mL/min STPD (inverse of vo2_ml_min)."""
    return vo2_ml_min_ * o2_energy_kj_per_l(rq) / 60.0


def weir_kcal_day(vo2_ml_min_: float, vco2_ml_min_: float) -> float:
    """Energy expenditure kcal/day = 1.44·(3.941·VO2 + 1.106·VCO2), gases in mL/min (Weir 1949)."""
    return 1.44 * (WEIR_O2_KCAL_PER_L * vo2_ml_min_ + WEIR_CO2_KCAL_PER_L * vco2_ml_min_)
