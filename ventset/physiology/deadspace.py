"""Dead space: anatomical (allometric, intubated), tube, and Bohr / Enghoff fractions."""

from __future__ import annotations

import math


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
