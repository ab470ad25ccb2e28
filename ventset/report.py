"""Plan → JSON-ready dict (docs/plan-json.md) and the plain-text report, from the presentation layer's rows."""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import asdict
from typing import overload

from ventset import __version__
from ventset.model import STRATEGY_LABELS, Caution, Plan, Resolved
from ventset.present.quantities import MMHG, Units
from ventset.present.rows import assumption_value, derived_sections, one_line, patient_line, setting_rows
from ventset.present.situations import situation_rows, situations_to_dict


@overload
def json_number(x: float | None) -> float | None: ...


@overload
def json_number(x: object) -> object: ...


def json_number(x: object) -> object:
    """A float for JSON: rounded to 4 decimals, None when not finite; anything else as it is."""
    if isinstance(x, float):
        return round(x, 4) if math.isfinite(x) else None
    return x


_num = json_number


def patient_to_dict(r: Resolved, name: str) -> dict:
    """The "patient" block shared by the plan and adjustment JSON (mass in kg, temperature in °C)."""
    return {"species": r.species, "species_label": r.species_label, "mass_kg": _num(r.mass_kg),
            "lean_mass_kg": _num(r.lean_mass_kg), "body_temp_c": _num(r.body_temp_c), "name": name}


def cautions_to_json(cautions: Iterable[Caution]) -> list[dict]:
    """Cautions for JSON: severity, code, the sentence (gas pressures in mmHg) and its numbers by name."""
    return [{"severity": c.severity, "code": c.code, "message": c.message,
             "values": {k: _num(v) for k, v in c.values}} for c in cautions]


def caution_lines(cautions: Iterable[Caution], units: Units | str = MMHG) -> list[str]:
    """One indented line per caution ('  [SEVERITY] code: message'), or '  none'."""
    u = Units(gas=units) if isinstance(units, str) else units
    return [f"  [{c.severity.upper()}] {c.code}: {c.text(u)}" for c in cautions] or ["  none"]


def _blocks(plan: Plan) -> dict:
    m, d, v, p, o = plan.metabolism, plan.dead_space, plan.ventilation, plan.pressures, plan.oxygen
    return {
        "metabolism": {"metabolic_rate_w": _num(m.metabolic_rate_w), "allometric_rate_w": _num(m.allometric_rate_w),
                       "vo2_ml_min": _num(m.vo2_ml_min), "vco2_ml_min": _num(m.vco2_ml_min), "rq": _num(m.rq),
                       "entered": m.entered},
        "dead_space": {"anatomical_ml": _num(d.anatomical_ml), "apparatus_ml": _num(d.apparatus_ml + d.tube_ml),
                       "apparatus_parts_ml": _num(d.apparatus_ml), "tube_ml": _num(d.tube_ml),
                       "alveolar_ml": _num(d.alveolar_ml), "total_ml": _num(d.total_ml),
                       "parts": [asdict(x) for x in d.parts]},
        "ventilation": {"alveolar_ml_min": _num(v.alveolar_ml_min), "minute_ml_min": _num(v.minute_ml_min),
                        "tidal_volume_ml": _num(v.tidal_volume_ml), "set_tidal_volume_ml": _num(v.set_tidal_volume_ml),
                        "rate_per_min": _num(v.rate_per_min), "ti_s": _num(v.ti_s), "te_s": _num(v.te_s),
                        "inspiratory_pause_s": _num(v.pause_s), "inspiratory_flow_time_s": _num(v.ti_s - v.pause_s),
                        "te_without_pause_s": _num(v.te_without_pause_s),
                        "expiration_time_constants": _num(v.te_s / p.time_constant_s),
                        "ie_expiratory_part": _num(plan.resolved.ie_expiratory_part),
                        "inspiratory_flow_l_min": _num(v.inspiratory_flow_l_min),
                        "target_paco2_mmhg": _num(v.target_paco2_mmhg),
                        "expected_paco2_mmhg": _num(v.expected_paco2_mmhg),
                        "expected_etco2_mmhg": _num(v.expected_etco2_mmhg), "target_reached": v.target_reached,
                        "delivered_alveolar_ml_min": _num(v.delivered_alveolar_ml_min)},
        "pressures": {"peep_cmh2o": _num(p.peep_cmh2o), "plateau_cmh2o": _num(p.plateau_cmh2o),
                      "peak_cmh2o": _num(p.peak_cmh2o), "driving_cmh2o": _num(p.driving_cmh2o),
                      "inspiratory_pressure_cmh2o": _num(p.inspiratory_pressure_cmh2o),
                      "pressure_limit_cmh2o": _num(p.pressure_limit_cmh2o),
                      "compliance_ml_cmh2o": _num(p.compliance_ml_cmh2o),
                      "resistance_cmh2o_l_s": _num(p.resistance_cmh2o_l_s), "time_constant_s": _num(p.time_constant_s),
                      "circuit_compressible_ml_cmh2o": _num(p.compressible_ml_cmh2o),
                      "circuit_compressed_ml": _num(p.compressed_ml)},
        "oxygen": {"fio2": _num(o.fio2), "barometric_mmhg": _num(o.barometric_mmhg),
                   "water_vapour_mmhg": _num(o.water_vapour_mmhg), "pao2_alveolar_mmhg": _num(o.pao2_alveolar_mmhg),
                   "min_o2_flow_ml_min": _num(o.min_o2_flow_ml_min), "fresh_gas_ml_min": _num(o.fresh_gas_ml_min),
                   "fresh_gas_induction_ml_min": _num(o.fresh_gas_induction_ml_min), "circuit": o.circuit_type,
                   "reservoir_bag_l": _num(o.reservoir_bag_l)},
    }


def plan_to_dict(plan: Plan) -> dict:
    """The documented JSON shape of a plan (docs/plan-json.md); units are in the key names."""
    r, lim = plan.resolved, plan.limits
    return {
        "ventset_version": __version__,
        "standing_notice": plan.standing_notice,
        "patient": {**patient_to_dict(r, plan.request.patient.name),
                    "age": plan.basis.growth.age if plan.basis is not None else plan.request.patient.age,
                    "state": plan.request.patient.state},
        "mode": r.mode,
        "strategy": r.strategy,
        **_blocks(plan),
        "limits": {"vt_min_ml": _num(lim.vt_min_ml), "vt_max_ml": _num(lim.vt_max_ml),
                   "rate_min_per_min": _num(lim.rate_min_per_min), "rate_max_per_min": _num(lim.rate_max_per_min),
                   "vt_pressure_max_ml": _num(lim.vt_pressure_max_ml), "binding": list(lim.binding)},
        "situations": situations_to_dict(plan),
        "cautions": cautions_to_json(plan.cautions),
        "assumptions": [{"key": a.key, "name": a.name, "value": a.value, "unit": a.unit, "source": a.source}
                        for a in plan.assumptions],
        **_machine_block(plan),
    }


def _machine_block(plan: Plan) -> dict:
    """{"machine": ...} when a ventilator class was chosen (docs/plan-json.md), else nothing."""
    if plan.machine is None:
        return {}
    from ventset.machines.output import machine_to_dict

    return {"machine": {**machine_to_dict(plan.machine, json_number),
                        "assumptions": [{"key": a.key, "name": a.name, "value": a.value, "unit": a.unit,
                                         "source": a.source} for a in plan.machine.assumptions]}}


def machine_lines(plan: Plan, units: Units) -> list[str]:
    """The dial settings under the machine's name, then what they give (empty without a machine)."""
    from ventset.present.dials import machine_origin, machine_outcome_rows, machine_rows, machine_title

    if plan.machine is None:
        return []
    lines = ["", one_line(machine_title(plan)).upper()]
    origin = machine_origin(plan)
    if origin:
        lines.append(f"  {one_line(origin)}")
    lines += [f"  {row.name:<30}{row.text:<14}{row.detail}" for row in machine_rows(plan)]
    lines += ["  gives:"]
    lines += [f"    {row.name:<28}{row.text:<14}{row.detail}" for row in machine_outcome_rows(plan, units)]
    lines += [f"  {a.name}: {assumption_value(a, units)} — {a.source}" for a in plan.machine.assumptions]
    return lines


def plan_to_text(plan: Plan, gas_unit: str | Units = "mmHg") -> str:
    """A readable report: settings first, then derived values, cautions, assumptions, the notice."""
    units = Units(gas=gas_unit) if isinstance(gas_unit, str) else gas_unit
    r, o = plan.resolved, plan.oxygen
    lines = [f"ventset {__version__} — starting ventilation plan", patient_line(plan, units),
             f"{one_line(o.circuit_label)}; {STRATEGY_LABELS[r.strategy].lower()}", "", "SETTINGS"]
    if not math.isfinite(plan.ventilation.expected_paco2_mmhg):
        lines.append("  ** NO ALVEOLAR VENTILATION: every breath is dead space. Do not ventilate with these "
                     "settings; remove apparatus dead space first. **")
    lines += [f"  {row.name:<22}{row.text:<16}{row.detail}" for row in setting_rows(plan, units)]
    if not plan.ventilation.target_reached:
        lines.append("  ** TARGET NOT REACHED (see the cautions) **")
    lines += machine_lines(plan, units)
    for title, rows in derived_sections(plan, units):
        lines += ["", title.upper()]
        lines += [f"  {row.name:<36}{row.text}" + (f"  ({row.detail})" if row.detail else "") for row in rows]
    situations = situation_rows(plan, units)
    if situations:
        lines += ["", "SITUATIONS", *(f"  {row.name}: {row.text}" for row in situations)]
    lines += ["", "CAUTIONS", *caution_lines(plan.cautions, units), "", "ASSUMPTIONS"]
    lines += [f"  {a.name}: {assumption_value(a, units)} — {a.source}" for a in plan.assumptions]
    lines += ["", "NOTICE: " + plan.standing_notice]
    return "\n".join(lines)
