"""A short plain-text plan summary to paste into the clinical record ("Copy summary").

The full report is ventset.report.plan_to_text; this keeps to a few lines: patient, circuit,
settings, what to expect on the monitor, the cautions by code, and the standing notice. Numbers come
from the presentation layer's rows, so they read as in the window and on the PDF.
"""

from __future__ import annotations

import math

from ventset import __version__
from ventset.model import Plan
from ventset.present.quantities import Units, show
from ventset.present.rows import gas_or_none, one_line, patient_line, setting_rows


def plan_summary(plan: Plan, gas_unit: str | Units = "mmHg", when: str = "") -> str:
    """Five to seven lines: patient, circuit, settings, expectations, cautions, standing notice."""
    units = Units(gas=gas_unit) if isinstance(gas_unit, str) else gas_unit
    r, v, p, o, d = plan.resolved, plan.ventilation, plan.pressures, plan.oxygen, plan.dead_space
    c = plan.request.circuit
    stamp = f", {when}" if when else ""
    parts = "; ".join(f"{one_line(x.name)} {show(x.volume_ml, 'volume')}" for x in d.parts) or "none entered"
    tube = (f"; tube {show(c.tube_id_mm, 'mm')} ID, {show(c.tube_length_cm, 'cm')} beyond incisors"
            if c.tube_id_mm is not None and c.tube_length_cm is not None else "; tube not entered")
    settings = "; ".join(f"{row.name} {row.text}" for row in setting_rows(plan, units))
    share = d.total_ml / v.tidal_volume_ml * 100 if v.tidal_volume_ml > 0 else math.inf
    lines = [
        f"Ventilation starting plan (ventset {__version__}{stamp}): {patient_line(plan, units)}.",
        f"Circuit: {o.circuit_label}, {r.mode} mode; apparatus {parts}{tube}.",
        f"Settings: {settings}.",
        f"Expected: PaCO2 {gas_or_none(v.expected_paco2_mmhg, units)} (target {show(v.target_paco2_mmhg, 'gas', units)}"
        f"{'' if v.target_reached else ', NOT REACHED'}), EtCO2 {gas_or_none(v.expected_etco2_mmhg, units)}; peak "
        f"{show(p.peak_cmh2o, 'cmh2o')}; dead space {show(d.total_ml, 'volume')} ({show(share, 'percent')} of VT).",
    ]
    if plan.cautions:
        lines.append("Cautions: " + "; ".join(f"{c.severity.upper()} {c.code}" for c in plan.cautions) + ".")
    else:
        lines.append("Cautions: none.")
    lines.append("Notice: " + plan.standing_notice)
    return "\n".join(lines)
