"""Stage 5: the rule that sets the inspiratory time at any rate, and what it said at the chosen rate.

An inspiratory pause (an entered one, else the species value, else none) is part of Ti: with Ti or I:E entered
it comes out of that Ti; otherwise it is added to the usual inspiratory flow time, so Te is shorter by it.
"""

from __future__ import annotations

from ventset.errors import InputError
from ventset.evaluate import MAX_TI_FRACTION, TimingRule
from ventset.library import Library, Species
from ventset.model import Assumption, Targets
from ventset.stages.trail import note
from ventset.units import fmt


def default_ti_s(lean_mass_kg: float, species: Species, library: Library) -> tuple[float, str]:
    """Default inspiratory time (s) and its source: the species value, else ~1 s at 20 kg × (M/20)^0.26."""
    if species.inspiratory_time_s is not None:
        return species.inspiratory_time_s.value, species.inspiratory_time_s.source
    d = library.planning
    ti = d["ti_reference_s"].value * (lean_mass_kg / d["ti_reference_mass_kg"].value) ** d["ti_mass_exponent"].value
    return ti, f"{d['ti_reference_s'].source}; scaled with {d['ti_mass_exponent'].source}"


def pause_of(t: Targets, species: Species) -> tuple[float, tuple[Assumption, ...]]:
    """The inspiratory pause (s): entered, else the species value (noted with its source), else 0."""
    if t.inspiratory_pause_s is not None:
        return t.inspiratory_pause_s, ()
    own = species.inspiratory_pause_s
    if own is None or own.value <= 0:
        return 0.0, ()
    return own.value, (note("inspiratory_pause", "Inspiratory pause (inside Ti)", own.value, "s", own.source),)


def timing_rule(t: Targets, species: Species, lean_mass_kg: float, library: Library) -> tuple[TimingRule, str]:
    """The Ti rule of this patient and the source of its typical Ti."""
    typical, source = default_ti_s(lean_mass_kg, species, library)
    pause, _ = pause_of(t, species)
    return TimingRule(t.ti_s, t.ie_expiratory_part, typical, species.ie_expiratory_part.value, pause), source


def check_timing(rule: TimingRule, rate_per_min: float) -> None:
    """Ti must leave time to breathe out, and the pause time for flow, at the chosen rate; InputError naming the
    field (the entered Ti, else the pause that made Ti too long)."""
    cycle = 60.0 / rate_per_min
    if rule.entered_ti_s is not None and rule.entered_ti_s >= MAX_TI_FRACTION * cycle:
        raise InputError("ti", f"{fmt(rule.entered_ti_s)} s",
                         f"leaves too little time to breathe out at {fmt(rate_per_min)}/min (cycle {fmt(cycle)} s)")
    if rule.pause_s <= 0:
        return
    ti = float(rule.ti_s(rate_per_min))
    if ti <= rule.pause_s:
        raise InputError("inspiratory-pause", f"{fmt(rule.pause_s)} s",
                         f"is not shorter than the inspiratory time ({fmt(ti)} s at {fmt(rate_per_min)}/min), so no "
                         "time is left for inspiratory flow: shorten the pause or lengthen Ti")
    if ti >= MAX_TI_FRACTION * cycle:
        raise InputError("inspiratory-pause", f"{fmt(rule.pause_s)} s",
                         f"makes Ti {fmt(ti)} s, leaving too little time to breathe out at {fmt(rate_per_min)}/min "
                         f"(cycle {fmt(cycle)} s): shorten the pause or enter a lower rate")


def timing_assumptions(rule: TimingRule, rate_per_min: float, typical_source: str, species: Species,
                       t: Targets | None = None) -> tuple[Assumption, ...]:
    """The Ti default (and the species pause) the plan used at this rate, if it used one."""
    pause = pause_of(t, species)[1] if t is not None else ()
    used = rule.rule_at(rate_per_min)
    if used == "typical_ti":
        return (note("ti", "Inspiratory flow time" if rule.pause_s > 0 else "Inspiratory time", rule.typical_ti_s,
                     "s", typical_source), *pause)
    if used == "species_ie":
        flow = " for the flow time (the pause is added)" if rule.pause_s > 0 else ""
        return (note("ie", "I:E" + flow, f"1:{fmt(rule.species_ie)}", "", species.ie_expiratory_part.source),
                *pause)
    return pause
