"""Dead space: anatomical (allometric, intubated), tube, and Bohr / Enghoff fractions."""

from __future__ import annotations

import math
from typing import Any

Num = Any  # a float, or a numpy array of floats (the plot curves evaluate a whole axis at once)


def anatomical_dead_space_ml(mass_kg: float, coefficient_ml: float, exponent: float) -> float:
    """Anatomical dead space of the unintubated airway, coefficient·M^exponent mL (Stahl 1967: 2.76·M^0.96)."""
    return coefficient_ml * mass_kg**exponent


def tube_volume_ml(internal_diameter_mm: float, length_cm: float) -> float:
    """Internal volume of a tube segment, π·(ID/2)²·L, in mL (ID in mm, length in cm)."""
    radius_cm = internal_diameter_mm / 20.0
    return math.pi * radius_cm * radius_cm * length_cm


def bohr_vd_vt(alveolar_pco2: float, mixed_expired_pco2: float) -> float:
    """Bohr dead-space fraction (PACO2 − PĒCO2)/PACO2; any one pressure unit (Bohr 1891)."""
    return (alveolar_pco2 - mixed_expired_pco2) / alveolar_pco2


def enghoff_vd_vt(paco2: float, mixed_expired_pco2: float) -> float:
    """Enghoff dead-space fraction (PaCO2 − PĒCO2)/PaCO2; any one pressure unit (Enghoff 1938)."""
    return (paco2 - mixed_expired_pco2) / paco2


def alveolar_dead_space_fraction_from_gradient(paco2: float, etco2: float) -> float:
    """Alveolar dead-space fraction (PaCO2 − PETCO2)/PaCO2 (Mosing et al. 2018)."""
    return (paco2 - etco2) / paco2


def exchange_per_breath_ml(vt_ml, vd_fixed_ml: float, alveolar_fraction: float):
    """Volume of one breath that exchanges gas, VT·(1 − f_alv) − VD_fixed, mL (float or numpy array).

    VD_fixed is the airway dead space that does not grow with the breath (anatomical, apparatus, tube);
    f_alv the alveolar dead-space fraction of VT (unperfused alveoli).
    """
    return vt_ml * (1.0 - alveolar_fraction) - vd_fixed_ml


def vt_for_alveolar_ml(va_ml_min: Num, rate_per_min: Num, vd_fixed_ml: Num, alveolar_fraction: float) -> Num:
    """Tidal volume (mL) that gives alveolar ventilation VA at rate f: (VA/f + VD_fixed)/(1 − f_alv)."""
    return (va_ml_min / rate_per_min + vd_fixed_ml) / (1.0 - alveolar_fraction)


def rate_for_alveolar_per_min(va_ml_min: float, vt_ml: float, vd_fixed_ml: float, alveolar_fraction: float) -> float:
    """Rate (/min) that gives alveolar ventilation VA at tidal volume VT; inf when the breath is all dead space."""
    eff = exchange_per_breath_ml(vt_ml, vd_fixed_ml, alveolar_fraction)
    return va_ml_min / eff if eff > 0 else math.inf
