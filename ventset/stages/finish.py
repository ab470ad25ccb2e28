"""Stages 6-8: choose the settings, evaluate them, add oxygen and fresh gas, assemble the Plan."""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

from ventset.elementwise import is_scalar, larger, smaller
from ventset.errors import InputError
from ventset.evaluate import MAX_TI_FRACTION, Evaluation, Subject, evaluate
from ventset.library import Library
from ventset.model import (
    Assumption,
    DeadSpace,
    Limits,
    Oxygen,
    Plan,
    Pressures,
    Resolved,
    Strategy,
    Ventilation,
)
from ventset.physiology import mechanics
from ventset.solver import Choice, choose_settings
from ventset.stages.basis import Basis
from ventset.stages.circuit import fresh_gas_stage
from ventset.stages.timing import check_timing, timing_assumptions
from ventset.stages.trail import note
from ventset.units import fmt

# A miss of the target PaCO2 smaller than this (mmHg) counts as reached: it is below what a capnograph or
# blood-gas analyser resolves (common practice: both display whole mmHg, ±1 mmHg measurement error).
TARGET_TOLERANCE_MMHG = 1.0
# A pause caps the rate just below the rate at which Ti would reach MAX_TI_FRACTION of the cycle (derived: the
# margin keeps the chosen rate off the boundary that check_timing refuses).
PAUSE_RATE_MARGIN = 0.99


def _box(basis: Basis, s: Strategy) -> tuple[float, float, float, float, tuple[Assumption, ...]]:
    """The usual tidal-volume (mL) and rate ranges, widened to include what the clinician entered."""
    sp, lean = basis.inputs.species, basis.inputs.lean_mass_kg
    vt_span, rate_span = sp.tidal_volume_ml_kg, sp.rate_span_for(lean)
    notes: tuple[Assumption, ...] = (
        note("vt_range", "Tidal volume range", f"{fmt(vt_span.min)}–{fmt(vt_span.max)}", "mL/kg", vt_span.source),
        note("rate_range", "Rate range", f"{fmt(rate_span.min)}–{fmt(rate_span.max)}" if is_scalar(rate_span.min)
             else "scaled with each mass", "/min", rate_span.source))
    vt_lo, vt_hi, rate_lo, rate_hi = vt_span.min, vt_span.max, rate_span.min, rate_span.max
    if s.vt_ml_kg is not None:
        vt_lo, vt_hi = smaller(vt_lo, s.vt_ml_kg), larger(vt_hi, s.vt_ml_kg)
    if s.rate_per_min is not None:
        rate_lo, rate_hi = smaller(rate_lo, s.rate_per_min), larger(rate_hi, s.rate_per_min)
    elif basis.timing.pause_s > 0:
        if not is_scalar(lean):
            raise InputError("inspiratory-pause", basis.timing.pause_s, "a chart by body mass is planned without an "
                                                                        "inspiratory pause; plan each patient")
        if (cap := basis.timing.highest_rate_per_min() * PAUSE_RATE_MARGIN) < rate_hi:
            rate_lo, rate_hi = min(rate_lo, cap), cap
            notes += (note("pause_rate_max", "Highest rate the inspiratory pause leaves time to breathe out at", cap,
                           "/min", f"derived: Ti (with the pause) under {fmt(MAX_TI_FRACTION * 100)} % of the cycle"),)
    return vt_lo * lean, vt_hi * lean, rate_lo, rate_hi, notes


def _preferred(basis: Basis, subject: Subject, s: Strategy, va: float) -> tuple[float | None, float | None,
                                                                              tuple[Assumption, ...]]:
    """The starting point on the target line: a fixed rate, the Otis rate, or a tidal volume per kg."""
    if s.rate_per_min is not None:
        return None, s.rate_per_min, ()
    if s.name == "least_work":
        f_alv = subject.alveolar_fraction
        rate = mechanics.otis_optimal_rate_per_min(va / (1 - f_alv) / 1000,
                                                   larger(subject.vd_fixed_ml / (1 - f_alv), 1e-9) / 1000,
                                                   subject.time_constant_s)
        return None, rate, (note("otis_rate", "Rate of least work (Otis, Fenn & Rahn 1950)", rate, "/min",
                                 "Otis, Fenn & Rahn 1950 (derived)"),)
    span = basis.inputs.species.tidal_volume_ml_kg
    per_kg = s.vt_ml_kg if s.vt_ml_kg is not None else span.start
    extra = () if s.vt_ml_kg is not None else (note("starting_vt", "Starting tidal volume", per_kg, "mL/kg",
                                                    span.source),)
    return per_kg * basis.inputs.lean_mass_kg, None, extra


@dataclass(frozen=True)
class ChoiceInputs:
    """What the choice of settings starts from: the alveolar ventilation to reach (mL/min), the box of usual
    tidal volumes (mL) and rates widened to what was entered, the pressure ceiling on VT (mL) and the preferred
    point (floats for a plan; arrays, one patient per element, for a sweep over body mass)."""

    va_ml_min: Any
    vt_lo_ml: Any
    vt_hi_ml: Any
    rate_lo: Any
    rate_hi: Any
    vt_pressure_max_ml: Any
    preferred_vt_ml: Any
    preferred_rate: Any
    fixed: bool  # both tidal volume and rate entered: nothing to choose
    assumptions: tuple[Assumption, ...]


def choice_inputs(basis: Basis, subject: Subject) -> ChoiceInputs:
    """The target line's alveolar ventilation, the box and the preferred point for this basis."""
    s = basis.request.strategy
    va = subject.alveolar_ventilation_ml_min(basis.target.paco2_mmhg)
    vt_lo, vt_hi, rate_lo, rate_hi, notes = _box(basis, s)
    vt_p = basis.mechanics.vt_pressure_max_ml
    if s.vt_ml_kg is not None and s.rate_per_min is not None:
        return ChoiceInputs(va, vt_lo, vt_hi, rate_lo, rate_hi, vt_p, s.vt_ml_kg * basis.inputs.lean_mass_kg,
                            s.rate_per_min, True, notes)
    pref_vt, pref_rate, extra = _preferred(basis, subject, s, va)
    return ChoiceInputs(va, vt_lo, vt_hi, rate_lo, rate_hi, vt_p, pref_vt, pref_rate, False, (*notes, *extra))


def choose_stage(basis: Basis, subject: Subject) -> tuple[Choice, Limits, tuple[Assumption, ...]]:
    """The settings on the line of the target PaCO2 inside the limits (or as entered, when both are)."""
    c = choice_inputs(basis, subject)
    if c.fixed:
        choice = Choice(c.preferred_vt_ml, c.preferred_rate, False, ("fixed_by_user",), c.preferred_vt_ml,
                        c.preferred_rate)
    else:
        choice = choose_settings(c.va_ml_min, subject.vd_fixed_ml, subject.alveolar_fraction, c.vt_lo_ml, c.vt_hi_ml,
                                 c.rate_lo, c.rate_hi, c.vt_pressure_max_ml, c.preferred_vt_ml, c.preferred_rate)
    if any(a.key == "pause_rate_max" for a in c.assumptions):  # the highest rate is the pause's, not the species'
        choice = replace(choice, binding=tuple("pause_rate_max" if b == "rate_max" else b for b in choice.binding))
    limits = Limits(c.vt_lo_ml, c.vt_hi_ml, c.rate_lo, c.rate_hi, c.vt_pressure_max_ml, choice.binding,
                    choice.preferred_vt_ml, choice.preferred_rate_per_min)
    return choice, limits, c.assumptions


def reached(target_mmhg: float, expected_mmhg: float) -> bool:
    """True when the expected PaCO2 is within TARGET_TOLERANCE_MMHG of the target."""
    return abs(expected_mmhg - target_mmhg) < TARGET_TOLERANCE_MMHG


def finish(basis: Basis, subject: Subject, choice: Choice, limits: Limits, library: Library,
           extra: tuple[Assumption, ...] = ()) -> Plan:
    """Evaluate the chosen settings and assemble the Plan (cautions attached by ventset.cautions)."""
    from ventset import cautions

    check_timing(subject.timing, choice.rate_per_min)
    ev = evaluate(subject, choice.vt_ml, choice.rate_per_min)
    inp, met, dead, mech, atm = basis.inputs, basis.metabolism, basis.dead_space, basis.mechanics, basis.atmosphere
    fresh = fresh_gas_stage(basis.system, inp.mass_kg, subject.vco2_ml_min / met.rq, ev.minute_ml_min, ev.set_vt_ml,
                            basis.request.circuit.sampling_ml_min, library)
    target = basis.target.paco2_mmhg
    if choice.binding in (("fixed_by_user",), ("evaluated",)):
        ok = ev.alveolar_ml_min > 0 and reached(target, ev.paco2_mmhg)
    else:
        ok = choice.reached or reached(target, ev.paco2_mmhg)
    notes = (*basis.assumptions, *extra,
             *timing_assumptions(subject.timing, choice.rate_per_min, basis.typical_ti_source, inp.species,
                                 basis.request.targets),
             *basis.system.assumptions, *atm.assumptions, *fresh.assumptions)
    sp = inp.species
    plan = Plan(
        request=basis.request,
        resolved=Resolved(sp.key, inp.species_label, inp.mass_kg, inp.lean_mass_kg, inp.body_temp_c, inp.mode,
                          inp.strategy, ev.ie_expiratory_part, dead.alveolar_fraction, basis.target.gradient_mmhg,
                          sp.gradient_reliable, sp.mechanics_reliable),
        metabolism=met,
        dead_space=DeadSpace(dead.anatomical_ml, dead.apparatus_ml, dead.tube_ml, dead.alveolar_fraction * ev.vt_ml,
                             dead.fixed_ml + dead.alveolar_fraction * ev.vt_ml, dead.parts),
        ventilation=_ventilation(subject, ev, target, ok),
        pressures=Pressures(mech.peep_cmh2o, ev.plateau_cmh2o, ev.peak_cmh2o, ev.driving_cmh2o,
                            ev.inspiratory_pressure_cmh2o, mech.pressure_limit_cmh2o, mech.compliance_ml_cmh2o,
                            mech.resistance_cmh2o_l_s, mech.time_constant_s, subject.compressible_ml_cmh2o,
                            ev.compressed_ml),
        oxygen=Oxygen(atm.fio2, atm.barometric_mmhg, atm.water_vapour_mmhg, ev.pao2_mmhg, fresh.min_o2_flow_ml_min,
                      fresh.fresh_gas_ml_min, fresh.induction_ml_min, basis.system.key, basis.system.circuit.label,
                      fresh.reservoir_bag_l),
        limits=limits, cautions=(), assumptions=notes, basis=basis, subject=subject, evaluation=ev)
    return cautions.attach(plan, library)


def _ventilation(s: Subject, ev: Evaluation, target_mmhg: float, ok: bool) -> Ventilation:
    return Ventilation(s.alveolar_ventilation_ml_min(target_mmhg), ev.minute_ml_min, ev.vt_ml, ev.set_vt_ml,
                       ev.rate_per_min, ev.ti_s, ev.te_s, ev.inspiratory_flow_l_min, target_mmhg, ev.paco2_mmhg,
                       ev.etco2_mmhg, ok, ev.alveolar_ml_min, ev.pause_s, s.timing.te_without_pause_s(ev.rate_per_min))
