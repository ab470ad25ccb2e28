"""A short plain-text plan summary to paste into the clinical record ("Copy summary").

The full report is ventset.report.plan_to_text; this keeps to a few lines: patient, circuit,
settings, what to expect on the monitor, the cautions by code, and the standing notice.
"""

from __future__ import annotations

from ventset import __version__
from ventset.errors import visible
from ventset.model import Plan
from ventset.units import fmt, gas_pressure


def _line(text: str) -> str:
    """User text on one line: a line break or control character is shown as an escape, never printed raw."""
    return visible(text, 600)


def plan_summary(plan: Plan, gas_unit: str = "mmHg", when: str = "") -> str:
    """Five to seven lines: patient, circuit, settings, expectations, cautions, standing notice."""
    r, v, p, o, d = plan.resolved, plan.ventilation, plan.pressures, plan.oxygen, plan.dead_space
    c = plan.request.circuit
    name = f"{_line(plan.request.patient.name)}, " if plan.request.patient.name else ""
    lean = f" (lean {fmt(r.lean_mass_kg)} kg)" if r.lean_mass_kg != r.mass_kg else ""
    stamp = f", {when}" if when else ""
    parts = "; ".join(f"{_line(x.name)} {fmt(x.volume_ml)} mL" for x in d.parts) or "none entered"
    tube = (f"; tube {fmt(c.tube_id_mm)} mm ID, {fmt(c.tube_length_cm)} cm beyond incisors"
            if c.tube_id_mm is not None and c.tube_length_cm is not None else "; tube not entered")
    pressure = (f"inspiratory pressure {fmt(p.inspiratory_pressure_cmh2o)} cmH2O above PEEP, "
                if r.mode == "pressure" else "")
    lines = [
        f"Ventilation starting plan (ventset {__version__}{stamp}): {name}{_line(r.species_label)}, "
        f"{fmt(r.mass_kg)} kg{lean}, {fmt(r.body_temp_c)} °C.",
        f"Circuit: {o.circuit_label}, {r.mode} mode; apparatus {parts}{tube}.",
        f"Settings: set VT {fmt(v.set_tidal_volume_ml)} mL (patient {fmt(v.tidal_volume_ml)} mL, "
        f"{fmt(v.tidal_volume_ml / r.lean_mass_kg)} mL/kg), rate {fmt(v.rate_per_min)} /min, Ti {fmt(v.ti_s)} s "
        f"(I:E 1:{fmt(r.ie_expiratory_part)}), {pressure}PEEP {fmt(p.peep_cmh2o)} cmH2O, "
        f"pressure limit {fmt(p.pressure_limit_cmh2o)} cmH2O, FiO2 {fmt(o.fio2)}, "
        f"fresh gas {fmt(o.fresh_gas_ml_min / 1000)} L/min.",
        f"Expected: PaCO2 {gas_pressure(v.expected_paco2_mmhg, gas_unit)} (target "
        f"{gas_pressure(v.target_paco2_mmhg, gas_unit)}{'' if v.target_reached else ', NOT REACHED'}), "
        f"EtCO2 {gas_pressure(v.expected_etco2_mmhg, gas_unit)}; peak {fmt(p.peak_cmh2o)} cmH2O; "
        f"dead space {fmt(d.total_ml)} mL ({fmt(d.total_ml / v.tidal_volume_ml * 100, 2)} % of VT).",
    ]
    if plan.cautions:
        lines.append("Cautions: " + "; ".join(f"{c.severity.upper()} {c.code}" for c in plan.cautions) + ".")
    else:
        lines.append("Cautions: none.")
    lines.append("Notice: " + plan.standing_notice)
    return "\n".join(lines)
