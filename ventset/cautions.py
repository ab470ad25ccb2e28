"""Caution rules: each reads a finished plan and returns zero or more Caution records.

A rule is a small function ``(ctx) -> list[Caution]``; add it to RULES. Thresholds live in
resources/cautions.toml with their sources. Messages name the numbers that triggered them.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace

from ventset.library import Library, Species
from ventset.model import Caution, Plan
from ventset.units import fmt

SEVERITY_ORDER = {"danger": 0, "caution": 1, "info": 2}

LIMIT_WORDS = {
    "rate_max": "the species' highest usual rate",
    "rate_min": "the species' lowest usual rate",
    "vt_max": "the species' largest usual tidal volume",
    "vt_min": "the species' smallest usual tidal volume",
    "pressure_limit": "the pressure limit",
    "fixed_by_user": "the tidal volume and rate entered",
    "pressure_limit_below_vt_min": "the pressure limit, which allows less than the smallest usual tidal volume",
}


@dataclass(frozen=True)
class Context:
    plan: Plan
    species: Species
    threshold: dict[str, float]
    binding: tuple[str, ...]
    preferred_vt_ml: float
    preferred_rate_per_min: float


def _c(severity: str, code: str, message: str, **values: float) -> Caution:
    return Caution(severity, code, message, tuple((k, round(float(v), 4)) for k, v in values.items()))


def tidal_volume_below_dead_space(x: Context) -> list[Caution]:
    v, d = x.plan.ventilation, x.plan.dead_space
    if v.tidal_volume_ml > d.total_ml:
        return []
    return [_c("danger", "VT_NOT_ABOVE_DEAD_SPACE",
               f"Tidal volume {fmt(v.tidal_volume_ml)} mL is not above the total dead space {fmt(d.total_ml)} mL: "
               "no alveolar ventilation. Remove apparatus dead space or raise the tidal volume.",
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
    worst = (f" The largest part is '{biggest.name}' ({fmt(biggest.volume_ml)} mL)."
             if biggest and biggest.volume_ml > d.tube_ml else "")
    return [_c(sev, "APPARATUS_DEAD_SPACE",
               f"Apparatus and tube dead space {fmt(app)} mL is {fmt(share * 100, 2)} % of the "
               f"{fmt(v.tidal_volume_ml)} mL breath.{worst} Use smaller connectors, cut the tube to length, "
               "and confirm ventilation with capnography.",
               apparatus_ml=app, share=share)]


def plateau_above_limit(x: Context) -> list[Caution]:
    pr = x.plan.pressures
    out = []
    if pr.plateau_cmh2o > pr.pressure_limit_cmh2o + 1e-9:
        out.append(_c("danger", "PLATEAU_ABOVE_LIMIT",
                      f"Predicted plateau {fmt(pr.plateau_cmh2o)} cmH2O is above the pressure limit "
                      f"{fmt(pr.pressure_limit_cmh2o)} cmH2O. Lower the tidal volume or check compliance.",
                      plateau_cmh2o=pr.plateau_cmh2o, limit_cmh2o=pr.pressure_limit_cmh2o))
    elif pr.peak_cmh2o > pr.pressure_limit_cmh2o + 1e-9:
        what = "inspiratory pressure" if x.plan.resolved.mode == "pressure" else "peak pressure"
        out.append(_c("caution", "PEAK_ABOVE_LIMIT",
                      f"Predicted {what} {fmt(pr.peak_cmh2o)} cmH2O is above the pressure limit "
                      f"{fmt(pr.pressure_limit_cmh2o)} cmH2O (plateau {fmt(pr.plateau_cmh2o)} cmH2O). "
                      "Lengthen inspiration, use a wider tube, or accept a higher limit if the clinician judges so.",
                      peak_cmh2o=pr.peak_cmh2o, limit_cmh2o=pr.pressure_limit_cmh2o))
    return out


def driving_pressure(x: Context) -> list[Caution]:
    pr = x.plan.pressures
    if pr.driving_cmh2o <= x.threshold["driving_pressure_caution_cmh2o"]:
        return []
    return [_c("caution", "DRIVING_PRESSURE_HIGH",
               f"Predicted driving pressure {fmt(pr.driving_cmh2o)} cmH2O (plateau − PEEP) is above "
               f"{fmt(x.threshold['driving_pressure_caution_cmh2o'])} cmH2O: the breath may over-stretch the lung.",
               driving_cmh2o=pr.driving_cmh2o)]


def short_expiration(x: Context) -> list[Caution]:
    v, pr = x.plan.ventilation, x.plan.pressures
    n_tau = v.te_s / pr.time_constant_s
    if n_tau >= x.threshold["expiration_tau_caution"]:
        return []
    sev = "danger" if n_tau < x.threshold["expiration_tau_danger"] else "caution"
    trapped = math.exp(-n_tau) * 100
    return [_c(sev, "SHORT_EXPIRATION",
               f"Expiration {fmt(v.te_s)} s is only {fmt(n_tau, 2)} time constants (τ = {fmt(pr.time_constant_s)} s): "
               f"about {fmt(trapped, 2)} % of the breath is left in the lung (gas trapping, auto-PEEP). "
               "Lower the rate or lengthen expiration (I:E).", te_s=v.te_s, tau_s=pr.time_constant_s)]


def short_inspiration_pressure_mode(x: Context) -> list[Caution]:
    if x.plan.resolved.mode != "pressure":
        return []
    v, pr = x.plan.ventilation, x.plan.pressures
    n_tau = v.ti_s / pr.time_constant_s
    if n_tau >= x.threshold["inspiration_tau_pressure_mode"]:
        return []
    return [_c("info", "SHORT_INSPIRATION",
               f"Inspiration {fmt(v.ti_s)} s is {fmt(n_tau, 2)} time constants: in a pressure mode the lung does not "
               f"fill completely, so the inspiratory pressure is {fmt(pr.inspiratory_pressure_cmh2o)} cmH2O above PEEP "
               f"rather than {fmt(pr.driving_cmh2o)}.", ti_s=v.ti_s, tau_s=pr.time_constant_s)]


def settings_fixed(x: Context) -> list[Caution]:
    v = x.plan.ventilation
    if "fixed_by_user" not in x.binding:
        return []
    lean = x.plan.resolved.lean_mass_kg
    band = x.species.paco2_target_mmhg
    d = x.plan.dead_space
    vd_fixed = d.total_ml - d.alveolar_ml
    eff = v.tidal_volume_ml * (1 - x.plan.resolved.alveolar_dead_space_fraction) - vd_fixed
    if not math.isfinite(v.expected_paco2_mmhg) or eff <= 0:
        return []  # VT_NOT_ABOVE_DEAD_SPACE says it
    need = v.alveolar_ml_min / eff
    within = band.min <= v.expected_paco2_mmhg <= band.max
    return [_c("info" if within else "caution", "SETTINGS_FIXED",
               f"Tidal volume ({fmt(v.tidal_volume_ml / lean)} mL/kg) and rate ({fmt(v.rate_per_min)}/min) are both "
               f"fixed as entered: expected PaCO2 {fmt(v.expected_paco2_mmhg)} mmHg against a target of "
               f"{fmt(v.target_paco2_mmhg)} mmHg" + (f" (inside the usual {fmt(band.min)}–{fmt(band.max)} mmHg)"
                                                    if within else "")
               + f". The target needs {fmt(need)}/min at this tidal volume. Clear one of them to let ventset solve.",
               expected_mmhg=v.expected_paco2_mmhg, target_mmhg=v.target_paco2_mmhg)]


def target_unreachable(x: Context) -> list[Caution]:
    v = x.plan.ventilation
    if v.target_reached or "fixed_by_user" in x.binding:
        return []
    limits = " and ".join(LIMIT_WORDS.get(b, b) for b in x.binding if b in LIMIT_WORDS)
    d, lean = x.plan.dead_space, x.plan.resolved.lean_mass_kg
    f_alv = x.plan.resolved.alveolar_dead_space_fraction
    vd_fixed = d.total_ml - d.alveolar_ml
    need_rate = v.alveolar_ml_min / (v.tidal_volume_ml * (1 - f_alv) - vd_fixed) if (
        v.tidal_volume_ml * (1 - f_alv) > vd_fixed) else math.inf
    band = x.species.paco2_target_mmhg
    if not math.isfinite(v.expected_paco2_mmhg):
        return [_c("danger", "TARGET_UNREACHABLE",
                   f"No setting inside the limits ventilates the alveoli at all: every breath up to "
                   f"{fmt(v.tidal_volume_ml)} mL ({fmt(v.tidal_volume_ml / lean)} mL/kg, limited by {limits}) is "
                   f"used up by {fmt(vd_fixed)} mL of fixed dead space. Remove apparatus dead space first.",
                   target_mmhg=v.target_paco2_mmhg)]
    if v.expected_paco2_mmhg > v.target_paco2_mmhg:
        within = band.min <= v.expected_paco2_mmhg <= band.max
        need = (f" Reaching it would need {fmt(need_rate)}/min at this tidal volume."
                if math.isfinite(need_rate) else "")
        return [_c("caution" if within else "danger", "TARGET_UNREACHABLE",
                   f"No setting inside the limits reaches PaCO2 {fmt(v.target_paco2_mmhg)} mmHg; limited by {limits}. "
                   f"These settings are expected to give PaCO2 {fmt(v.expected_paco2_mmhg)} mmHg"
                   + (f", still inside the usual {fmt(band.min)}–{fmt(band.max)} mmHg." if within else
                      " (hypercapnia).") + need
                   + " Reduce dead space, or widen a limit only if the clinician judges it safe.",
                   target_mmhg=v.target_paco2_mmhg, expected_mmhg=v.expected_paco2_mmhg)]
    within = band.min <= v.expected_paco2_mmhg <= band.max
    return [_c("info" if within else "caution", "TARGET_BELOW_LIMITS",
               f"Even the smallest settings inside the limits over-ventilate: expected PaCO2 "
               f"{fmt(v.expected_paco2_mmhg)} mmHg against a target of {fmt(v.target_paco2_mmhg)} mmHg "
               f"(limited by {limits}); the target would need {fmt(need_rate, 2)}/min at "
               f"{fmt(v.tidal_volume_ml / lean)} mL/kg. Consider a lower rate, a longer pause between breaths, "
               "or assisted spontaneous breathing, guided by EtCO2.",
               target_mmhg=v.target_paco2_mmhg, expected_mmhg=v.expected_paco2_mmhg)]


def limit_moved_the_plan(x: Context) -> list[Caution]:
    v = x.plan.ventilation
    if not v.target_reached or not x.binding or "fixed_by_user" in x.binding:
        return []
    lean = x.plan.resolved.lean_mass_kg
    limits = " and ".join(LIMIT_WORDS.get(b, b) for b in x.binding)
    rate_txt = "—" if not math.isfinite(x.preferred_rate_per_min) else fmt(x.preferred_rate_per_min)
    return [_c("info", "LIMIT_BINDING",
               f"The starting point ({fmt(x.preferred_vt_ml / lean)} mL/kg at {rate_txt}/min) was moved along the "
               f"line of equal PaCO2 to stay within {limits}: now {fmt(v.tidal_volume_ml / lean)} mL/kg at "
               f"{fmt(v.rate_per_min)}/min.", preferred_vt_ml=x.preferred_vt_ml, vt_ml=v.tidal_volume_ml)]


def outside_species_range(x: Context) -> list[Caution]:
    v, sp, lean = x.plan.ventilation, x.species, x.plan.resolved.lean_mass_kg
    out = []
    vt_kg = v.tidal_volume_ml / lean
    if not sp.tidal_volume_ml_kg.min - 1e-9 <= vt_kg <= sp.tidal_volume_ml_kg.max + 1e-9:
        out.append(_c("caution", "VT_OUTSIDE_RANGE",
                      f"Tidal volume {fmt(vt_kg)} mL/kg is outside the usual {fmt(sp.tidal_volume_ml_kg.min)}–"
                      f"{fmt(sp.tidal_volume_ml_kg.max)} mL/kg for {sp.label}.", vt_ml_kg=vt_kg))
    rates = sp.rate_span_for(lean)
    if not rates.min - 1e-9 <= v.rate_per_min <= rates.max + 1e-9:
        out.append(_c("caution", "RATE_OUTSIDE_RANGE",
                      f"Rate {fmt(v.rate_per_min)}/min is outside the usual {fmt(rates.min)}–"
                      f"{fmt(rates.max)}/min for {sp.label} of {fmt(lean)} kg.", rate_per_min=v.rate_per_min))
    return out


def compressible_volume(x: Context) -> list[Caution]:
    pr, v = x.plan.pressures, x.plan.ventilation
    if x.plan.resolved.mode != "volume" or v.tidal_volume_ml <= 0:
        return []
    share = pr.compressed_ml / v.tidal_volume_ml
    if share < x.threshold["compressible_share_caution"]:
        return []
    return [_c("caution", "CIRCUIT_COMPRESSION",
               f"The circuit absorbs about {fmt(pr.compressed_ml)} mL per breath ({fmt(share * 100, 2)} % of the "
               f"{fmt(v.tidal_volume_ml)} mL the patient needs), so the set volume is "
               f"{fmt(v.set_tidal_volume_ml)} mL. Check delivered volume with spirometry; a low-compliance circuit "
               "or a pressure mode is more predictable.",
               compressed_ml=pr.compressed_ml)]


def metabolic_plausibility(x: Context) -> list[Caution]:
    m = x.plan.metabolism
    if not m.entered:
        return []
    ratio = m.metabolic_rate_w / m.allometric_rate_w
    lim = x.threshold["metabolic_ratio_caution"]
    if 1 / lim <= ratio <= lim:
        return []
    return [_c("caution", "METABOLIC_RATE_UNUSUAL",
               f"Entered metabolic rate {fmt(m.metabolic_rate_w)} W is {fmt(ratio, 2)} × the allometric estimate "
               f"({fmt(m.allometric_rate_w)} W). Check the value and its unit.", ratio=ratio)]


def body_temperature(x: Context) -> list[Caution]:
    t, sp = x.plan.resolved.body_temp_c, x.species
    rng = sp.body_temperature_c
    if rng.min <= t <= rng.max:
        return []
    ecto = sp.group.key == "reptile"
    low = t < rng.min
    if ecto:
        msg = (f"Body temperature {fmt(t)} °C is {'below' if low else 'above'} the preferred zone {fmt(rng.min)}–"
               f"{fmt(rng.max)} °C: metabolism, drug handling and recovery change; warm or cool towards the zone.")
    elif low:
        msg = (f"Body temperature {fmt(t)} °C is below the normal {fmt(rng.min)}–{fmt(rng.max)} °C: CO2 output and "
               "the ventilation needed fall as the patient cools; re-titrate to EtCO2 and actively warm.")
    else:
        msg = (f"Body temperature {fmt(t)} °C is above normal: CO2 output rises; rule out malignant hyperthermia "
               "(rising EtCO2 with rising temperature).")
    return [_c("caution", "BODY_TEMPERATURE", msg, body_temp_c=t)]


def oxygenation(x: Context) -> list[Caution]:
    o = x.plan.oxygen
    if o.pao2_alveolar_mmhg >= x.threshold["pao2_caution_mmhg"]:
        return []
    sev = "danger" if o.pao2_alveolar_mmhg < x.threshold["pao2_danger_mmhg"] else "caution"
    return [_c(sev, "LOW_ALVEOLAR_O2",
               f"Expected alveolar PO2 is only {fmt(o.pao2_alveolar_mmhg)} mmHg at FiO2 {fmt(o.fio2)} and barometric "
               f"pressure {fmt(o.barometric_mmhg)} mmHg; arterial PO2 will be lower still. Raise FiO2.",
               pao2_mmhg=o.pao2_alveolar_mmhg)]


def peep_high(x: Context) -> list[Caution]:
    pr = x.plan.pressures
    if pr.peep_cmh2o <= x.threshold["peep_high_cmh2o"]:
        return []
    return [_c("caution", "PEEP_HIGH",
               f"PEEP {fmt(pr.peep_cmh2o)} cmH2O lowers venous return and cardiac output; monitor blood pressure.",
               peep_cmh2o=pr.peep_cmh2o)]


def small_patient_capnography(x: Context) -> list[Caution]:
    if x.plan.resolved.mass_kg >= x.threshold["small_patient_sidestream_kg"]:
        return []
    return [_c("info", "SMALL_PATIENT_CAPNOGRAPHY",
               f"At {fmt(x.plan.resolved.mass_kg)} kg, sidestream capnography dilutes the small breath and under-reads "
               "EtCO2: sample at the tube tip, use a low-flow or mainstream sensor, and confirm with a blood gas.")]


def gradient_unreliable(x: Context) -> list[Caution]:
    if x.plan.resolved.gradient_reliable:
        return []
    return [_c("caution", "GRADIENT_UNRELIABLE",
               f"The PaCO2–EtCO2 gradient in {x.species.label} is large or variable "
               f"(default {fmt(x.plan.resolved.gradient_mmhg)} mmHg): treat EtCO2 as a trend and calibrate it "
               "against an arterial blood gas.")]


def mechanics_rough(x: Context) -> list[Caution]:
    if x.plan.resolved.mechanics_reliable:
        return []
    return [_c("info", "MECHANICS_ROUGH",
               f"Compliance and resistance for {x.species.label} are rough estimates: predicted pressures and time "
               "constants are a guide only. Watch chest or body-wall movement and the pressure gauge.")]


def species_notes(x: Context) -> list[Caution]:
    return [_c(n.severity, n.code, f"{n.text} ({n.source})") for n in x.species.notes]


def no_tube_entered(x: Context) -> list[Caution]:
    c = x.plan.request.circuit
    if c.tube_id_mm is not None:
        return []
    return [_c("info", "TUBE_NOT_ENTERED",
               "No tube size entered: the tube beyond the incisors is not counted as dead space. "
               "Enter its internal diameter and length.")]


def custom_species(x: Context) -> list[Caution]:
    name = x.plan.request.patient.custom_species.strip()
    if not name:
        return []
    return [_c("caution", "CUSTOM_SPECIES",
               f"{name} is not in the species library: every value not entered comes from {x.species.label} "
               "(usual tidal volume and rate, pressure limit, compliance, dead space, metabolism). Enter what you "
               "know about this species and titrate closely to capnography and chest movement.")]


RULES: tuple[Callable[[Context], list[Caution]], ...] = (
    tidal_volume_below_dead_space, target_unreachable, settings_fixed, plateau_above_limit, apparatus_share,
    short_expiration, driving_pressure, compressible_volume, outside_species_range, limit_moved_the_plan,
    oxygenation,
    body_temperature, metabolic_plausibility, peep_high, gradient_unreliable, small_patient_capnography,
    short_inspiration_pressure_mode, mechanics_rough, no_tube_entered, custom_species, species_notes,
)


def evaluate(plan: Plan, species: Species, library: Library, binding: tuple[str, ...] = (),
             preferred_vt_ml: float = math.nan, preferred_rate_per_min: float = math.nan) -> tuple[Caution, ...]:
    """Run every rule on ``plan``; return cautions sorted danger → caution → info."""
    ctx = Context(plan, species, {k: s.value for k, s in library.cautions.items()}, binding, preferred_vt_ml,
                  preferred_rate_per_min)
    found = [c for rule in RULES for c in rule(ctx)]
    return tuple(sorted(found, key=lambda c: SEVERITY_ORDER[c.severity]))


def attach(plan: Plan, species: Species, library: Library, choice) -> Plan:
    """Return ``plan`` with its cautions filled in (``choice`` is the planner's solver result)."""
    return replace(plan, cautions=evaluate(plan, species, library, choice.binding, choice.preferred_vt_ml,
                                           choice.preferred_rate_per_min))
