"""Stage 3: dead space (anatomical after intubation, apparatus, tube, alveolar) and respiratory mechanics."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ventset.errors import InputError
from ventset.library import Library, Species
from ventset.model import ApparatusPart, Assumption, Circuit, Patient, Targets
from ventset.physiology import deadspace, mechanics
from ventset.stages.inputs import Inputs
from ventset.stages.trail import note
from ventset.units import fmt


@dataclass(frozen=True)
class AirwayDeadSpace:
    """The dead space that does not grow with the breath (mL) and the alveolar fraction of VT."""

    anatomical_ml: float
    apparatus_ml: float
    tube_ml: float
    alveolar_fraction: float
    parts: tuple[ApparatusPart, ...]
    assumptions: tuple[Assumption, ...]
    usual_tube: bool = False  # no tube entered: the usual tube for the mass was counted

    @property
    def fixed_ml(self) -> float:
        """Anatomical (intubated) + apparatus + tube beyond the incisors."""
        return self.anatomical_ml + self.apparatus_ml + self.tube_ml


def _anatomical(sp: Species, lean: float) -> tuple[float, Assumption]:
    """Unintubated airway dead space (mL): the species' measured value per kg, else coefficient·M^exponent."""
    if sp.airway_dead_space_ml_kg is not None:
        per_kg = sp.airway_dead_space_ml_kg
        full = per_kg.value * lean
        return full, note("anatomical_dead_space", "Airway dead space (unintubated)", full, "mL",
                          f"{fmt(per_kg.value)} mL/kg: {per_kg.source}")
    full = deadspace.anatomical_dead_space_ml(lean, sp.anatomical_coefficient_ml, sp.anatomical_exponent)
    return full, note("anatomical_dead_space", "Anatomical dead space (unintubated)", full, "mL",
                      f"{sp.anatomical_coefficient_ml}·M^{sp.anatomical_exponent}: {sp.anatomical_source}")


def usual_tube(mass_kg: Any, lib: Library) -> tuple[Any, Any]:
    """The usual tube for a patient of this mass (kg, a float or an array): internal diameter (mm) and length
    beyond the incisors (cm)."""
    d = lib.planning
    return (d["usual_tube_id_mm_at_1kg"].value * mass_kg ** d["usual_tube_id_exponent"].value,
            d["usual_tube_beyond_incisors_cm_at_1kg"].value * mass_kg ** d["usual_tube_beyond_incisors_exponent"].value)


def _tube(c: Circuit, mass_kg: float, lib: Library) -> tuple[float, bool, tuple[Assumption, ...]]:
    """Tube volume beyond the incisors (mL), whether it is the usual tube (none entered), and its assumptions."""
    if (c.tube_id_mm is None) != (c.tube_length_cm is None):
        missing = "tube-length" if c.tube_length_cm is None else "tube-id"
        raise InputError(missing, "", "enter both tube internal diameter and length beyond the incisors, or neither")
    if c.tube_id_mm is not None and c.tube_length_cm is not None:
        return deadspace.tube_volume_ml(c.tube_id_mm, c.tube_length_cm), False, ()
    tid, length = usual_tube(mass_kg, lib)
    d = lib.planning
    return deadspace.tube_volume_ml(tid, length), True, (
        note("usual_tube_id", "Tube internal diameter (none entered: the usual for the mass)", tid, "mm",
             d["usual_tube_id_exponent"].source),
        note("usual_tube_length", "Tube beyond the incisors (none entered: the usual)", length, "cm",
             d["usual_tube_beyond_incisors_exponent"].source))


def dead_space_stage(p: Patient, c: Circuit, inp: Inputs, lib: Library) -> AirwayDeadSpace:
    """Airway dead space × the share kept after intubation, tube π(ID/2)²L (the usual one if none is entered),
    parts, and the alveolar fraction of VT."""
    sp, lean = inp.species, inp.lean_mass_kg
    full, first = _anatomical(sp, lean)
    notes = [first, note("intubated_share", "Share of airway dead space kept after intubation", sp.intubated_fraction,
                         "", sp.anatomical_source)]
    tube, usual, tube_notes = _tube(c, inp.mass_kg, lib)
    notes += tube_notes
    for part in c.parts:
        if not math.isfinite(part.volume_ml) or part.volume_ml < 0:
            raise InputError("apparatus", part.volume_ml, "volume must be 0 mL or more",
                             label=f"Apparatus '{part.name}'")
    f_alv = (p.alveolar_dead_space_fraction if p.alveolar_dead_space_fraction is not None
             else sp.alveolar_dead_space_fraction.value)
    if p.alveolar_dead_space_fraction is None:
        notes.append(note("alveolar_fraction", "Alveolar dead-space fraction", f_alv, "of VT",
                          sp.alveolar_dead_space_fraction.source))
    return AirwayDeadSpace(full * sp.intubated_fraction, sum(x.volume_ml for x in c.parts), tube, f_alv, c.parts,
                           tuple(notes), usual)


@dataclass(frozen=True)
class Mechanics:
    """Single-compartment mechanics and the pressures the plan must respect (cmH2O, mL/cmH2O, cmH2O/(L/s))."""

    compliance_ml_cmh2o: float
    resistance_cmh2o_l_s: float
    peep_cmh2o: float
    pressure_limit_cmh2o: float
    assumptions: tuple[Assumption, ...]
    # Limits a situation adds (ventset.stages.situation): plateau pressure and driving pressure (cmH2O).
    plateau_limit_cmh2o: float = math.inf
    driving_limit_cmh2o: float = math.inf

    @property
    def time_constant_s(self) -> float:
        return mechanics.time_constant_s(self.resistance_cmh2o_l_s, self.compliance_ml_cmh2o)

    @property
    def vt_pressure_max_ml(self) -> float:
        """Largest tidal volume whose plateau stays at the limits: min(limit − PEEP, plateau limit − PEEP,
        driving limit)·C."""
        rise = min(self.pressure_limit_cmh2o, self.plateau_limit_cmh2o) - self.peep_cmh2o
        return min(rise, self.driving_limit_cmh2o) * self.compliance_ml_cmh2o


def mechanics_stage(p: Patient, t: Targets, inp: Inputs) -> Mechanics:
    """Compliance (per kg lean mass), resistance (coefficient·M^exponent), PEEP and the pressure limit."""
    sp, lean = inp.species, inp.lean_mass_kg
    notes: list[Assumption] = []
    compliance = p.compliance_ml_cmh2o if p.compliance_ml_cmh2o is not None else sp.compliance_ml_cmh2o_kg.value * lean
    if p.compliance_ml_cmh2o is None:
        notes.append(note("compliance_per_kg", "Respiratory-system compliance per kg", sp.compliance_ml_cmh2o_kg.value,
                          "mL/cmH2O/kg", sp.compliance_ml_cmh2o_kg.source))
    resistance = (p.resistance_cmh2o_l_s if p.resistance_cmh2o_l_s is not None
                  else sp.resistance_coefficient * lean**sp.resistance_exponent)
    if p.resistance_cmh2o_l_s is None:
        notes.append(note("resistance", "Airway resistance", resistance, "cmH2O/(L/s)",
                          f"{sp.resistance_coefficient}·M^{sp.resistance_exponent}: {sp.resistance_source}"))
    peep = t.peep_cmh2o if t.peep_cmh2o is not None else sp.peep_cmh2o.value
    if t.peep_cmh2o is None:
        notes.append(note("peep", "PEEP", peep, "cmH2O", sp.peep_cmh2o.source))
    limit = t.pressure_limit_cmh2o if t.pressure_limit_cmh2o is not None else sp.pip_limit_cmh2o.value
    if t.pressure_limit_cmh2o is None:
        notes.append(note("pressure_limit", "Pressure limit", limit, "cmH2O", sp.pip_limit_cmh2o.source))
    if limit <= peep:
        raise InputError("pressure-limit", f"{fmt(limit)} cmH2O", f"must be above PEEP ({fmt(peep)} cmH2O)")
    if t.ti_s is not None and t.ie_expiratory_part is not None:
        raise InputError("ti", t.ti_s, "give an inspiratory time or an I:E, not both")
    return Mechanics(compliance, resistance, peep, limit, tuple(notes))
