"""Stage 5b: the patient's situations (resources/situations.toml) applied to the Basis before the settings are
chosen, every change recorded in the assumptions trail with its source.

How several situations combine (also in resources/SCHEMA.md and DEVELOPERS.md):
- CO2-output factors multiply ('metabolic' ones scale O2 use too and are not applied to an entered metabolic
  rate; 'absorbed' ones always apply); compliance factors multiply (not on an entered compliance);
- PaCO2 bands and tidal-volume ranges intersect (ranges that do not overlap are refused, naming both); the
  target is the middle of the band (the species' start without one), plus any shift, kept inside the band and
  under the ceiling; the starting tidal volume is the smallest start, moved into the range;
- ceilings take the lowest (PaCO2 ceiling, pressure, plateau and driving-pressure limits, PEEP at most); PEEP at
  least and the gradient take the highest, then PEEP is held at the lowest ceiling; rate factors take the largest;
- a value the user entered is never changed (the cautions say when it goes against a situation).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import Any

from ventset.errors import InputError
from ventset.library import Library, Species
from ventset.model import Assumption, Metabolism, Request
from ventset.schema import Sourced, Span
from ventset.situations import Applied, Situation, normal_key
from ventset.stages.airway import Mechanics
from ventset.stages.basis import Basis, resolve_basis
from ventset.stages.metabolic import Co2Target
from ventset.stages.trail import note
from ventset.units import fmt

Pick = Callable[[Situation], Sourced | None]


def chosen_situations(keys: Sequence[str], library: Library) -> tuple[Situation, ...]:
    """The library's situations for ``keys`` (in order, each once); InputError naming 'situation' if unknown or
    if two exclude each other."""
    out: list[Situation] = []
    for key in dict.fromkeys(normal_key(k) for k in keys):
        if key not in library.situations:
            raise InputError("situation", key, "is not a known situation; run 'ventset situations' for the list")
        out.append(library.situations[key])
    for s in out:
        for other in out:
            if other.key in s.excludes:
                raise InputError("situation", f"{s.key} + {other.key}",
                                 f"cannot be combined: {s.label} already covers {other.label}; choose one")
    return tuple(out)


def _aged(request: Request, chosen: tuple[Situation, ...]) -> Request:
    """The request with the age a situation plans for (neonate), when no age is entered."""
    for s in chosen:
        if s.age is None:
            continue
        if request.patient.age not in (None, s.age):
            raise InputError("situation", s.key, f"plans the patient as a {s.age}, but the age entered is "
                                                 f"{request.patient.age}; clear one of them")
        request = replace(request, patient=replace(request.patient, age=s.age))
    return request


def situation_basis(request: Request, library: Library) -> Basis:
    """resolve_basis, then the chosen situations applied (the Basis keeps the request as entered)."""
    if not request.patient.situations:
        return resolve_basis(request, library)
    chosen = chosen_situations(request.patient.situations, library)
    base = resolve_basis(_aged(request, chosen), library)
    sp = base.inputs.species
    for s in chosen:
        if s.species and sp.key not in s.species:
            names = ", ".join(library.species[k].label if k in library.species else k for k in s.species)
            raise InputError("situation", s.key, f"applies to {names} only, not to {sp.label}")
    return apply_situations(replace(base, request=request), chosen, library)


def _sources(pairs: Sequence[tuple[Situation, Sourced | Span]]) -> str:
    return "; ".join(f"{s.label}: {v.source}" for s, v in pairs)


def _lowest(chosen: tuple[Situation, ...], pick: Pick) -> tuple[float | None, list[tuple[Situation, Sourced]]]:
    pairs = [(s, v) for s in chosen if (v := pick(s)) is not None]
    return (min(v.value for _, v in pairs) if pairs else None), pairs


def _highest(chosen: tuple[Situation, ...], pick: Pick) -> tuple[float | None, list[tuple[Situation, Sourced]]]:
    pairs = [(s, v) for s in chosen if (v := pick(s)) is not None]
    return (max(v.value for _, v in pairs) if pairs else None), pairs


def _temperature_factor(basis: Basis, s: Situation) -> tuple[float, list[Assumption]]:
    """A published rise per °C above normal in place of the group's Q10 (only for an entered temperature)."""
    per, inp = s.co2_per_degree_above_normal, basis.inputs
    normal = inp.species.body_temperature_c.start
    if per is None or basis.request.patient.body_temp_c is None or inp.species.group.ectotherm \
            or inp.body_temp_c <= normal:
        return 1.0, []
    rise = inp.body_temp_c - normal
    q10 = inp.species.group.q10.value ** (rise / 10.0)
    factor = (1.0 + per.value * rise) / q10
    return factor, [note("situation_co2_temperature", f"CO2 output {fmt(rise)} °C above normal ({s.label})",
                         factor, "× the Q10 estimate",
                         f"(1 + {fmt(per.value)}·{fmt(rise)} °C) / Q10 {fmt(inp.species.group.q10.value)}^"
                         f"({fmt(rise)}/10): {per.source}")]


def _metabolism(basis: Basis, chosen: tuple[Situation, ...]) -> tuple[Metabolism, float, list[Assumption]]:
    """CO2 output × each situation's factor: metabolic ones (O2 use too) unless a rate was entered; absorbed ones."""
    m = basis.metabolism
    body, absorbed, notes = 1.0, 1.0, []
    for s in chosen:
        c = s.co2_output
        if c is not None and c.origin == "metabolic" and m.entered:
            notes.append(note("situation_co2_not_applied", f"CO2 output ×{fmt(c.factor)} of {s.label} not applied",
                              c.factor, "×", "a measured metabolic rate was entered, which already includes it"))
        elif c is not None:
            kind = "absorbed CO2" if c.origin == "absorbed" else "CO2 output (O2 use too)"
            notes.append(note("situation_co2_output", f"{s.label}: {kind}", c.factor, "×", c.source))
            if c.origin == "metabolic":
                body *= c.factor
            else:
                absorbed *= c.factor
        if not m.entered:
            factor, extra = _temperature_factor(basis, s)
            body *= factor
            notes += extra
    new = Metabolism(m.metabolic_rate_w * body, m.allometric_rate_w, m.vo2_ml_min * body,
                     m.vco2_ml_min * body * absorbed, m.rq, m.entered)
    return new, body * absorbed, notes


def _band(chosen: tuple[Situation, ...], attr: str, what: str) -> tuple[tuple[float, float] | None,
                                                                         list[tuple[Situation, Span]]]:
    pairs = [(s, v) for s in chosen if (v := getattr(s, attr)) is not None]
    if not pairs:
        return None, []
    lo, hi = max(v.min for _, v in pairs), min(v.max for _, v in pairs)
    if lo > hi:
        shown = ", ".join(f"{s.label} {fmt(v.min)}–{fmt(v.max)}" for s, v in pairs)
        raise InputError("situation", " + ".join(s.key for s, _ in pairs),
                         f"ask for {what} ranges that do not overlap ({shown}); choose one or enter the value")
    return (lo, hi), pairs


def _target(basis: Basis, chosen: tuple[Situation, ...]) -> tuple[Co2Target, Applied, list[Assumption]]:
    """Target PaCO2: the middle of the situations' band, else the species' start (shifted, inside the band, under
    the ceiling); and the widest gradient."""
    t, sp, base = basis.request.targets, basis.inputs.species, basis.target
    entered_target = t.paco2_mmhg is not None or t.etco2_mmhg is not None
    band, band_pairs = _overlap_or_none(chosen) if entered_target else _band(chosen, "paco2_band_mmhg", "PaCO2")
    ceiling, ceiling_pairs = _lowest(chosen, lambda s: s.paco2_ceiling_mmhg)
    shifts = [(s, s.paco2_shift_mmhg) for s in chosen if s.paco2_shift_mmhg is not None]
    top, top_pairs = _highest(chosen, lambda s: s.gradient_mmhg)
    notes: list[Assumption] = []
    gradient = base.gradient_mmhg
    if t.gradient_mmhg is None and top is not None and top > gradient:
        gradient = top
        notes.append(note("gradient", "PaCO2 − EtCO2 gradient", gradient, "mmHg", _sources(top_pairs)))
    target = base.paco2_mmhg
    if t.paco2_mmhg is None and t.etco2_mmhg is not None:
        target = t.etco2_mmhg + gradient
    elif not entered_target and (band or shifts or ceiling is not None):
        start = (band[0] + band[1]) / 2 if band else sp.paco2_target_mmhg.start
        target = start + sum(v.value for _, v in shifts)
        if band:
            target = min(max(target, band[0]), band[1])
        if ceiling is not None:
            target = min(target, ceiling)
        if target != base.paco2_mmhg:
            src = _sources([*band_pairs, *shifts, *ceiling_pairs])
            why = (f"the middle of {fmt(band[0])}–{fmt(band[1])} mmHg" if band else
                   f"the species' start {fmt(sp.paco2_target_mmhg.start)} mmHg ({sp.paco2_target_mmhg.source})")
            notes.append(note("target_paco2", "Target PaCO2", target, "mmHg", f"{why}, for the situation: {src}"))
    applied = Applied(chosen, 1.0, basis.metabolism.vco2_ml_min, band, ceiling, None, None, None, None, None, {})
    return Co2Target(target, gradient, base.assumptions), applied, notes


def _overlap_or_none(chosen: tuple[Situation, ...]) -> tuple[tuple[float, float] | None, list]:
    """With an entered target the bands only inform the cautions: their overlap, or None when they do not."""
    try:
        return _band(chosen, "paco2_band_mmhg", "PaCO2")
    except InputError:
        return None, []


def _peep(basis: Basis, chosen: tuple[Situation, ...]) -> tuple[float, float | None, float | None,
                                                                 list[Assumption]]:
    """PEEP raised to the highest 'at least', then held at the lowest 'at most' (an entered PEEP is kept)."""
    m = basis.mechanics
    floor, floors = _highest(chosen, lambda s: s.peep_min_cmh2o)
    ceiling, ceilings = _lowest(chosen, lambda s: s.peep_max_cmh2o)
    if basis.request.targets.peep_cmh2o is not None or (floor is None and ceiling is None):
        return m.peep_cmh2o, floor, ceiling, []
    peep = max(m.peep_cmh2o, floor if floor is not None else m.peep_cmh2o)
    used = floors if peep > m.peep_cmh2o else []
    if ceiling is not None and peep > ceiling:
        peep, used = ceiling, ceilings
        if floor is not None and floor > ceiling:
            used = [*ceilings, *floors]
    if peep == m.peep_cmh2o:
        return peep, floor, ceiling, []
    return peep, floor, ceiling, [note("peep", "PEEP", peep, "cmH2O", f"{_sources(used)} (species default "
                                                                       f"{fmt(m.peep_cmh2o)} cmH2O)")]


def _mechanics(basis: Basis, chosen: tuple[Situation, ...]) -> tuple[Mechanics, dict, list[Assumption]]:
    """Compliance × the factors (estimated only), PEEP, and the pressure, plateau and driving-pressure limits."""
    m, p, t, lean = basis.mechanics, basis.request.patient, basis.request.targets, basis.inputs.lean_mass_kg
    notes: list[Assumption] = []
    compliance = m.compliance_ml_cmh2o
    factors = [(s, s.compliance_factor) for s in chosen if s.compliance_factor is not None]
    if p.compliance_ml_cmh2o is None and factors:
        for _, f in factors:
            compliance *= f.value
        base = basis.inputs.species.compliance_ml_cmh2o_kg
        notes.append(note("compliance_per_kg", "Respiratory-system compliance per kg", compliance / lean,
                          "mL/cmH2O/kg", f"{fmt(base.value)} ({base.source}) × "
                          + " × ".join(f"{fmt(f.value)}" for _, f in factors)
                          + f" for {_sources(factors)}"))
    peep, floor, ceiling, peep_notes = _peep(basis, chosen)
    notes += peep_notes
    limit = m.pressure_limit_cmh2o
    cap, caps = _lowest(chosen, lambda s: s.pressure_limit_cmh2o)
    if t.pressure_limit_cmh2o is None and cap is not None and cap < limit:
        limit = cap
        notes.append(note("pressure_limit", "Pressure limit", limit, "cmH2O", _sources(caps)))
    plateau, plateaus = _lowest(chosen, lambda s: s.plateau_limit_cmh2o)
    driving, drivings = _lowest(chosen, lambda s: s.driving_limit_cmh2o)
    for key, name, value, pairs in (("situation_plateau_limit", "Plateau pressure limit", plateau, plateaus),
                                    ("situation_driving_limit", "Driving pressure limit", driving, drivings)):
        if value is not None:
            notes.append(note(key, name, value, "cmH2O", _sources(pairs)))
    room = min(limit, plateau if plateau is not None else limit) - peep
    if room <= 0:
        key = "pressure-limit" if t.pressure_limit_cmh2o is not None else "situation"
        raise InputError(key, f"{fmt(min(limit, plateau or limit))} cmH2O",
                         f"leaves no room for a breath above PEEP {fmt(peep)} cmH2O (raised by the situation)")
    new = replace(m, compliance_ml_cmh2o=compliance, peep_cmh2o=peep, pressure_limit_cmh2o=limit,
                  plateau_limit_cmh2o=plateau if plateau is not None else m.plateau_limit_cmh2o,
                  driving_limit_cmh2o=driving if driving is not None else m.driving_limit_cmh2o)
    limits = {"peep_min_cmh2o": floor, "peep_max_cmh2o": ceiling, "pressure_limit_cmh2o": cap,
              "plateau_limit_cmh2o": plateau, "driving_limit_cmh2o": driving}
    return new, limits, notes


def _species(basis: Basis, chosen: tuple[Situation, ...], applied: Applied, target_mmhg: float) -> Species:
    """The species record the solver and the cautions read: the situations' tidal-volume range, highest rate and
    PaCO2 band (the 'usual' band of the cautions: from the band's floor to the ceiling)."""
    sp = basis.inputs.species
    changes: dict[str, Any] = {}
    vt, vt_pairs = _band(chosen, "tidal_volume_ml_kg", "tidal-volume")
    if vt is not None:
        start = min(max(min(v.start for _, v in vt_pairs), vt[0]), vt[1])
        changes["tidal_volume_ml_kg"] = Span(vt[0], vt[1], start, _sources(vt_pairs))
    factor, factors = _highest(chosen, lambda s: s.rate_max_factor)
    if factor is not None:
        r = sp.rate_per_min
        changes["rate_per_min"] = Span(r.min, r.max * factor, r.start,
                                       f"{r.source}; highest rate ×{fmt(factor)} for {_sources(factors)}")
    band, ceiling = applied.paco2_band_mmhg, applied.paco2_ceiling_mmhg
    if band is not None or ceiling is not None:
        u = sp.paco2_target_mmhg
        lo = band[0] if band else u.min
        hi = ceiling if ceiling is not None else band[1] if band else u.max
        changes["paco2_target_mmhg"] = Span(lo, max(hi, lo), target_mmhg, "the chosen situations")
    return replace(sp, **changes) if changes else sp


def _trail(old: tuple[Assumption, ...], new: list[Assumption], chosen: tuple[Situation, ...]) -> tuple[
        Assumption, ...]:
    """The trail with each default a situation changed replaced in place, then one line per situation and the
    situation's other effects."""
    replaced = {a.key: a for a in new if any(o.key == a.key for o in old)}
    kept = [replaced.get(a.key, a) for a in old]
    heads = [note(f"situation:{s.key}", f"Situation: {s.label}", s.key, "",
                  "chosen; its effects follow with their sources") for s in chosen]
    return (*kept, *heads, *(a for a in new if a.key not in replaced))


def apply_situations(basis: Basis, chosen: tuple[Situation, ...], library: Library) -> Basis:
    """``basis`` with the situations' effects (see the module docstring for how they combine)."""
    if not chosen:
        return basis
    met, factor, met_notes = _metabolism(basis, chosen)
    target, applied, target_notes = _target(basis, chosen)
    mech, limits, mech_notes = _mechanics(basis, chosen)
    stores = {k: v.value for k, v in library.co2_stores.items()}
    applied = replace(applied, co2_factor=factor, co2_stores=stores, **limits)
    species = _species(basis, chosen, applied, target.paco2_mmhg)
    inputs = replace(basis.inputs, species=species)
    notes = _trail(basis.assumptions, [*met_notes, *target_notes, *mech_notes], chosen)
    return replace(basis, inputs=inputs, metabolism=met, target=target, mechanics=mech, assumptions=notes,
                   situations=applied)
