"""Stage 5: the rule that sets the inspiratory time at any rate, and what it said at the chosen rate."""

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


def timing_rule(t: Targets, species: Species, lean_mass_kg: float, library: Library) -> tuple[TimingRule, str]:
    """The Ti rule of this patient and the source of its typical Ti."""
    typical, source = default_ti_s(lean_mass_kg, species, library)
    return TimingRule(t.ti_s, t.ie_expiratory_part, typical, species.ie_expiratory_part.value), source


def check_timing(rule: TimingRule, rate_per_min: float) -> None:
    """An entered Ti must leave time to breathe out at the chosen rate; InputError naming the field."""
    cycle = 60.0 / rate_per_min
    if rule.entered_ti_s is not None and rule.entered_ti_s >= MAX_TI_FRACTION * cycle:
        raise InputError("ti", f"{fmt(rule.entered_ti_s)} s",
                         f"leaves too little time to breathe out at {fmt(rate_per_min)}/min (cycle {fmt(cycle)} s)")


def timing_assumptions(rule: TimingRule, rate_per_min: float, typical_source: str, species: Species) -> tuple[
        Assumption, ...]:
    """The Ti default the plan used at this rate, if it used one."""
    used = rule.rule_at(rate_per_min)
    if used == "typical_ti":
        return (note("ti", "Inspiratory time", rule.typical_ti_s, "s", typical_source),)
    if used == "species_ie":
        return (note("ie", "I:E", f"1:{fmt(rule.species_ie)}", "", species.ie_expiratory_part.source),)
    return ()
