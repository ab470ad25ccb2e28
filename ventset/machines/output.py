"""The plan on a machine as JSON (docs/plan-json.md, "machine") and the class list of ``ventset machines``."""

from __future__ import annotations

from collections.abc import Callable

from ventset.machines.data import Control, MachineClass
from ventset.machines.result import MachineSettings


def control_to_dict(c: Control) -> dict:
    return {"name": c.label, "control": c.kind, "unit": c.unit, "min": c.min, "max": c.max, "step": c.step,
            "source": c.source}


def class_to_dict(m: MachineClass) -> dict:
    """One class (or clinic machine, "origin": "clinic") for ``ventset machines --json``."""
    out = {"key": m.key, "name": m.label, "class": m.class_of, "origin": "clinic" if m.is_clinic else "class",
           "breath": m.breath, "description": m.description, "drive": m.drive,
           "driving_gas": m.driving_gas if m.drive == "gas" else None,
           "driving_gas_ve_multiple": m.driving_gas_ve_multiple.value, "fresh_gas_coupled": m.coupled,
           "internal_gas_ml": m.internal_gas_ml.value,
           "compressible_ml_cmh2o": m.compressible_ml_cmh2o.value if m.compressible_ml_cmh2o else None,
           "controls": [control_to_dict(c) for c in m.controls]}
    if m.is_clinic:
        out["note"] = m.note
    return out


def machine_to_dict(ms: MachineSettings, number: Callable[[float], object]) -> dict:
    """The "machine" block of the plan JSON: the controls as dialled and what they give. ``number`` is
    ventset.report.json_number (rounded, None when not finite); handed in so this module does not import it."""
    m, ev, dv, o = ms.machine, ms.evaluation, ms.delivery, ms.oxygen
    _num = number
    return {
        "key": m.key, "name": m.label, "class": m.class_of, "origin": "clinic" if m.is_clinic else "class",
        "breath": m.breath,
        "controls": [{"name": s.control.label, "control": s.control.kind, "value": s.value, "unit": s.control.unit,
                      "min": s.control.min, "max": s.control.max, "step": s.control.step, "in_range": s.in_range,
                      "ideal": _num(s.ideal)} for s in ms.settings],
        "delivered_tidal_volume_ml": _num(ev.vt_ml),
        "machine_volume_ml": _num(dv.machine_ml),
        "fresh_gas_coupled_ml": _num(dv.coupled_ml),
        "compressed_ml": _num(ev.compressed_ml),
        "compressible_ml_cmh2o": _num(ms.rig.compressible_ml_cmh2o),
        "rate_per_min": _num(ev.rate_per_min), "ti_s": _num(ev.ti_s), "te_s": _num(ev.te_s),
        "peak_cmh2o": _num(ev.peak_cmh2o), "plateau_cmh2o": _num(ev.plateau_cmh2o), "peep_cmh2o": _num(ev.peep_cmh2o),
        "expected_paco2_mmhg": _num(ev.paco2_mmhg), "expected_etco2_mmhg": _num(ev.etco2_mmhg),
        "ideal_paco2_mmhg": _num(ms.aim_paco2_mmhg),
        "fresh_gas_l_min": _num(o.fresh_gas_l_min), "driving_gas_l_min": _num(o.driving_gas_l_min),
        "driving_gas": o.driving_gas if o.driving_gas_l_min > 0 else None,
        "oxygen_use_l_min": _num(o.use_l_min), "supply": o.supply_key, "supply_l": _num(o.content_l),
        "supply_entered": o.entered, "supply_minutes": _num(o.supply_min), "planned_minutes": _num(o.planned_min),
    }
