"""Caution rules: each reads a finished plan and returns zero or more Caution records.

A rule is a small function ``(ctx) -> list[Caution]``; add it to RULES. Thresholds live in
resources/cautions.toml with their sources. Messages are templates that name the numbers that
triggered them by unit suffix (``{pao2_mmhg}``), so they are shown in the reader's units.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace

from ventset.caution_make import caution
from ventset.library import Library, Species
from ventset.model import Caution, Plan
from ventset.situation_cautions import SITUATION_RULES
from ventset.species_cautions import custom_species, taxon_only, thin_data
from ventset.stages.airway import usual_tube

SEVERITY_ORDER = {"danger": 0, "caution": 1, "info": 2}

LIMIT_WORDS = {
    "rate_max": "the species' highest usual rate",
    "rate_min": "the species' lowest usual rate",
    "vt_max": "the species' largest usual tidal volume",
    "vt_min": "the species' smallest usual tidal volume",
    "pressure_limit": "the pressure limit",
    "fixed_by_user": "the tidal volume and rate entered",
    "pressure_limit_below_vt_min": "the pressure limit, which allows less than the smallest usual tidal volume",
    "pause_rate_max": "the highest rate that leaves time to breathe out after the inspiratory pause",
}
# Plans that only evaluate given settings (titration, machine dials) make no choice to report.
NOT_CHOSEN = frozenset({"fixed_by_user", "evaluated"})


@dataclass(frozen=True)
class Context:
    plan: Plan
    species: Species
    threshold: dict[str, float]
    usual_tube_id_mm: float = math.nan  # the usual tube internal diameter for the patient's mass

    @property
    def binding(self) -> tuple[str, ...]:
        return self.plan.limits.binding

    @property
    def chosen(self) -> bool:
        """True when the planner chose the settings (rather than evaluating settings it was given)."""
        return not NOT_CHOSEN & set(self.binding)


def limit_words(binding: tuple[str, ...]) -> str:
    return " and ".join(LIMIT_WORDS.get(b, b) for b in binding if b in LIMIT_WORDS)


def _band(x: Context) -> tuple[float, float]:
    b = x.species.paco2_target_mmhg
    return b.min, b.max


def _in_band(x: Context, paco2_mmhg: float) -> bool:
    lo, hi = _band(x)
    return lo <= paco2_mmhg <= hi


def tidal_volume_below_dead_space(x: Context) -> list[Caution]:
    v, d = x.plan.ventilation, x.plan.dead_space
    if v.tidal_volume_ml > d.total_ml:
        return []
    return [caution("danger", "VT_NOT_ABOVE_DEAD_SPACE",
                    "Tidal volume {vt_ml} is not above the total dead space {dead_space_ml}: no alveolar "
                    "ventilation. Remove apparatus dead space or raise the tidal volume.",
                    vt_ml=v.tidal_volume_ml, dead_space_ml=d.total_ml)]


def apparatus_share(x: Context) -> list[Caution]:
    d, v = x.plan.dead_space, x.plan.ventilation
    app = d.apparatus_ml + d.tube_ml
    if v.tidal_volume_ml <= 0 or app <= 0:
        return []
    share = app / v.tidal_volume_ml
    if share >= x.threshold["apparatus_share_danger"]:
        sev = "danger"
    elif share >= x.threshold["apparatus_share_caution"]:
        sev = "caution"
    else:
        return []
    biggest = max(d.parts, key=lambda p: p.volume_ml, default=None)
    extra = ""
    texts = {}
    values = {"apparatus_ml": app, "share_percent": share * 100, "vt_ml": v.tidal_volume_ml}
    if biggest and biggest.volume_ml > d.tube_ml:
        extra = " The largest part is '{part}' ({part_ml})."
        texts["part"] = biggest.name
        values["part_ml"] = biggest.volume_ml
    return [caution(sev, "APPARATUS_DEAD_SPACE",
                    "Apparatus and tube dead space {apparatus_ml} is {share_percent} of the {vt_ml} breath." + extra
                    + " Use smaller connectors, cut the tube to length, and confirm ventilation with capnography.",
                    texts, **values)]


def plateau_above_limit(x: Context) -> list[Caution]:
    pr = x.plan.pressures
    if pr.plateau_cmh2o > pr.pressure_limit_cmh2o + 1e-9:
        return [caution("danger", "PLATEAU_ABOVE_LIMIT",
                        "Predicted plateau {plateau_cmh2o} is above the pressure limit {limit_cmh2o}. Lower the "
                        "tidal volume or check compliance.", plateau_cmh2o=pr.plateau_cmh2o,
                        limit_cmh2o=pr.pressure_limit_cmh2o)]
    if pr.peak_cmh2o > pr.pressure_limit_cmh2o + 1e-9:
        what = "inspiratory pressure" if x.plan.resolved.mode == "pressure" else "peak pressure"
        return [caution("caution", "PEAK_ABOVE_LIMIT",
                        "Predicted {what} {peak_cmh2o} is above the pressure limit {limit_cmh2o} (plateau "
                        "{plateau_cmh2o}). Lengthen inspiration, use a wider tube, or accept a higher limit if the "
                        "clinician judges so.", {"what": what}, peak_cmh2o=pr.peak_cmh2o,
                        limit_cmh2o=pr.pressure_limit_cmh2o, plateau_cmh2o=pr.plateau_cmh2o)]
    return []


def driving_pressure(x: Context) -> list[Caution]:
    pr = x.plan.pressures
    limit = x.threshold["driving_pressure_caution_cmh2o"]
    if pr.driving_cmh2o <= limit:
        return []
    return [caution("caution", "DRIVING_PRESSURE_HIGH",
                    "Predicted driving pressure {driving_cmh2o} (plateau − PEEP) is above {limit_cmh2o}: the "
                    "breath may over-stretch the lung.", driving_cmh2o=pr.driving_cmh2o, limit_cmh2o=limit)]


def short_expiration(x: Context) -> list[Caution]:
    v, pr = x.plan.ventilation, x.plan.pressures
    n_tau = v.te_s / pr.time_constant_s
    if n_tau >= x.threshold["expiration_tau_caution"]:
        return []
    sev = "danger" if n_tau < x.threshold["expiration_tau_danger"] else "caution"
    return [caution(sev, "SHORT_EXPIRATION",
                    "Expiration {te_s} is only {time_constants} time constants (τ = {tau_s}): about "
                    "{trapped_percent} of the breath is left in the lung (gas trapping, auto-PEEP). Lower the rate "
                    "or lengthen expiration (I:E).", te_s=v.te_s, time_constants=n_tau, tau_s=pr.time_constant_s,
                    trapped_percent=math.exp(-n_tau) * 100)]


def short_inspiration_pressure_mode(x: Context) -> list[Caution]:
    if x.plan.resolved.mode != "pressure":
        return []
    v, pr = x.plan.ventilation, x.plan.pressures
    n_tau = (v.ti_s - v.pause_s) / pr.time_constant_s
    if n_tau >= x.threshold["inspiration_tau_pressure_mode"]:
        return []
    what = "Inspiration {ti_s}" if v.pause_s <= 0 else "Inspiration before the pause {ti_s}"
    return [caution("info", "SHORT_INSPIRATION",
                    what + " is {time_constants} time constants: in a pressure mode the lung does not "
                    "fill completely, so the inspiratory pressure is {rise_cmh2o} above PEEP rather than "
                    "{driving_cmh2o}.", ti_s=v.ti_s - v.pause_s, time_constants=n_tau,
                    rise_cmh2o=pr.inspiratory_pressure_cmh2o, driving_cmh2o=pr.driving_cmh2o)]


def inspiratory_pause(x: Context) -> list[Caution]:
    """A pause that leaves little of Ti for flow, or that shortens expiration below the safe time constants."""
    v, pr = x.plan.ventilation, x.plan.pressures
    if v.pause_s <= 0:
        return []
    out, flow_s = [], v.ti_s - v.pause_s
    if v.pause_s >= x.threshold["pause_share_of_ti_caution"] * v.ti_s:
        what = "inspiratory flow {flow_l_min} and a peak of {peak_cmh2o}" if x.plan.resolved.mode == "volume" \
            else "an inspiratory pressure of {peak_cmh2o}"
        out.append(caution("caution", "PAUSE_LEAVES_LITTLE_FLOW_TIME",
                           "The inspiratory pause {pause_s} takes {share_percent} of Ti {ti_s}, leaving {flow_s} for "
                           "the breath to go in: " + what + ". Shorten the pause or lengthen Ti.",
                           pause_s=v.pause_s, share_percent=v.pause_s / v.ti_s * 100, ti_s=v.ti_s, flow_s=flow_s,
                           flow_l_min=v.inspiratory_flow_l_min, peak_cmh2o=pr.peak_cmh2o))
    n_tau, n_without = v.te_s / pr.time_constant_s, v.te_without_pause_s / pr.time_constant_s
    if n_tau < x.threshold["expiration_tau_caution"] and v.te_without_pause_s > v.te_s + 1e-9:
        out.append(caution("caution", "PAUSE_SHORTENS_EXPIRATION",
                           "The inspiratory pause {pause_s} shortens expiration to {te_s} ({time_constants} time "
                           "constants; {te_without_s}, {time_constants_without} without it): gas is trapped. Shorten "
                           "the pause or lower the rate.", pause_s=v.pause_s, te_s=v.te_s, time_constants=n_tau,
                           te_without_s=v.te_without_pause_s, time_constants_without=n_without))
    return out


def _rate_needed(x: Context) -> float:
    v, s = x.plan.ventilation, x.plan.subject
    return s.rate_for_vt(v.alveolar_ml_min, v.tidal_volume_ml) if s is not None else math.inf


def settings_fixed(x: Context) -> list[Caution]:
    v = x.plan.ventilation
    if "fixed_by_user" not in x.binding or not math.isfinite(v.expected_paco2_mmhg):
        return []  # VT_NOT_ABOVE_DEAD_SPACE says it when nothing exchanges gas
    lean = x.plan.resolved.lean_mass_kg
    lo, hi = _band(x)
    within = _in_band(x, v.expected_paco2_mmhg)
    far = v.expected_paco2_mmhg > x.threshold["paco2_danger_high_mmhg"] or \
        v.expected_paco2_mmhg < x.threshold["paco2_danger_low_mmhg"]
    sev = "info" if within else "danger" if far else "caution"
    band = " (inside the usual {lo_mmhg}–{hi_mmhg})" if within else ""
    return [caution(sev, "SETTINGS_FIXED",
                    "Tidal volume ({vt_ml_kg}) and rate ({rate_per_min}) are both fixed as entered: expected PaCO2 "
                    "{expected_mmhg} against a target of {target_mmhg}" + band + ". The target needs "
                    "{need_per_min} at this tidal volume. Clear one of them to let ventset solve.",
                    vt_ml_kg=v.tidal_volume_ml / lean, rate_per_min=v.rate_per_min,
                    expected_mmhg=v.expected_paco2_mmhg, target_mmhg=v.target_paco2_mmhg, lo_mmhg=lo, hi_mmhg=hi,
                    need_per_min=_rate_needed(x))]


def target_unreachable(x: Context) -> list[Caution]:
    v = x.plan.ventilation
    if v.target_reached or not x.chosen:
        return []
    limits, lean = limit_words(x.binding), x.plan.resolved.lean_mass_kg
    lo, hi = _band(x)
    if not math.isfinite(v.expected_paco2_mmhg):
        d = x.plan.dead_space
        return [caution("danger", "TARGET_UNREACHABLE",
                        "No setting inside the limits ventilates the alveoli at all: every breath up to {vt_ml} "
                        "({vt_ml_kg}, limited by {limits}) is used up by {fixed_ml} of fixed dead space. Remove "
                        "apparatus dead space first.", {"limits": limits}, vt_ml=v.tidal_volume_ml,
                        vt_ml_kg=v.tidal_volume_ml / lean, fixed_ml=d.total_ml - d.alveolar_ml,
                        target_mmhg=v.target_paco2_mmhg)]
    within = _in_band(x, v.expected_paco2_mmhg)
    need = _rate_needed(x)
    values = dict(target_mmhg=v.target_paco2_mmhg, expected_mmhg=v.expected_paco2_mmhg, lo_mmhg=lo, hi_mmhg=hi,
                  need_per_min=need, vt_ml_kg=v.tidal_volume_ml / lean)
    if v.expected_paco2_mmhg > v.target_paco2_mmhg:
        tail = ", still inside the usual {lo_mmhg}–{hi_mmhg}." if within else " (hypercapnia)."
        need_txt = " Reaching it would need {need_per_min} at this tidal volume." if math.isfinite(need) else ""
        return [caution("caution" if within else "danger", "TARGET_UNREACHABLE",
                        "No setting inside the limits reaches PaCO2 {target_mmhg}; limited by {limits}. These "
                        "settings are expected to give PaCO2 {expected_mmhg}" + tail + need_txt
                        + " Reduce dead space, or widen a limit only if the clinician judges it safe.",
                        {"limits": limits}, **values)]
    return [caution("info" if within else "caution", "TARGET_BELOW_LIMITS",
                    "Even the smallest settings inside the limits over-ventilate: expected PaCO2 {expected_mmhg} "
                    "against a target of {target_mmhg} (limited by {limits}); the target would need {need_per_min} "
                    "at {vt_ml_kg}. Consider a lower rate, a longer pause between breaths, or assisted spontaneous "
                    "breathing, guided by EtCO2.", {"limits": limits}, **values)]


def limit_moved_the_plan(x: Context) -> list[Caution]:
    v, lim = x.plan.ventilation, x.plan.limits
    if not v.target_reached or not x.binding or not x.chosen:
        return []
    lean = x.plan.resolved.lean_mass_kg
    start = "{pref_ml_kg} at {pref_per_min}" if math.isfinite(lim.preferred_rate_per_min) else \
        "{pref_ml_kg} (a breath no larger than the dead space)"
    return [caution("info", "LIMIT_BINDING",
                    "The starting point (" + start + ") was moved along the line of equal PaCO2 to stay within "
                    "{limits}: now {vt_ml_kg} at {rate_per_min}.", {"limits": limit_words(x.binding)},
                    pref_ml_kg=lim.preferred_vt_ml / lean, pref_per_min=lim.preferred_rate_per_min,
                    vt_ml_kg=v.tidal_volume_ml / lean, rate_per_min=v.rate_per_min)]


def outside_species_range(x: Context) -> list[Caution]:
    v, sp, lean = x.plan.ventilation, x.species, x.plan.resolved.lean_mass_kg
    out = []
    vt_kg = v.tidal_volume_ml / lean
    if not sp.tidal_volume_ml_kg.min - 1e-9 <= vt_kg <= sp.tidal_volume_ml_kg.max + 1e-9:
        out.append(caution("caution", "VT_OUTSIDE_RANGE",
                           "Tidal volume {vt_ml_kg} is outside the usual {lo_ml_kg}–{hi_ml_kg} for {species}.",
                           {"species": sp.label}, vt_ml_kg=vt_kg, lo_ml_kg=sp.tidal_volume_ml_kg.min,
                           hi_ml_kg=sp.tidal_volume_ml_kg.max))
    rates = sp.rate_span_for(lean)
    if not rates.min - 1e-9 <= v.rate_per_min <= rates.max + 1e-9:
        out.append(caution("caution", "RATE_OUTSIDE_RANGE",
                           "Rate {rate_per_min} is outside the usual {lo_per_min}–{hi_per_min} for {species} of "
                           "{lean_kg}.", {"species": sp.label}, rate_per_min=v.rate_per_min, lo_per_min=rates.min,
                           hi_per_min=rates.max, lean_kg=lean))
    return out


def compressible_volume(x: Context) -> list[Caution]:
    pr, v = x.plan.pressures, x.plan.ventilation
    if x.plan.resolved.mode != "volume" or v.tidal_volume_ml <= 0:
        return []
    share = pr.compressed_ml / v.tidal_volume_ml
    if share < x.threshold["compressible_share_caution"]:
        return []
    return [caution("caution", "CIRCUIT_COMPRESSION",
                    "The circuit absorbs about {compressed_ml} per breath ({share_percent} of the {vt_ml} the "
                    "patient needs), so the set volume is {set_ml}. Check delivered volume with spirometry; a "
                    "low-compliance circuit or a pressure mode is more predictable.", compressed_ml=pr.compressed_ml,
                    share_percent=share * 100, vt_ml=v.tidal_volume_ml, set_ml=v.set_tidal_volume_ml)]


def metabolic_plausibility(x: Context) -> list[Caution]:
    m = x.plan.metabolism
    if not m.entered:
        return []
    ratio = m.metabolic_rate_w / m.allometric_rate_w
    lim = x.threshold["metabolic_ratio_caution"]
    if 1 / lim <= ratio <= lim:
        return []
    return [caution("caution", "METABOLIC_RATE_UNUSUAL",
                    "Entered metabolic rate {entered_w} is {ratio} × the allometric estimate ({estimate_w}). Check "
                    "the value and its unit.", entered_w=m.metabolic_rate_w, ratio=ratio,
                    estimate_w=m.allometric_rate_w)]


def body_temperature(x: Context) -> list[Caution]:
    t, rng = x.plan.resolved.body_temp_c, x.species.body_temperature_c
    if rng.min <= t <= rng.max:
        return []
    values = dict(body_temp_c=t, lo_c=rng.min, hi_c=rng.max)
    if x.species.group.ectotherm:
        where = "below" if t < rng.min else "above"
        return [caution("caution", "BODY_TEMPERATURE",
                        "Body temperature {body_temp_c} is {where} the preferred zone {lo_c}–{hi_c}: metabolism, drug "
                        "handling and recovery change; warm or cool towards the zone.", {"where": where}, **values)]
    if t < rng.min:
        return [caution("caution", "BODY_TEMPERATURE",
                        "Body temperature {body_temp_c} is below the normal {lo_c}–{hi_c}: CO2 output and the "
                        "ventilation needed fall as the patient cools; re-titrate to EtCO2 and actively warm.",
                        **values)]
    return [caution("caution", "BODY_TEMPERATURE",
                    "Body temperature {body_temp_c} is above normal: CO2 output rises; rule out malignant "
                    "hyperthermia (rising EtCO2 with rising temperature).", **values)]


def oxygenation(x: Context) -> list[Caution]:
    o, ev = x.plan.oxygen, x.plan.evaluation
    if ev is not None and ev.pao2_floored:
        return [caution("danger", "NO_ALVEOLAR_O2",
                        "At FiO2 {fio2} and barometric pressure {barometric_mmhg} the alveolar gas equation leaves no "
                        "oxygen in the alveoli at the expected PaCO2: these settings cannot sustain life. Raise FiO2 "
                        "and ventilation now.", fio2=o.fio2, barometric_mmhg=o.barometric_mmhg)]
    if o.pao2_alveolar_mmhg >= x.threshold["pao2_caution_mmhg"]:
        return []
    sev = "danger" if o.pao2_alveolar_mmhg < x.threshold["pao2_danger_mmhg"] else "caution"
    return [caution(sev, "LOW_ALVEOLAR_O2",
                    "Expected alveolar PO2 is only {pao2_mmhg} at FiO2 {fio2} and barometric pressure "
                    "{barometric_mmhg}; arterial PO2 will be lower still. Raise FiO2.", pao2_mmhg=o.pao2_alveolar_mmhg,
                    fio2=o.fio2, barometric_mmhg=o.barometric_mmhg)]


def etco2_floor(x: Context) -> list[Caution]:
    ev = x.plan.evaluation
    if ev is None or not ev.etco2_floored:
        return []
    return [caution("danger", "GRADIENT_ABOVE_PACO2",
                    "The PaCO2 − EtCO2 gradient {gradient_mmhg} is larger than the expected PaCO2 {paco2_mmhg}, so "
                    "the expected EtCO2 would be below zero (shown as 0): the gradient or the settings are wrong for "
                    "this patient. Check the gradient against a blood gas.",
                    gradient_mmhg=x.plan.resolved.gradient_mmhg,
                    paco2_mmhg=x.plan.ventilation.expected_paco2_mmhg)]


def peep_high(x: Context) -> list[Caution]:
    pr = x.plan.pressures
    if pr.peep_cmh2o <= x.threshold["peep_high_cmh2o"]:
        return []
    return [caution("caution", "PEEP_HIGH",
                    "PEEP {peep_cmh2o} lowers venous return and cardiac output; monitor blood pressure.",
                    peep_cmh2o=pr.peep_cmh2o)]


def small_patient_capnography(x: Context) -> list[Caution]:
    if x.plan.resolved.mass_kg >= x.threshold["small_patient_sidestream_kg"]:
        return []
    return [caution("info", "SMALL_PATIENT_CAPNOGRAPHY",
                    "At {mass_kg}, sidestream capnography dilutes the small breath and under-reads EtCO2: sample at "
                    "the tube tip, use a low-flow or mainstream sensor, and confirm with a blood gas.",
                    mass_kg=x.plan.resolved.mass_kg)]


def gradient_unreliable(x: Context) -> list[Caution]:
    if x.plan.resolved.gradient_reliable:
        return []
    return [caution("caution", "GRADIENT_UNRELIABLE",
                    "The PaCO2–EtCO2 gradient in {species} is large or variable (default {gradient_mmhg}): treat "
                    "EtCO2 as a trend and calibrate it against an arterial blood gas.", {"species": x.species.label},
                    gradient_mmhg=x.plan.resolved.gradient_mmhg)]


def mechanics_rough(x: Context) -> list[Caution]:
    if x.plan.resolved.mechanics_reliable:
        return []
    return [caution("info", "MECHANICS_ROUGH",
                    "Compliance and resistance for {species} are rough estimates: predicted pressures and time "
                    "constants are a guide only. Watch chest or body-wall movement and the pressure gauge.",
                    {"species": x.species.label})]


def species_notes(x: Context) -> list[Caution]:
    return [caution(n.severity, n.code, "{note} ({source})", {"note": n.text, "source": n.source})
            for n in x.species.notes]


def no_tube_entered(x: Context) -> list[Caution]:
    if x.plan.request.circuit.tube_id_mm is not None:
        return []
    b = x.plan.basis
    tid = next((a.value for a in x.plan.assumptions if a.key == "usual_tube_id"), math.nan)
    length = next((a.value for a in x.plan.assumptions if a.key == "usual_tube_length"), math.nan)
    if b is None or not b.dead_space.usual_tube:  # pragma: no cover - every plan counts a tube
        return []
    return [caution("info", "TUBE_NOT_ENTERED",
                    "No tube size entered: the plan counts the usual tube for {mass_kg} ({tube_mm} internal "
                    "diameter, {beyond_cm} beyond the incisors, {tube_ml}). Enter the tube actually placed; a "
                    "longer or narrower tube changes the dead space.", mass_kg=x.plan.resolved.mass_kg,
                    tube_mm=float(tid), beyond_cm=float(length), tube_ml=x.plan.dead_space.tube_ml)]


def tube_size(x: Context) -> list[Caution]:
    """An entered tube far from the usual internal diameter for the mass: it may not fit, or it belongs to a much
    smaller patient (often a value left from the previous patient)."""
    tid, usual = x.plan.request.circuit.tube_id_mm, x.usual_tube_id_mm
    if tid is None or not math.isfinite(usual) or usual <= 0:
        return []
    ratio = tid / usual
    values = dict(tube_mm=tid, usual_mm=usual, ratio=ratio, mass_kg=x.plan.resolved.mass_kg)
    if ratio > x.threshold["tube_id_ratio_large_caution"]:
        return [caution("caution", "TUBE_TOO_LARGE",
                        "The tube entered ({tube_mm} internal diameter) is {ratio} × the usual {usual_mm} for "
                        "{mass_kg}: it is unlikely to pass the larynx without injury. Check the tube size against "
                        "the patient.", **values)]
    if ratio >= x.threshold["tube_id_ratio_small_caution"]:
        return []
    sev = "danger" if ratio < x.threshold["tube_id_ratio_small_danger"] else "caution"
    return [caution(sev, "TUBE_TOO_SMALL",
                    "The tube entered ({tube_mm} internal diameter) is only {ratio} × the usual {usual_mm} for "
                    "{mass_kg}: resistance rises with 1/ID⁴ (Poiseuille) and is not in the plan's airway "
                    "resistance, and gas leaks around it. Check that the tube entered belongs to this patient.",
                    **values)]


RULES: tuple[Callable[[Context], list[Caution]], ...] = (
    tidal_volume_below_dead_space, target_unreachable, settings_fixed, plateau_above_limit, apparatus_share,
    short_expiration, driving_pressure, compressible_volume, outside_species_range, limit_moved_the_plan,
    oxygenation, etco2_floor, body_temperature, metabolic_plausibility, peep_high, gradient_unreliable,
    small_patient_capnography, short_inspiration_pressure_mode, inspiratory_pause, mechanics_rough, no_tube_entered,
    tube_size, custom_species, taxon_only, thin_data, species_notes, *SITUATION_RULES,
)


def sort_cautions(found: list[Caution]) -> tuple[Caution, ...]:
    """Danger first, then caution, then info (stable within a severity)."""
    return tuple(sorted(found, key=lambda c: SEVERITY_ORDER[c.severity]))


def evaluate(plan: Plan, species: Species, library: Library) -> tuple[Caution, ...]:
    """Run every rule on ``plan``; return cautions sorted danger → caution → info."""
    ctx = Context(plan, species, {k: s.value for k, s in library.cautions.items()},
                  usual_tube(plan.resolved.mass_kg, library)[0])
    return sort_cautions([c for rule in RULES for c in rule(ctx)])


def attach(plan: Plan, library: Library) -> Plan:
    """Return ``plan`` with its cautions filled in."""
    species = plan.basis.inputs.species if plan.basis is not None else library.entry(plan.resolved.species)
    return replace(plan, cautions=evaluate(plan, species, library))
