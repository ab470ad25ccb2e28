"""Predicted beside published: run every observation of the validation set through the planner.

Tolerance rule (also printed by ``ventset validate`` and in docs/validation.md):

* outcome given as a mean: the predicted value within 8 mmHg of the published mean;
* outcome given as a band held at fixed settings: the prediction inside the band widened by 5 mmHg each side;
* outcome given as a band held with a range of settings (e.g. rate 6–30/min): the predictions over that range
  overlap the band widened by 5 mmHg, i.e. a rate the model needs for the band lies inside the published range;
* input: within ±25 % of the published value (gradients: ±25 % or ±2 mmHg, whichever is wider, because a
  relative tolerance around a difference near zero means nothing; RQ: ±0.05, because ±25 % would span the
  whole physiological range 0.7–1.0); a band is widened by the same amount.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

from ventset.errors import DataError, InputError
from ventset.library import Library, Species, load_library
from ventset.model import Circuit, Patient, Plan, Request, Strategy, Targets
from ventset.planner import plan
from ventset.validation_data import Observation, load_validation

OUTCOME_TOLERANCE_MMHG = 8.0
BAND_WIDENING_MMHG = 5.0
INPUT_TOLERANCE = 0.25
GRADIENT_FLOOR_MMHG = 2.0
RQ_TOLERANCE = 0.05
TOLERANCE_RULE = (
    "outcomes: within 8 mmHg of a published mean, or inside a published band widened by 5 mmHg "
    "(for a band held over a range of settings, the predictions over that range must reach the widened band); "
    "inputs: within ±25 % of the published value (gradients ±25 % or ±2 mmHg, whichever is wider; RQ ±0.05)")


@dataclass(frozen=True)
class Result:
    """What the model predicts for one observation, and whether it is within tolerance."""

    observation: Observation
    predicted: float | None
    within: bool
    detail: str
    needed_rate_per_min: float | None = None
    predicted_low: float | None = None
    predicted_high: float | None = None


def plan_at_settings(request: Request, library: Library) -> Plan:
    """The one call into the planner: evaluate exactly the study's tidal volume and rate.

    Both ``Strategy.vt_ml_kg`` and ``Strategy.rate_per_min`` are set, so ``plan()`` evaluates those settings
    (SETTINGS_FIXED) instead of choosing its own. Switch this function when a dedicated evaluator exists.
    """
    return plan(request, library)


def _request(obs: Observation, vt_ml_kg: float, rate: float) -> Request:
    c = obs.conditions
    return Request(
        patient=Patient(obs.species, c.mass_kg, body_temp_c=c.body_temp_c),
        circuit=Circuit(tube_id_mm=c.tube_id_mm, tube_length_cm=c.tube_length_cm, circuit_type=c.circuit),
        targets=Targets(peep_cmh2o=c.peep_cmh2o, fio2=c.fio2),
        strategy=Strategy(vt_ml_kg=vt_ml_kg, rate_per_min=rate),
    )


def _fixed_ml(p: Plan) -> float:
    d = p.dead_space
    return d.anatomical_ml + d.apparatus_ml + d.tube_ml


def _assumed_number(p: Plan, name: str) -> float:
    """A default the plan used, read from its assumptions trail (the plan's own value)."""
    return float(next(a.value for a in p.assumptions if a.name == name))


def _input_value(quantity: str, p: Plan) -> float:
    m, mass = p.metabolism, p.resolved.mass_kg
    vt = p.ventilation.tidal_volume_ml
    values = {
        "vo2_ml_kg_min": lambda: m.vo2_ml_min / mass,
        "vo2_ml_kg_h": lambda: m.vo2_ml_min / mass * 60.0,
        "vco2_ml_kg_min": lambda: m.vco2_ml_min / mass,
        "vco2_ml_kg075_min": lambda: m.vco2_ml_min / mass**0.75,
        "rq": lambda: m.rq,
        "q10": lambda: _assumed_number(p, "Q10"),
        "mass_exponent": lambda: _assumed_number(p, "Metabolic exponent b"),
        "vd_vt": lambda: p.dead_space.total_ml / vt,
        "alveolar_vd_of_alveolar_vt": lambda: p.dead_space.alveolar_ml / (vt - _fixed_ml(p)),
        "gradient_mmhg": lambda: p.resolved.gradient_mmhg,
        "compliance_ml_cmh2o_kg": lambda: p.pressures.compliance_ml_cmh2o / p.resolved.lean_mass_kg,
    }
    return values[quantity]()


def _default_settings(obs: Observation, sp: Species) -> tuple[float, float]:
    c = obs.conditions
    vt = c.vt_ml_kg if c.vt_ml_kg is not None else sp.tidal_volume_ml_kg.start
    rate = c.rate_per_min if c.rate_per_min is not None else sp.rate_span_for(c.mass_kg).start
    return vt, rate


def _input_result(obs: Observation, lib: Library) -> Result:
    sp = lib.species[obs.species]
    vt, rate = _default_settings(obs, sp)
    value = _input_value(obs.quantity, plan_at_settings(_request(obs, vt, rate), lib))
    pub = obs.published
    tol = INPUT_TOLERANCE * abs(pub.centre)
    if obs.quantity == "gradient_mmhg":
        tol = max(tol, GRADIENT_FLOOR_MMHG)
    elif obs.quantity == "rq":
        tol = RQ_TOLERANCE
    lo = (pub.low if pub.low is not None else -math.inf) if pub.is_band else pub.centre
    hi = (pub.high if pub.high is not None else math.inf) if pub.is_band else pub.centre
    within = lo - tol <= value <= hi + tol
    detail = f"model {value:.3g} {obs.unit}".rstrip()
    if obs.known_disagreement:
        detail += f"; known disagreement: {obs.known_disagreement}"
    return Result(obs, value, within, detail)


def _vt_for(obs: Observation, sp: Species) -> tuple[float, str]:
    c = obs.conditions
    if c.vt_ml_kg is not None:
        return c.vt_ml_kg, ""
    driving = float(c.pip_cmh2o or 0.0) - float(c.peep_cmh2o or 0.0)
    vt = sp.compliance_ml_cmh2o_kg.value * driving
    return vt, (f"VT {vt:.3g} mL/kg from the model's compliance {sp.compliance_ml_cmh2o_kg.value:g} mL/cmH2O/kg "
                f"× {driving:g} cmH2O; ")


def _outcome_value(quantity: str, p: Plan) -> float | None:
    v = p.ventilation
    value = v.expected_etco2_mmhg if quantity == "etco2_mmhg" else v.expected_paco2_mmhg
    return value if math.isfinite(value) else None


def _needed_rate(obs: Observation, p: Plan, target: float) -> float:
    """Rate the model needs at the study's VT to reach ``target`` (an EtCO2 target adds the gradient)."""
    paco2 = target + p.resolved.gradient_mmhg if obs.quantity == "etco2_mmhg" else target
    s = p.subject
    assert s is not None
    return s.rate_for_vt(s.alveolar_ventilation_ml_min(paco2), p.ventilation.tidal_volume_ml)


def _outcome_result(obs: Observation, lib: Library) -> Result:
    sp = lib.species[obs.species]
    c, pub = obs.conditions, obs.published
    vt, note = _vt_for(obs, sp)
    if c.rate_min is not None and c.rate_max is not None:
        probe = plan_at_settings(_request(obs, vt, (c.rate_min + c.rate_max) / 2.0), lib)
        needed = _needed_rate(obs, probe, pub.centre)
        nearest = min(max(needed, c.rate_min), c.rate_max) if math.isfinite(needed) else c.rate_max
        value = _outcome_value(obs.quantity, plan_at_settings(_request(obs, vt, nearest), lib))
        at_min = _outcome_value(obs.quantity, plan_at_settings(_request(obs, vt, c.rate_min), lib))
        at_max = _outcome_value(obs.quantity, plan_at_settings(_request(obs, vt, c.rate_max), lib))
        lo = (pub.low if pub.low is not None else -math.inf) - BAND_WIDENING_MMHG
        hi = (pub.high if pub.high is not None else math.inf) + BAND_WIDENING_MMHG
        within = at_min is not None and at_max is not None and at_max <= hi and at_min >= lo
        detail = (f"{note}model needs {needed:.3g}/min for {pub.centre:g} mmHg (published "
                  f"{c.rate_min:g}–{c.rate_max:g}/min); predicted at {nearest:.3g}/min")
        return Result(obs, value, within, detail, needed, at_max, at_min)
    if c.rate_per_min is None:  # the schema requires a rate for an outcome (ventset/datafiles_validation.py)
        return Result(obs, None, False, f"{note}no rate was published")
    p = plan_at_settings(_request(obs, vt, c.rate_per_min), lib)
    value = _outcome_value(obs.quantity, p)
    if value is None:
        return Result(obs, None, False, f"{note}tidal volume at or below the model's dead space")
    if pub.is_band:
        lo = (pub.low if pub.low is not None else -math.inf) - BAND_WIDENING_MMHG
        hi = (pub.high if pub.high is not None else math.inf) + BAND_WIDENING_MMHG
        within = lo <= value <= hi
    else:
        within = abs(value - pub.centre) <= OUTCOME_TOLERANCE_MMHG
    needed = _needed_rate(obs, p, pub.centre)
    detail = f"{note}model {value:.3g} mmHg; needs {needed:.3g}/min for {pub.centre:g} mmHg"
    return Result(obs, value, within, detail, needed)


def evaluate(obs: Observation, library: Library | None = None) -> Result:
    """Predict one observation with the model and judge it against the tolerance rule."""
    lib = library or load_library()
    try:
        return _input_result(obs, lib) if obs.kind == "input" else _outcome_result(obs, lib)
    except InputError as err:
        raise DataError(f"validation.toml: observation '{obs.id}' cannot be planned: {err}") from None


def run(observations: Iterable[Observation] | None = None, library: Library | None = None) -> tuple[Result, ...]:
    """Evaluate every observation (the shipped set by default)."""
    lib = library or load_library()
    rows = load_validation() if observations is None else tuple(observations)
    return tuple(evaluate(o, lib) for o in rows)


def _counts(results: Iterable[Result]) -> dict[str, int]:
    rs = list(results)
    outs = [r for r in rs if r.observation.kind == "outcome"]
    ins = [r for r in rs if r.observation.kind == "input"]
    return {
        "outcomes": len(outs), "outcomes_within": sum(r.within for r in outs),
        "inputs": len(ins), "inputs_within": sum(r.within for r in ins),
        "inputs_known_disagreement": sum((not r.within) and bool(r.observation.known_disagreement) for r in ins),
        "inputs_unexplained": sum((not r.within) and not r.observation.known_disagreement for r in ins),
    }


def summarise(results: Iterable[Result]) -> dict:
    """Overall and per-species counts; the acceptance figure is the outcome fraction within tolerance."""
    rs = list(results)
    overall = _counts(rs)
    species = sorted({r.observation.species for r in rs})
    outcome_species = sorted({r.observation.species for r in rs if r.observation.kind == "outcome"})
    n_out = overall["outcomes"]
    return {
        "tolerance": TOLERANCE_RULE,
        "rows": len(rs),
        "sources": len({r.observation.source for r in rs}),
        "species": len(species),
        "outcome_species": len(outcome_species),
        **overall,
        "outcome_fraction_within": round(overall["outcomes_within"] / n_out, 4) if n_out else None,
        "per_species": {s: _counts(r for r in rs if r.observation.species == s) for s in species},
    }


def result_to_dict(r: Result) -> dict:
    """One row of ``ventset validate --json``."""
    o = r.observation
    out: dict[str, object] = {
        "id": o.id, "species": o.species, "kind": o.kind, "quantity": o.quantity, "unit": o.unit,
        "source": o.source, "seen": o.seen, "published": o.published.as_dict(),
        "predicted": None if r.predicted is None else round(r.predicted, 4), "within": r.within,
        "detail": r.detail, "conditions": {k: v for k, v in vars(o.conditions).items() if v is not None},
    }
    if r.needed_rate_per_min is not None and math.isfinite(r.needed_rate_per_min):
        out["needed_rate_per_min"] = round(r.needed_rate_per_min, 3)
    if r.predicted_low is not None and r.predicted_high is not None:
        out["predicted_range"] = [round(r.predicted_low, 3), round(r.predicted_high, 3)]
    if o.known_disagreement:
        out["known_disagreement"] = o.known_disagreement
    if o.assumed:
        out["assumed"] = dict(o.assumed)
    return out
