"""Stage 2: metabolism (Kleiber-type allometry, Q10, anaesthesia factor, Weir) and the CO2 target."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ventset.errors import InputError
from ventset.library import Library, Sourced, Species
from ventset.model import AGES, STATES, Assumption, Metabolism, Patient, Targets
from ventset.physiology import gas, metabolism
from ventset.stages.inputs import Inputs
from ventset.stages.trail import note
from ventset.units import check_range, fmt


@dataclass(frozen=True)
class Growth:
    """The age the plan used and its factor on the adult allometric rate."""

    age: str
    factor: float
    source: str
    estimated: bool  # a group default, not a value measured in the species


def _age_limits(sp: Species) -> tuple[tuple[str, Sourced | None], ...]:
    return (("neonate", sp.neonate_below_kg), ("juvenile", sp.juvenile_below_kg))


def age_by_mass(sp: Species, mass_kg: float) -> str:
    """'neonate', 'juvenile' or 'adult' by the species' mass thresholds."""
    return next((a for a, lim in _age_limits(sp) if lim is not None and mass_kg < lim.value), "adult")


def age_codes(sp: Species, mass_kg: Any) -> tuple[tuple[str, ...], Any]:
    """``age_by_mass`` for an array of masses: the ages and, per mass, the index of its age."""
    import numpy as np

    limits = [(a, lim.value) for a, lim in _age_limits(sp) if lim is not None]
    m = np.asarray(mass_kg, dtype=float)
    if not limits:
        return ("adult",), np.zeros(m.shape, dtype=int)
    return (*(a for a, _ in limits), "adult"), np.select([m < lim for _, lim in limits], list(range(len(limits))),
                                                         len(limits))


def age_stage(p: Patient, inp: Inputs, lib: Library) -> tuple[Growth, tuple[Assumption, ...]]:
    """The patient's age (entered, or by the species' mass thresholds) and its metabolic factor."""
    sp = inp.species
    notes: list[Assumption] = []
    age = p.age
    if age is None and (age := sp.age_named(p.species, inp.mass_kg)) is not None:
        notes.append(note("age", "Age", age, "", f"by the name entered: '{p.species.strip()}'"))
    if age is None:
        age = age_by_mass(sp, inp.mass_kg)
        if age != "adult":
            lim = dict(_age_limits(sp))[age]
            assert lim is not None
            notes.append(note("age", "Age", age, "", f"by body mass: under {fmt(lim.value)} kg ({lim.source})"))
    if age not in AGES:
        raise InputError("age", age, f"must be one of {', '.join(AGES)}")
    if age == "adult":
        return Growth("adult", 1.0, "", False), tuple(notes)
    own = sp.neonate_metabolic_factor if age == "neonate" else sp.juvenile_metabolic_factor
    if own is not None:
        growth = Growth(age, own.value, own.source, False)
    elif sp.group.key == "placental":
        d = lib.planning[f"placental_{age}_metabolic_factor"]
        growth = Growth(age, d.value, d.source, True)
    else:
        raise InputError("age", age, f"no published metabolic level for a {age} {sp.group.label.lower()}; plan it as "
                                     "an adult and enter a measured metabolic rate if known")
    notes.append(note("age_factor", f"Metabolic level of a {age}", growth.factor, "× adult", growth.source))
    return growth, tuple(notes)


def state_factor(p: Patient, inp: Inputs, lib: Library) -> tuple[float, tuple[Assumption, ...]]:
    """An ectotherm's physiological state (fasted, recently fed, gravid) as a factor on its standard rate."""
    if p.state not in STATES:
        raise InputError("state", p.state, f"must be one of {', '.join(STATES)}")
    if p.state == "fasted":
        return 1.0, ()
    if not inp.species.group.ectotherm:
        raise InputError("state", p.state, "applies to reptiles; for a pregnant mammal choose the pregnancy "
                                           "situation")
    d = lib.planning[f"{p.state}_metabolic_factor"]
    return d.value, (note("state_factor", f"Metabolic rate when {p.state}", d.value, "× fasted", d.source),)


def metabolism_stage(p: Patient, inp: Inputs, lib: Library) -> tuple[Metabolism, Growth, tuple[Assumption, ...]]:
    """Metabolic rate (W), VO2 and VCO2 (mL/min STPD): entered, or K·M^b × Q10 × anaesthesia × age × state."""
    sp, g = inp.species, inp.species.group
    growth, notes_age = age_stage(p, inp, lib)
    state, notes_state = state_factor(p, inp, lib)
    notes: list[Assumption] = [*notes_age, *notes_state]
    t_ref = g.reference_temperature_c.value if g.ectotherm else sp.body_temperature_c.start
    rq = p.rq if p.rq is not None else sp.rq.value
    if p.rq is None:
        notes.append(note("rq", "Respiratory quotient", rq, "", sp.rq.source))
    basal_kcal = metabolism.allometric_rate_kcal_day(inp.lean_mass_kg, g.k_kcal_day.value, g.exponent.value)
    allometric_w = (metabolism.kcal_day_to_w(basal_kcal) * metabolism.q10_factor(inp.body_temp_c, t_ref, g.q10.value)
                    * sp.anaesthesia_factor.value * growth.factor * state)
    if p.metabolic_rate_w is None:
        power_w = allometric_w
        notes += [
            note("metabolic_constant", f"Metabolic constant K ({g.label})", g.k_kcal_day.value, "kcal/day/kg^b",
                 g.k_kcal_day.source),
            note("metabolic_exponent", "Metabolic exponent b", g.exponent.value, "", g.exponent.source),
            note("reference_temperature", "Temperature the rate refers to", t_ref, "°C",
                 g.reference_temperature_c.source if g.ectotherm else sp.body_temperature_c.source),
            note("q10", "Q10", g.q10.value, "", g.q10.source),
            note("anaesthesia_factor", "Metabolic level under anaesthesia (× basal)", sp.anaesthesia_factor.value,
                 "", sp.anaesthesia_factor.source),
        ]
    else:
        power_w = p.metabolic_rate_w
    if bool((power_w <= 0) if isinstance(power_w, int | float) else (power_w <= 0).any()):
        raise InputError("metabolic-rate", power_w, "must be above 0 W")
    vo2 = metabolism.vo2_ml_min(power_w, rq)
    return (Metabolism(power_w, allometric_w, vo2, rq * vo2, rq, p.metabolic_rate_w is not None), growth,
            tuple(notes))


@dataclass(frozen=True)
class Co2Target:
    """The PaCO2 to reach and the PaCO2 − EtCO2 gradient (mmHg)."""

    paco2_mmhg: float
    gradient_mmhg: float
    assumptions: tuple[Assumption, ...]


def co2_target_stage(t: Targets, inp: Inputs) -> Co2Target:
    """Target PaCO2 (entered, from a target EtCO2 + gradient, or the species start) and the gradient."""
    sp = inp.species
    notes: list[Assumption] = []
    gradient = t.gradient_mmhg if t.gradient_mmhg is not None else sp.gradient_mmhg.value
    if t.gradient_mmhg is None:
        notes.append(note("gradient", "PaCO2 − EtCO2 gradient", gradient, "mmHg", sp.gradient_mmhg.source))
    if t.paco2_mmhg is not None and t.etco2_mmhg is not None:
        raise InputError("target-etco2", t.etco2_mmhg, "give a target PaCO2 or a target EtCO2, not both")
    if t.paco2_mmhg is not None:
        target = t.paco2_mmhg
    elif t.etco2_mmhg is not None:
        target = check_range(t.etco2_mmhg + gradient, 10.0, 120.0, "target-etco2", "mmHg",
                             label="Target EtCO2 + gradient")
    else:
        target = sp.paco2_target_mmhg.start
        notes.append(note("target_paco2", "Target PaCO2", target, "mmHg", sp.paco2_target_mmhg.source))
    notes.append(note("alveolar_constant", "Alveolar ventilation constant K(T)",
                      gas.alveolar_constant_mmhg(inp.body_temp_c) / 1000, "",
                      f"VA (L/min) = VCO2 (mL/min) × K / PaCO2 (mmHg) at {fmt(inp.body_temp_c)} °C; 0.863 at 37 °C "
                      "(alveolar ventilation equation, derived)"))
    return Co2Target(target, gradient, tuple(notes))
