"""Resting O2 consumption of fish and aquatic amphibians by body mass and water temperature.

Every group is a reference point (a resting rate at a reference mass and temperature, with its source) moved to
the patient by the mass exponent and Q10:

    VO2 (mg/h) = R_ref (mg kg⁻¹ h⁻¹) · M_ref · (M/M_ref)^b · Q10^((T − T_ref)/10)

Groups without their own measurement take the reference point from Clarke & Johnston 1999 (J Anim Ecol
68:893), whose Arrhenius line for the resting rate of a 50-g teleost (69 species) is ln Rb = 15.7 − 5.02·1000/T,
Rb in mmol O2/h, T in K. The plan's design VO2 is the resting rate × an anaesthesia factor × a demand factor
(handling stress, recovery; routine ≈ 1.5–2 × standard, common practice).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ventset.aquatic.water import O2_MG_PER_UMOL, mg_to_ml_o2
from ventset.physiology.gas import KELVIN
from ventset.physiology.metabolism import q10_factor

CJ_REFERENCE_MASS_G = 50.0   # Clarke & Johnston 1999: the Arrhenius line is for a 50-g fish
CJ_ARRHENIUS_A = 15.7        # Clarke & Johnston 1999, ln Rb = 15.7 − 5.02·(1000/T)
CJ_ARRHENIUS_B_K = 5020.0
CJ_POOLED_EXPONENT = 0.80    # Clarke & Johnston 1999 general equation ln Rb = 0.80 ln M − 5.43
CLARKE_JOHNSTON = "clarke_johnston_1999"


def clarke_johnston_rb_mmol_h(mass_g: float, temp_c: float, exponent: float = CJ_POOLED_EXPONENT) -> float:
    """Resting O2 consumption of a teleost, mmol/h: the 50-g Arrhenius line × (M/50 g)^b (Clarke & Johnston 1999).

    ln Rb(50 g) = 15.7 − 5020/T (T in K). 0.241 mmol/h (154 mg kg⁻¹ h⁻¹) for a 50-g fish at 20 °C.
    """
    rb_50 = math.exp(CJ_ARRHENIUS_A - CJ_ARRHENIUS_B_K / (temp_c + KELVIN))
    return rb_50 * float((mass_g / CJ_REFERENCE_MASS_G) ** exponent)


def clarke_johnston_mg_kg_h(mass_kg: float, temp_c: float, exponent: float = CJ_POOLED_EXPONENT) -> float:
    """The same line as a mass-specific rate, mg O2 kg⁻¹ h⁻¹ (1 mmol O2 = 31.9988 mg)."""
    return clarke_johnston_rb_mmol_h(mass_kg * 1000.0, temp_c, exponent) * O2_MG_PER_UMOL * 1000.0 / mass_kg


@dataclass(frozen=True)
class Reference:
    """A group's resting-rate reference point: mg kg⁻¹ h⁻¹ at reference_mass_kg and reference_temperature_c.

    ``model`` is "clarke_johnston_1999" when the rate is read off that line at the reference mass and
    temperature (then ``mg_kg_h`` is that value), else "" for a measurement.
    """

    mg_kg_h: float
    reference_mass_kg: float
    reference_temperature_c: float
    source: str
    model: str = ""


def reference_from_clarke_johnston(mass_kg: float, temp_c: float, source: str) -> Reference:
    """A reference point read off the Clarke & Johnston 1999 50-g line (with their pooled exponent to mass_kg)."""
    return Reference(clarke_johnston_mg_kg_h(mass_kg, temp_c), mass_kg, temp_c, source, CLARKE_JOHNSTON)


def resting_vo2_mg_h(mass_kg: float, temp_c: float, ref: Reference, exponent: float, q10: float) -> float:
    """Resting VO2 (mg/h) = R_ref·M_ref·(M/M_ref)^b·Q10^((T − T_ref)/10) (allometry with the Q10 law)."""
    whole_ref_mg_h = ref.mg_kg_h * ref.reference_mass_kg
    return whole_ref_mg_h * float((mass_kg / ref.reference_mass_kg) ** exponent) * q10_factor(
        temp_c, ref.reference_temperature_c, q10)


@dataclass(frozen=True)
class Metabolism:
    """The fish's O2 need. ``vo2_*`` is the design value the flow is planned for (resting × factors)."""

    resting_mg_h: float
    resting_mg_kg_h: float
    anaesthesia_factor: float
    demand_factor: float
    vo2_mg_h: float
    vo2_mg_kg_h: float
    vo2_mg_min: float
    vo2_ml_min: float
    entered: bool
    teleost_line_mg_kg_h: float   # Clarke & Johnston 1999 all-teleost line at this mass and temperature


def metabolism(mass_kg: float, temp_c: float, ref: Reference, exponent: float, q10: float, *,
               anaesthesia_factor: float, demand_factor: float, entered_mg_kg_h: float | None = None) -> Metabolism:
    """Resting VO2 from the group (or the entered resting rate), then × anaesthesia and demand factors."""
    if entered_mg_kg_h is not None:
        resting = entered_mg_kg_h * mass_kg
    else:
        resting = resting_vo2_mg_h(mass_kg, temp_c, ref, exponent, q10)
    vo2 = resting * anaesthesia_factor * demand_factor
    return Metabolism(resting, resting / mass_kg, anaesthesia_factor, demand_factor, vo2, vo2 / mass_kg, vo2 / 60.0,
                      mg_to_ml_o2(vo2 / 60.0), entered_mg_kg_h is not None,
                      clarke_johnston_mg_kg_h(mass_kg, temp_c))
