"""The rows of a plan on a machine class: its controls as dialled (in the class's order, the ideal beside each),
then what the dialled breath gives and the oxygen it uses. The text report, the JSON and the window render from
here (``machine_rows``, ``machine_outcome_rows``)."""

from __future__ import annotations

import math

from ventset.model import Plan
from ventset.present.quantities import MMHG, Units, show, split
from ventset.present.rows import Row, gas_or_none, ie_text


def machine_title(plan: Plan) -> str:
    """'On the machine: <class>', or for a clinic machine '<its name>' (empty without a machine): short enough
    for the window's title line; ``machine_origin`` says what a clinic machine is made from."""
    return f"On the machine: {plan.machine.machine.label}" if plan.machine is not None else ""


def machine_origin(plan: Plan) -> str:
    """For one of the clinic's machines, the class it is made from (empty for a class or without a machine)."""
    if plan.machine is None or not plan.machine.machine.is_clinic:
        return ""
    m = plan.machine.machine
    return f"The clinic's own machine, made from the class: {m.class_label} ({m.class_key})"


def machine_rows(plan: Plan) -> list[Row]:
    """One row per control in the order it is set: the setting, and the ideal it stands for."""
    ms = plan.machine
    if ms is None:
        return []
    rows = []
    for s in ms.settings:
        c = s.control
        value = f"1:{c.text(s.value)}" if c.unit == "1:E" else c.text(s.value)
        unit = "" if c.unit == "1:E" else c.unit
        end = "" if s.in_range else (" — AT THE END OF ITS RANGE (lowest)" if s.ideal < c.min
                                     else " — AT THE END OF ITS RANGE (highest)")
        rows.append(Row(f"machine_{c.kind}", c.label, value, unit, f"ideal {c.wanted(s.ideal)}{end}"))
    return rows


def machine_outcome_rows(plan: Plan, units: Units = MMHG) -> list[Row]:
    """What the dialled breath gives (through the one evaluation) and the oxygen it uses."""
    ms = plan.machine
    if ms is None:
        return []
    ev, dv, o, v = ms.evaluation, ms.delivery, ms.oxygen, plan.ventilation
    lean = plan.resolved.lean_mass_kg
    parts = [f"machine {show(dv.machine_ml, 'volume')}"]
    if dv.coupled_ml > 0:
        parts.append(f"+ fresh gas {show(dv.coupled_ml, 'volume')}")
    if ev.compressed_ml > 0:
        parts.append(f"− compression {show(ev.compressed_ml, 'volume')}")
    supply = "—" if not math.isfinite(o.supply_min) else show(o.supply_min, "minutes")
    return [
        Row("machine_vt", "Tidal volume at the patient", *split(ev.vt_ml, "volume"),
            f"{show(ev.vt_ml / lean, 'ml_kg')}; {' '.join(parts)}"),
        Row("machine_breath", "Breath as dialled", *split(ev.rate_per_min, "rate"),
            f"Ti {show(ev.ti_s, 'seconds')} · Te {show(ev.te_s, 'seconds')} · I:E {ie_text(ev.ie_expiratory_part)}"),
        Row("machine_paco2", "Expected PaCO2 as dialled", *_gas(ev.paco2_mmhg, units),
            f"ideal settings {gas_or_none(v.expected_paco2_mmhg, units)}"),
        Row("machine_etco2", "Expected EtCO2 as dialled", *_gas(ev.etco2_mmhg, units),
            f"ideal settings {gas_or_none(v.expected_etco2_mmhg, units)}"),
        Row("machine_peak", "Peak airway pressure", *split(ev.peak_cmh2o, "cmh2o"),
            f"plateau {show(ev.plateau_cmh2o, 'cmh2o')}, PEEP {show(ev.peep_cmh2o, 'cmh2o')}"),
        Row("machine_oxygen", "Oxygen use", *split(o.use_l_min, "flow_l"),
            f"fresh gas {show(o.fresh_gas_l_min, 'flow_l')} + driving gas {show(o.driving_oxygen_l_min, 'flow_l')}"
            + ("" if o.driving_gas == "oxygen" else f" (driven by air, {show(o.driving_gas_l_min, 'flow_l')})")),
        Row("machine_supply", "Oxygen supply lasts", supply, "",
            f"{o.supply_label} ({show(o.content_l, 'litre')}); planned {show(o.planned_min, 'minutes')}"),
    ]


def _gas(mmhg: float, units: Units) -> tuple[str, str]:
    """(number, unit) of a gas pressure, or the words for no alveolar ventilation."""
    return split(mmhg, "gas", units) if math.isfinite(mmhg) else (gas_or_none(mmhg, units), "")
