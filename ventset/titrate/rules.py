"""The adjustment's cautions as a rule table (like the planner's), and its rationale in plain sentences.

A rule is ``(ctx) -> list[Caution]``; thresholds from resources/titration.toml and resources/cautions.toml.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

from ventset.cautions import LIMIT_WORDS, caution, sort_cautions
from ventset.library import Library
from ventset.model import Caution, Plan, Request
from ventset.physiology import co2stores
from ventset.present.phrases import Phrase, phrase
from ventset.titrate.data import load_titration_data
from ventset.titrate.oxygenation import Oxygenation, spo2_cautions
from ventset.titrate.record import Measurement

if TYPE_CHECKING:
    from ventset.titrate.adjust import Reading, Steps

PREFERENCES = ("rate", "tidal_volume", "both")
PREFERENCE_LABELS = {
    "rate": "keep the tidal volume, change the rate",
    "tidal_volume": "keep the rate, change the tidal volume",
    "both": "share the change between rate and tidal volume",
}
_ONLY = {"rate": "Changing only the rate", "tidal_volume": "Changing only the tidal volume",
         "both": "Sharing the change between rate and tidal volume"}
_IN_USE_WORDS = {"vt_min": "the tidal volume in use (below the species' usual range)",
                 "vt_max": "the tidal volume in use (above the species' usual range)",
                 "rate_min": "the rate in use (below the species' usual range)",
                 "rate_max": "the rate in use (above the species' usual range)"}
# Plan cautions at a proposal that speak of an entry of the clinician's, already said by the adjustment itself.
_PLAN_CODES_LEFT_OUT = frozenset({"METABOLIC_RATE_UNUSUAL"})


@dataclass(frozen=True)
class AdjustContext:
    request: Request
    measurement: Measurement
    prefer: str
    base: Plan
    reading: Reading
    steps: Steps
    measured_gradient_mmhg: float | None
    gradient_used: bool
    alveolar_fraction_from_gradient: float | None
    oxygenation: Oxygenation | None
    library: Library
    gradient_source: str = ""

    def th(self, name: str) -> float:
        """A titration threshold (titration.toml)."""
        return load_titration_data().defaults[name].value

    def source(self, name: str) -> str:
        return load_titration_data().defaults[name].source


def limit_words(binding: tuple[str, ...], moved: frozenset[str]) -> str:
    names = [b for b in dict.fromkeys(binding)
             if not (b == "pressure_limit" and "pressure_limit_below_vt_min" in binding)]
    return " and ".join(_IN_USE_WORDS[b] if b in moved else LIMIT_WORDS.get(b, b) for b in names)


def paco2_from_etco2(x: AdjustContext) -> list[Caution]:
    m = x.measurement
    if m.paco2_mmhg is not None or m.etco2_mmhg is None:
        return []
    where = x.gradient_source or ("entered" if x.request.targets.gradient_mmhg is not None else "species default")
    return [caution("info", "PACO2_FROM_ETCO2",
                    "PaCO2 taken as EtCO2 {etco2_mmhg} plus a gradient of {gradient_mmhg} ({where}). The gradient "
                    "changes during anaesthesia; an arterial blood gas confirms it.", {"where": where},
                    etco2_mmhg=m.etco2_mmhg, gradient_mmhg=x.reading.gradient_mmhg)]


def in_use_outside_range(x: AdjustContext) -> list[Caution]:
    lim, m = x.base.limits, x.measurement
    lean = x.base.resolved.lean_mass_kg
    vt0, f0 = m.tidal_volume_ml, m.rate_per_min
    if lim.rate_min_per_min - 1e-9 <= f0 <= lim.rate_max_per_min + 1e-9 and \
            lim.vt_min_ml - 1e-9 <= vt0 <= lim.vt_max_ml + 1e-9:
        return []
    return [caution("info", "IN_USE_OUTSIDE_RANGE",
                    "The settings in use ({vt_ml_kg} at {rate_per_min}) are outside the usual {lo_ml_kg}–{hi_ml_kg} "
                    "and {lo_per_min}–{hi_per_min} for {species}; the proposal goes no further outside them than "
                    "the settings in use.", {"species": x.base.resolved.species_label},
                    vt_ml_kg=vt0 / lean, rate_per_min=f0, lo_ml_kg=lim.vt_min_ml / lean, hi_ml_kg=lim.vt_max_ml / lean,
                    lo_per_min=lim.rate_min_per_min, hi_per_min=lim.rate_max_per_min)]


def in_use_above_pressure_limit(x: AdjustContext) -> list[Caution]:
    ev, pr = x.reading.in_use, x.base.pressures
    if ev.vt_ml <= x.base.limits.vt_pressure_max_ml + 1e-9:
        return []
    return [caution("caution", "IN_USE_ABOVE_PRESSURE_LIMIT",
                    "At {vt_ml} the model predicts a plateau of {plateau_cmh2o}, above the pressure limit "
                    "{limit_cmh2o}. Compare with the measured plateau: if it is lower, enter the measured compliance.",
                    vt_ml=ev.vt_ml, plateau_cmh2o=ev.plateau_cmh2o, limit_cmh2o=pr.pressure_limit_cmh2o)]


def measured_vco2_unusual(x: AdjustContext) -> list[Caution]:
    estimate = x.base.metabolism.vco2_ml_min
    ratio = x.reading.vco2_ml_min / estimate
    lim = x.library.cautions["metabolic_ratio_caution"]
    if 1 / lim.value <= ratio <= lim.value:
        return []
    why = ("a leak, sampling dilution of EtCO2, falling cardiac output or deep hypothermia can make it look low; "
           "confirm with an arterial blood gas" if ratio < 1 else
           "check the settings entered and for rebreathing (exhausted absorbent, low fresh gas); rising CO2 output "
           "with rising temperature suggests malignant hyperthermia")
    return [caution("caution", "MEASURED_VCO2_UNUSUAL",
                    "The measurement implies a CO2 output of {vco2_ml_min}, {ratio} × the plan's estimate of "
                    "{estimate_ml_min} (threshold ×{limit}, {source}): {why}. The proposal uses the measured value.",
                    {"why": why, "source": lim.source}, vco2_ml_min=x.reading.vco2_ml_min, ratio=ratio,
                    estimate_ml_min=estimate, limit=lim.value)]


def measured_paco2(x: AdjustContext) -> list[Caution]:
    paco2, target = x.reading.paco2_mmhg, x.reading.target_mmhg
    hi_c, lo_c = x.th("paco2_high_caution_mmhg"), x.th("paco2_low_caution_mmhg")
    hi_d = x.library.cautions["paco2_danger_high_mmhg"]
    if paco2 > hi_c:
        danger = paco2 > hi_d.value
        return [caution("danger" if danger else "caution", "MEASURED_HYPERCAPNIA",
                        "PaCO2 {paco2_mmhg} is above {limit_mmhg} ({source}). Check the airway, the circuit and the "
                        "absorbent; if urgent, the full change rather than a part-way step may be justified.",
                        {"source": hi_d.source if danger else x.source("paco2_high_caution_mmhg")},
                        paco2_mmhg=paco2, limit_mmhg=hi_d.value if danger else hi_c)]
    if paco2 < lo_c and target > lo_c:
        return [caution("caution", "MEASURED_HYPOCAPNIA", "PaCO2 {paco2_mmhg} is below {limit_mmhg} ({source}).",
                        {"source": x.source("paco2_low_caution_mmhg")}, paco2_mmhg=paco2, limit_mmhg=lo_c)]
    return []


def gradient(x: AdjustContext) -> list[Caution]:
    g = x.measured_gradient_mmhg
    if g is None:
        return []
    out = []
    if not x.gradient_used and x.request.targets.gradient_mmhg is None:
        out.append(caution("caution", "GRADIENT_IMPLAUSIBLE",
                           "Measured PaCO2 − EtCO2 gradient {gradient_mmhg} is outside the range the gradient input "
                           "accepts: check the capnograph and the sample timing.", gradient_mmhg=g))
    sp = x.library.entry(x.base.resolved.species)
    usual = sp.gradient_mmhg.value
    if g - usual >= x.th("gradient_widening_mmhg"):
        out.append(caution("caution", "GRADIENT_WIDE",
                           "PaCO2 − EtCO2 gradient {gradient_mmhg} is {wider_mmhg} wider than usual for {species} "
                           "({usual_mmhg}): a sign of alveolar dead space, (PaCO2 − EtCO2)/PaCO2 = {fraction} of "
                           "alveolar tidal volume (Mosing et al. 2018). Think of low cardiac output or blood pressure, "
                           "lung position and embolism; titrate to the blood gas, not to EtCO2.",
                           {"species": sp.label}, gradient_mmhg=g, wider_mmhg=g - usual, usual_mmhg=usual,
                           fraction=x.alveolar_fraction_from_gradient or 0.0))
    return out


def target(x: AdjustContext) -> list[Caution]:
    st, r = x.steps, x.reading
    p = st.proposal
    words = {"limits": limit_words(st.full.binding, st.moved)}
    if not p.reached:
        if p.expected_paco2_mmhg > r.target_mmhg:
            sev = "danger" if p.expected_paco2_mmhg > x.th("paco2_high_caution_mmhg") else "caution"
            return [caution(sev, "TARGET_UNREACHABLE",
                            "No setting inside the limits reaches PaCO2 {target_mmhg} for the CO2 output measured; "
                            "limited by {limits}. The proposal is expected to give PaCO2 {expected_mmhg}. Reduce "
                            "apparatus dead space, check for rebreathing, or widen a limit only if the clinician "
                            "judges it safe.", words, target_mmhg=r.target_mmhg, expected_mmhg=p.expected_paco2_mmhg)]
        return [caution("caution", "TARGET_BELOW_LIMITS",
                        "Even the smallest settings inside the limits are expected to give PaCO2 {expected_mmhg} "
                        "against a target of {target_mmhg} (limited by {limits}). Consider a lower rate or assisted "
                        "spontaneous breathing.", words, target_mmhg=r.target_mmhg,
                        expected_mmhg=p.expected_paco2_mmhg)]
    if st.full.binding:
        return [caution("info", "PROPOSAL_LIMITED",
                        "{only} would go past {limits}; the proposal moves along the line of equal PaCO2 to {vt_ml} "
                        "at {rate_per_min}.", {**words, "only": _ONLY[x.prefer]}, vt_ml=p.tidal_volume_ml,
                        rate_per_min=p.rate_per_min)]
    return []


def large_step(x: AdjustContext) -> list[Caution]:
    st = x.steps
    if not st.large:
        return []
    q = st.partial
    return [caution("caution", "LARGE_STEP",
                    "The full proposal changes alveolar ventilation by {change_percent}. When not urgent, change it by "
                    "no more than about {step_percent} per step ({source}): the part-way step, set {set_ml} ({vt_ml} "
                    "at the patient) at {rate_per_min}, is expected to give PaCO2 {expected_mmhg}. Re-measure EtCO2 "
                    "after {lo_min}–{hi_min}, a blood gas after {gas_min} or more ({gas_source}).",
                    {"source": st.max_step.source, "gas_source": x.source("remeasure_blood_gas_min")},
                    change_percent=st.proposal.ventilation_change * 100, step_percent=st.max_step.value * 100,
                    set_ml=q.set_tidal_volume_ml, vt_ml=q.tidal_volume_ml, rate_per_min=q.rate_per_min,
                    expected_mmhg=q.expected_paco2_mmhg, lo_min=x.th("remeasure_etco2_min"),
                    hi_min=x.th("remeasure_etco2_max_min"), gas_min=x.th("remeasure_blood_gas_min"))]


def at_the_proposal(x: AdjustContext) -> list[Caution]:
    """The plan's own cautions at the proposal (and at the part-way step, said as such)."""
    st = x.steps
    out = [c for c in st.full_plan.cautions if c.code not in _PLAN_CODES_LEFT_OUT]
    seen = {c.code for c in out}
    if st.large:
        out += [replace(c, template="Part-way step: " + c.template) for c in st.partial_plan.cautions
                if c.code not in _PLAN_CODES_LEFT_OUT and c.code not in seen]
    return out


def oxygen(x: AdjustContext) -> list[Caution]:
    out = list(x.oxygenation.cautions) if x.oxygenation is not None else []
    if x.measurement.spo2_percent is not None:
        out += spo2_cautions(x.measurement.spo2_percent)
    return out


RULES: tuple[Callable[[AdjustContext], list[Caution]], ...] = (
    paco2_from_etco2, in_use_outside_range, in_use_above_pressure_limit, measured_vco2_unusual, measured_paco2,
    gradient, target, large_step, at_the_proposal, oxygen,
)


def adjustment_cautions(x: AdjustContext) -> tuple[Caution, ...]:
    return sort_cautions([c for rule in RULES for c in rule(x)])


# A rationale line that starts with this says why the change chosen ("keep the tidal volume …") was not kept.
NOT_AS_CHOSEN = "Not as chosen"
_KEPT = {"rate": ("rate", "none"), "tidal_volume": ("tidal_volume", "none"), "both": ("rate", "tidal_volume", "both",
                                                                                     "none")}
_CHANGED_WORDS = {"rate": "the rate", "tidal_volume": "the tidal volume", "both": "both the tidal volume and the rate"}


def set_in_use_ml(x: AdjustContext) -> float:
    """The volume set on the ventilator for the settings in use: as entered, else the model's for that patient
    volume (the patient's volume plus the circuit's compression)."""
    m = x.measurement
    return m.set_tidal_volume_ml if m.set_tidal_volume_ml is not None else x.reading.in_use.set_vt_ml


def preference_kept(prefer: str, changed: str) -> bool:
    """True when a proposal that changed ``changed`` keeps the clinician's choice ``prefer``."""
    return changed in _KEPT.get(prefer, ())


def _not_as_chosen(x: AdjustContext) -> Phrase | None:
    st, p = x.steps, x.steps.proposal
    if preference_kept(x.prefer, p.changed):
        return None
    why = limit_words(st.full.binding, st.moved) or "the limits"
    return phrase(NOT_AS_CHOSEN + " ({chosen}): changing only " + ("the rate" if x.prefer == "rate" else
                  "the tidal volume") + " would go past {limits}, so the proposal changes {changed}.",
                  {"chosen": PREFERENCE_LABELS[x.prefer], "limits": why, "changed": _CHANGED_WORDS[p.changed]})


def _move(x: AdjustContext) -> Phrase:
    m, p = x.measurement, x.steps.proposal
    templates = {"rate": "rate {f0_per_min} → {f1_per_min} at the same tidal volume (set {set1_ml})",
                 "tidal_volume": "set tidal volume {set0_ml} → {set1_ml} ({vt0_ml} → {vt1_ml} at the patient) at "
                                 "the same rate",
                 "both": "set tidal volume {set0_ml} → {set1_ml} ({vt0_ml} → {vt1_ml} at the patient) and rate "
                         "{f0_per_min} → {f1_per_min}",
                 "none": "the settings in use"}
    return phrase("Proposal: " + templates[p.changed] + "; expected PaCO2 {expected_mmhg}, plateau {plateau_cmh2o}.",
                  f0_per_min=m.rate_per_min, f1_per_min=p.rate_per_min, vt0_ml=m.tidal_volume_ml,
                  vt1_ml=p.tidal_volume_ml, set0_ml=set_in_use_ml(x), set1_ml=p.set_tidal_volume_ml,
                  expected_mmhg=p.expected_paco2_mmhg, plateau_cmh2o=p.plateau_cmh2o)


def _course(x: AdjustContext) -> Phrase | None:
    """How fast PaCO2 follows the proposed change: body CO2 stores (ventset.physiology.co2stores), half-times
    in resources/situations.toml [co2_stores]."""
    stores = x.library.co2_stores
    if not stores:
        return None
    start, end = x.reading.paco2_mmhg, x.steps.proposal.expected_paco2_mmhg
    if not (math.isfinite(start) and math.isfinite(end)) or abs(end - start) < 0.5:
        return None
    kind = "fall" if end < start else "rise"
    half = stores[f"{kind}_half_time_min"]
    return phrase("After the change PaCO2 should {kind} from {start_mmhg} towards {end_mmhg}: half-way in "
                  "{half_min}, 95 % of the way in {full_min} (body CO2 stores; {source}). Judge the new level "
                  "then, not at once.", {"kind": kind, "source": half.source}, start_mmhg=start, end_mmhg=end,
                  half_min=half.value, full_min=co2stores.time_to_fraction_min(0.95, half.value))


def rationale(x: AdjustContext) -> tuple[Phrase, ...]:
    """Why the proposal is what it is, in plain sentences with their numbers."""
    m, r, st = x.measurement, x.reading, x.steps
    d = x.base.dead_space
    s = x.base.subject
    assert s is not None
    ev = r.in_use
    why = [
        phrase("At set {set_ml} ({vt_ml} at the patient) and {rate_per_min} the model's alveolar ventilation is "
               "{va_ml_min} (dead space {total_ml} of each breath: anatomical {anatomical_ml}, apparatus and tube "
               "{apparatus_ml}, alveolar {alveolar_ml}).",
               set_ml=set_in_use_ml(x), vt_ml=m.tidal_volume_ml, rate_per_min=m.rate_per_min,
               va_ml_min=ev.alveolar_ml_min,
               total_ml=s.vd_fixed_ml + s.alveolar_fraction * m.tidal_volume_ml, anatomical_ml=d.anatomical_ml,
               apparatus_ml=d.apparatus_ml + d.tube_ml, alveolar_ml=s.alveolar_fraction * m.tidal_volume_ml),
        phrase("PaCO2 {paco2_mmhg} ({source}) means a CO2 output of {vco2_ml_min} (plan estimate {estimate_ml_min}).",
               {"source": r.source}, paco2_mmhg=r.paco2_mmhg, vco2_ml_min=r.vco2_ml_min,
               estimate_ml_min=x.base.metabolism.vco2_ml_min),
    ]
    if math.isclose(r.paco2_mmhg, r.target_mmhg, abs_tol=0.5):
        why.append(phrase("PaCO2 is at the target of {target_mmhg}: keep the settings.", target_mmhg=r.target_mmhg))
    else:
        va0 = ev.alveolar_ml_min
        why.append(phrase("To reach PaCO2 {target_mmhg} alveolar ventilation must go to {need_ml_min} "
                          "({sign}{change_percent}), since PaCO2 ∝ 1/VA at constant CO2 output.",
                          {"sign": "+" if r.needed_alveolar_ml_min > va0 else ""}, target_mmhg=r.target_mmhg,
                          need_ml_min=r.needed_alveolar_ml_min,
                          change_percent=(r.needed_alveolar_ml_min / va0 - 1) * 100))
        why.append(_move(x))
        course = _course(x)
        if course is not None:
            why.append(course)
        if st.large:
            q = st.partial
            why.append(phrase("Part-way ({share_percent} of the change): set {set_ml} ({vt_ml} at the patient) at "
                              "{rate_per_min}, expected PaCO2 {expected_mmhg}; then re-measure.",
                              share_percent=q.fraction_of_change * 100, set_ml=q.set_tidal_volume_ml,
                              vt_ml=q.tidal_volume_ml, rate_per_min=q.rate_per_min,
                              expected_mmhg=q.expected_paco2_mmhg))
    if x.oxygenation is not None:
        why.append(x.oxygenation.sentence())
    note = _not_as_chosen(x)
    return tuple(why) if note is None else (note, *why)  # the reason a choice was not kept comes first


def preference_reason(rationale: tuple[Phrase, ...]) -> Phrase | None:
    """The rationale line saying why the change chosen was not kept, if there is one."""
    return next((p for p in rationale if p.template.startswith(NOT_AS_CHOSEN)), None)
