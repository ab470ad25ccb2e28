"""Plan → JSON-ready dict and plain-text summary (CLI output and the clinical record)."""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import asdict

from ventset import __version__
from ventset.model import STRATEGY_LABELS, Caution, Plan, Resolved
from ventset.units import fmt, gas_pressure, gas_units_in_text


def _num(x: float) -> float | None:
    return round(x, 4) if isinstance(x, float) and math.isfinite(x) else (None if isinstance(x, float) else x)


def patient_to_dict(r: Resolved, name: str) -> dict:
    """The "patient" block shared by the plan and adjustment JSON (mass in kg, temperature in °C)."""
    return {"species": r.species, "species_label": r.species_label, "mass_kg": _num(r.mass_kg),
            "lean_mass_kg": _num(r.lean_mass_kg), "body_temp_c": _num(r.body_temp_c), "name": name}


def caution_lines(cautions: Iterable[Caution], gas_unit: str = "mmHg") -> list[str]:
    """One indented line per caution ('  [SEVERITY] code: message'), or '  none'."""
    return [f"  [{c.severity.upper()}] {c.code}: {gas_units_in_text(c.message, gas_unit)}" for c in cautions] or [
        "  none"]


def plan_to_dict(plan: Plan) -> dict:
    """The documented JSON shape of a plan (docs/plan-json.md); units are in the key names."""
    m, d, v, p, o = plan.metabolism, plan.dead_space, plan.ventilation, plan.pressures, plan.oxygen
    r = plan.resolved
    return {
        "ventset_version": __version__,
        "standing_notice": plan.standing_notice,
        "patient": patient_to_dict(r, plan.request.patient.name),
        "mode": r.mode,
        "strategy": r.strategy,
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
                        "ie_expiratory_part": _num(r.ie_expiratory_part),
                        "inspiratory_flow_l_min": _num(v.inspiratory_flow_l_min),
                        "target_paco2_mmhg": _num(v.target_paco2_mmhg),
                        "expected_paco2_mmhg": _num(v.expected_paco2_mmhg),
                        "expected_etco2_mmhg": _num(v.expected_etco2_mmhg), "target_reached": v.target_reached},
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
        "limits": {"vt_min_ml": _num(plan.limits.vt_min_ml), "vt_max_ml": _num(plan.limits.vt_max_ml),
                   "rate_min_per_min": _num(plan.limits.rate_min_per_min),
                   "rate_max_per_min": _num(plan.limits.rate_max_per_min),
                   "vt_pressure_max_ml": _num(plan.limits.vt_pressure_max_ml), "binding": list(plan.limits.binding)},
        "cautions": [{"severity": c.severity, "code": c.code, "message": c.message} for c in plan.cautions],
        "assumptions": [{"name": a.name, "value": a.value, "unit": a.unit, "source": a.source}
                        for a in plan.assumptions],
    }


def plan_to_text(plan: Plan, gas_unit: str = "mmHg") -> str:
    """A readable summary: settings first, then derived values, cautions, assumptions, the notice."""
    m, d, v, p, o, r = (plan.metabolism, plan.dead_space, plan.ventilation, plan.pressures, plan.oxygen,
                        plan.resolved)
    name = f"{plan.request.patient.name} — " if plan.request.patient.name else ""
    lines = [
        f"ventset {__version__} — starting ventilation plan",
        f"{name}{r.species_label}, {fmt(r.mass_kg)} kg"
        + (f" (lean {fmt(r.lean_mass_kg)} kg)" if r.lean_mass_kg != r.mass_kg else "")
        + f", {fmt(r.body_temp_c)} °C; {r.mode} mode; {STRATEGY_LABELS[r.strategy].lower()}",
        "",
        "SETTINGS",
        f"  Set tidal volume   {fmt(v.set_tidal_volume_ml)} mL   (patient {fmt(v.tidal_volume_ml)} mL = "
        f"{fmt(v.tidal_volume_ml / r.lean_mass_kg)} mL/kg; circuit {fmt(p.compressed_ml)} mL)",
        f"  Rate               {fmt(v.rate_per_min)} /min",
        f"  Ti / Te            {fmt(v.ti_s)} s / {fmt(v.te_s)} s   (I:E 1:{fmt(r.ie_expiratory_part)})",
        f"  Inspiratory flow   {fmt(v.inspiratory_flow_l_min)} L/min",
        f"  PEEP               {fmt(p.peep_cmh2o)} cmH2O",
        f"  Pressure limit     {fmt(p.pressure_limit_cmh2o)} cmH2O"
        + (f"   (inspiratory pressure {fmt(p.inspiratory_pressure_cmh2o)} cmH2O above PEEP)" if r.mode == "pressure"
           else ""),
        f"  FiO2               {fmt(o.fio2)}",
        f"  Fresh gas          {fmt(o.fresh_gas_ml_min / 1000)} L/min ({o.circuit_label}"
        + (f"; {fmt(o.fresh_gas_induction_ml_min / 1000)} L/min at induction)" if o.fresh_gas_induction_ml_min
           > o.fresh_gas_ml_min else ")"),
        f"  Reservoir bag      {fmt(o.reservoir_bag_l)} L",
        "",
        "DERIVED",
        f"  Metabolic rate     {fmt(m.metabolic_rate_w)} W ({'entered' if m.entered else 'allometric'}); "
        f"VO2 {fmt(m.vo2_ml_min)} mL/min; VCO2 {fmt(m.vco2_ml_min)} mL/min; RQ {fmt(m.rq)}",
        f"  Ventilation        alveolar {fmt(v.alveolar_ml_min)} mL/min; minute {fmt(v.minute_ml_min)} mL/min",
        f"  Dead space         anatomical {fmt(d.anatomical_ml)} + apparatus {fmt(d.apparatus_ml)} + tube "
        f"{fmt(d.tube_ml)} + alveolar {fmt(d.alveolar_ml)} = {fmt(d.total_ml)} mL "
        f"({fmt(d.total_ml / v.tidal_volume_ml * 100, 2)} % of VT)",
        f"  Pressures          plateau {fmt(p.plateau_cmh2o)}; peak {fmt(p.peak_cmh2o)}; driving "
        f"{fmt(p.driving_cmh2o)} cmH2O; τ {fmt(p.time_constant_s)} s (C {fmt(p.compliance_ml_cmh2o)} mL/cmH2O, "
        f"R {fmt(p.resistance_cmh2o_l_s)} cmH2O/(L/s))",
        f"  CO2                target PaCO2 {gas_pressure(v.target_paco2_mmhg, gas_unit)}; "
        + (f"expected PaCO2 {gas_pressure(v.expected_paco2_mmhg, gas_unit)}, EtCO2 "
           f"{gas_pressure(v.expected_etco2_mmhg, gas_unit)}" if math.isfinite(v.expected_paco2_mmhg)
           else "expected: NO alveolar ventilation (every breath is dead space)")
        + ("" if v.target_reached else "  ** TARGET NOT REACHED **"),
        f"  Oxygen             PAO2 {gas_pressure(o.pao2_alveolar_mmhg, gas_unit)} (PB "
        f"{gas_pressure(o.barometric_mmhg, gas_unit)}); minimum O2 flow {fmt(o.min_o2_flow_ml_min)} mL/min",
        "",
        "CAUTIONS",
    ]
    lines += caution_lines(plan.cautions, gas_unit)
    lines += ["", "ASSUMPTIONS"]
    lines += [f"  {a.name}: {fmt(a.value) if isinstance(a.value, float) else a.value} {a.unit} — {a.source}"
              for a in plan.assumptions]
    lines += ["", "NOTICE: " + plan.standing_notice]
    return "\n".join(lines)
