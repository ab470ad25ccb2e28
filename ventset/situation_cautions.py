"""Caution rules of the patient's situations (ventset/stages/situation.py): the cautions each situation brings
from resources/situations.toml, the inputs it needs, the CO2 load of a drug, the oxygen flow of a low-flow
circle, the expected CO2 course, and any entered value or fixed setting that goes against a situation.

Each rule reads the finished plan (``ctx.plan``, a ventset.cautions.Context) and returns Caution records; the
situations applied are ``plan.basis.situations`` (None when there are none). Listed in ventset.cautions.RULES.
"""

from __future__ import annotations

import math
from typing import Any

from ventset.caution_make import caution
from ventset.fields import FIELDS
from ventset.model import Caution, Plan
from ventset.physiology.co2stores import time_to_fraction_min
from ventset.situations import Applied, Situation

_NEEDS = {
    "lean-mass": "tidal volume, lung size and metabolism follow the lean (ideal or non-pregnant) mass, and the plan "
                 "is using the body mass",
    "body-temperature": "CO2 output follows the measured temperature, and the plan is using the species' normal",
    "altitude": "barometric pressure and the alveolar PO2 follow the altitude, and the plan is at sea level",
}


def _applied(ctx: Any) -> Applied | None:
    b = ctx.plan.basis
    return b.situations if b is not None else None


def situation_notes(ctx: Any) -> list[Caution]:
    """Every caution of every chosen situation (a code once)."""
    a = _applied(ctx)
    if a is None:
        return []
    seen: set[str] = set()
    out = []
    for s in a.situations:
        for n in s.cautions:
            if n.code not in seen:
                seen.add(n.code)
                out.append(caution(n.severity, n.code, "{note} ({source})", {"note": n.text, "source": n.source}))
    return out


def _entered(plan: Plan, key: str) -> bool:
    r = plan.request
    if key == "altitude":
        return r.targets.altitude_m != 0 or r.targets.barometric_mmhg is not None
    path = FIELDS[key].path.split(".")
    obj: Any = r
    for part in path:
        obj = getattr(obj, part)
    return obj is not None


def needed_inputs(ctx: Any) -> list[Caution]:
    """A situation that needs an input the user has not entered says which and why."""
    a = _applied(ctx)
    if a is None:
        return []
    out = []
    for s in a.situations:
        for key in s.asks_for:
            if not _entered(ctx.plan, key):
                out.append(caution("caution", "SITUATION_NEEDS_INPUT", "{situation}: enter the {field}; {why}.",
                              {"situation": s.label, "field": FIELDS[key].label.lower(), "why": _NEEDS.get(key, "")}))
        per = s.co2_per_degree_above_normal
        r, sp = ctx.plan.resolved, ctx.species
        if per is not None and _entered(ctx.plan, "body-temperature") and r.body_temp_c <= \
                sp.body_temperature_c.start:
            out.append(caution("info", "SITUATION_TEMPERATURE_NORMAL",
                          "{situation}: the entered temperature {body_temp_c} is not above the normal {normal_c}, "
                          "so no extra CO2 output was planned.", {"situation": s.label},
                          body_temp_c=r.body_temp_c, normal_c=sp.body_temperature_c.start))
    return out


def co2_bolus(ctx: Any) -> list[Caution]:
    """A drug that releases CO2 (sodium bicarbonate): the load, its duration and what it does to CO2 output."""
    a = _applied(ctx)
    if a is None:
        return []
    out = []
    for s in a.situations:
        b = s.co2_bolus
        if b is None:
            continue
        mass, vco2 = ctx.plan.resolved.mass_kg, ctx.plan.metabolism.vco2_ml_min
        dose = b.dose_mmol_kg * mass
        load = dose * b.ml_per_mmol
        minutes = b.duration_s / 60.0
        extra = load / minutes
        out.append(caution("caution", "BICARBONATE_CO2_LOAD",
                      "A bolus of {dose} mmol sodium bicarbonate ({dose_rate} mmol/kg assumed) releases up to "
                      "{load_ml} of CO2 ({per_mmol} mL per mmol): over about {minutes_min} that is up to "
                      "{extra_ml_min} on top of the CO2 output of {vco2_ml_min} (×{ratio}). Give it slowly, raise "
                      "the minute volume for those minutes, and do not read EtCO2 as PaCO2 until it has passed "
                      "({source}).",
                      {"source": b.source}, dose=dose, dose_rate=b.dose_mmol_kg, load_ml=load,
                      per_mmol=b.ml_per_mmol, minutes_min=minutes, extra_ml_min=extra, vco2_ml_min=vco2,
                      ratio=(vco2 + extra) / vco2))
    return out


def low_flow_oxygen(ctx: Any) -> list[Caution]:
    """A low-flow or closed circle: the oxygen flow must cover the oxygen use; a non-rebreathing system cannot."""
    a = _applied(ctx)
    if a is None or not any(s.low_flow for s in a.situations):
        return []
    o, m = ctx.plan.oxygen, ctx.plan.metabolism
    b = ctx.plan.basis
    if b is not None and not b.system.circuit.rebreathing:
        return [caution("caution", "LOW_FLOW_CIRCUIT",
                   "Low flow needs a rebreathing (circle) system; the {circuit} passes its fresh gas straight out. "
                   "Choose a circle or keep the flow the plan gives.", {"circuit": o.circuit_label})]
    return [caution("caution", "LOW_FLOW_OXYGEN",
               "With low flow the oxygen flow must stay above the patient's oxygen use {vo2_ml_min} plus sample gas "
               "not returned and any leak: at least {min_o2_ml_min} here (the plan's maintenance flow is "
               "{fresh_ml_min}).", vo2_ml_min=m.vo2_ml_min, min_o2_ml_min=o.min_o2_flow_ml_min,
               fresh_ml_min=o.fresh_gas_ml_min)]


def co2_course(ctx: Any) -> list[Caution]:
    """How PaCO2 would move if the ventilation of the patient without the situations were kept, and when to
    re-check (body CO2 stores; resources/situations.toml [co2_stores])."""
    a = _applied(ctx)
    v = ctx.plan.ventilation
    if a is None or abs(a.co2_factor - 1.0) < 0.005 or not math.isfinite(v.expected_paco2_mmhg):
        return []
    course = co2_course_numbers(ctx.plan, a)
    plateau = max((s.co2_output.plateau_min for s in a.situations if s.co2_output and s.co2_output.plateau_min),
                  default=None)
    extra = " The added CO2 output itself reaches its plateau about {plateau_min} after it starts." if plateau else ""
    st = a.co2_stores
    return [caution("info", "SITUATION_CO2_COURSE",
               "CO2 output is ×{factor} for {situations}. At the ventilation that would hold PaCO2 {from_mmhg} "
               "without them, PaCO2 would {way} towards {to_mmhg} (half-time about {half_min}; 95 % after "
               "about {t95_min})." + extra + " Re-check EtCO2 about {etco2_min} and a blood gas about {gas_min} "
               "after each change; judge a rise only after {judge_min}.",
               {"situations": a.labels(_co2_situations(a)), "way": "rise" if a.co2_factor > 1 else "fall"},
               factor=a.co2_factor,
               from_mmhg=course["from_mmhg"], to_mmhg=course["to_mmhg"], half_min=course["half_min"],
               t95_min=course["t95_min"], etco2_min=st["recheck_etco2_min"], gas_min=st["recheck_blood_gas_min"],
               judge_min=st["judge_rise_after_min"], **({"plateau_min": plateau} if plateau else {}))]


def _co2_situations(a: Applied) -> tuple[Situation, ...] | None:
    own = tuple(s for s in a.situations if s.co2_output is not None or s.co2_per_degree_above_normal is not None)
    return own or None


def co2_course_numbers(plan: Plan, a: Applied) -> dict[str, float]:
    """The course of :func:`co2_course`: start and end PaCO2 (alveolar ventilation equation at unchanged
    alveolar ventilation: PaCO2 ∝ VCO2), the half-time and the time to 95 % (min)."""
    start = plan.ventilation.target_paco2_mmhg
    end = start * a.co2_factor
    half = a.co2_stores["rise_half_time_min" if end > start else "fall_half_time_min"]
    return {"from_mmhg": start, "to_mmhg": end, "half_min": half, "t95_min": time_to_fraction_min(0.95, half)}


def _over(entered: float | None, limit: float | None, below: bool = False) -> bool:
    if entered is None or limit is None:
        return False
    return entered < limit - 1e-9 if below else entered > limit + 1e-9


def against_situation(ctx: Any) -> list[Caution]:
    """An entered target, PEEP or pressure limit, or a breath, that goes against a chosen situation."""
    a = _applied(ctx)
    if a is None:
        return []
    p, t, v = ctx.plan, ctx.plan.request.targets, ctx.plan.ventilation
    labels, pr, out = {"situations": a.labels()}, p.pressures, []
    if a.paco2_band_mmhg and (t.paco2_mmhg is not None or t.etco2_mmhg is not None):
        lo, hi = a.paco2_band_mmhg
        if not lo - 1e-9 <= v.target_paco2_mmhg <= hi + 1e-9:
            out.append(caution("caution", "SITUATION_TARGET", "The target PaCO2 {target_mmhg} is outside the {lo_mmhg}–"
                          "{hi_mmhg} advised for {situations}.", labels, target_mmhg=v.target_paco2_mmhg,
                          lo_mmhg=lo, hi_mmhg=hi))
    if a.paco2_ceiling_mmhg is not None and math.isfinite(v.expected_paco2_mmhg) and \
            v.expected_paco2_mmhg > a.paco2_ceiling_mmhg + 1.0:
        out.append(caution("caution", "SITUATION_PACO2_CEILING", "The expected PaCO2 {expected_mmhg} is above the "
                      "{ceiling_mmhg} accepted for {situations}: raise ventilation or reduce the CO2 load.", labels,
                      expected_mmhg=v.expected_paco2_mmhg, ceiling_mmhg=a.paco2_ceiling_mmhg))
    if _over(t.peep_cmh2o, a.peep_max_cmh2o) or _over(t.peep_cmh2o, a.peep_min_cmh2o, below=True):
        out.append(caution("caution", "SITUATION_PEEP", "The entered PEEP {peep_cmh2o} is outside what {situations} "
                      "advise ({range}).", {**labels, "range": _peep_range(a)}, peep_cmh2o=pr.peep_cmh2o))
    if a.pressure_limit_cmh2o is not None and _over(t.pressure_limit_cmh2o, a.pressure_limit_cmh2o):
        out.append(caution("caution", "SITUATION_PRESSURE_LIMIT", "The entered pressure limit {entered_cmh2o} is above "
                      "the {limit_cmh2o} advised for {situations}.", labels, entered_cmh2o=pr.pressure_limit_cmh2o,
                      limit_cmh2o=a.pressure_limit_cmh2o))
    for what, value, limit in (("plateau", pr.plateau_cmh2o, a.plateau_limit_cmh2o),
                               ("driving pressure", pr.driving_cmh2o, a.driving_limit_cmh2o)):
        if limit is not None and _over(value, limit):
            out.append(caution("caution", "SITUATION_PRESSURE", "The {what} {value_cmh2o} is above the {limit_cmh2o} "
                          "limit of {situations}: lower the tidal volume.", {**labels, "what": what},
                          value_cmh2o=value, limit_cmh2o=limit))
    return out + _limit_bound(ctx, a)


def _peep_range(a: Applied) -> str:
    lo, hi = a.peep_min_cmh2o, a.peep_max_cmh2o
    if lo is not None and hi is not None:
        return f"{lo:g}–{hi:g} cmH2O"
    return f"at least {lo:g} cmH2O" if lo is not None else f"at most {hi:g} cmH2O"


def _limit_bound(ctx: Any, a: Applied) -> list[Caution]:
    """Say which situation limit held the breath when the solver's pressure limit was one of them."""
    lim, b = ctx.plan.limits, ctx.plan.basis
    if "pressure_limit" not in lim.binding or b is None:
        return []
    m = b.mechanics
    caps = {"pressure limit": m.pressure_limit_cmh2o - m.peep_cmh2o,
            "plateau limit": m.plateau_limit_cmh2o - m.peep_cmh2o, "driving-pressure limit": m.driving_limit_cmh2o}
    what = min(caps, key=caps.__getitem__)
    if what == "pressure limit":
        return []
    limit = m.plateau_limit_cmh2o if what == "plateau limit" else m.driving_limit_cmh2o
    owners = tuple(s for s in a.situations if _limit_of(s, what) == limit)
    return [caution("info", "SITUATION_LIMIT_BINDING", "The tidal volume is held at {vt_ml_kg} by the {what} of "
               "{limit_cmh2o} for {situations}.", {"what": what, "situations": a.labels(owners or None)},
               vt_ml_kg=ctx.plan.ventilation.tidal_volume_ml / ctx.plan.resolved.lean_mass_kg, limit_cmh2o=limit)]


def _limit_of(s: Situation, what: str) -> float | None:
    v = s.plateau_limit_cmh2o if what == "plateau limit" else s.driving_limit_cmh2o
    return v.value if v is not None else None


SITUATION_RULES = (situation_notes, needed_inputs, co2_bolus, low_flow_oxygen, co2_course, against_situation)
