"""What is said when a machine class cannot do what the plan asks, or changes it: caution templates (the style of
ventset.cautions: numbers named by unit suffix, words apart), every code containing MACHINE. Thresholds in
resources/machines.toml [thresholds].

A setting held at the end of a control's range is always said, with the setting and what it gives; nothing is
limited silently.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from ventset.cautions import caution
from ventset.machines.dial import Setting
from ventset.machines.result import MachineSettings
from ventset.model import Caution, Plan

Rule = Callable[[MachineSettings, Plan, dict[str, float]], list[Caution]]


def _range_words(s: Setting, label: str) -> dict[str, str]:
    c = s.control
    return {"machine": label, "control": c.label, "needed": c.wanted(s.ideal), "lo": c.shown(c.min),
            "hi": c.shown(c.max), "setting": c.shown(s.value)}


def out_of_range(ms: MachineSettings, plan: Plan, th: dict[str, float]) -> list[Caution]:
    """A control whose ideal lies outside its range: held at the nearest end, with what that gives."""
    out = []
    sizing = ms.machine.sizing
    paco2 = ms.expected_paco2_mmhg
    gives = ("it gives an expected PaCO2 of {paco2_mmhg} (ideal {ideal_mmhg})" if math.isfinite(paco2) else
             "no breath is larger than the dead space: no alveolar ventilation")
    for s in ms.settings:
        if s.in_range:
            continue
        words = _range_words(s, ms.machine.label)
        low = s.ideal < s.control.min
        if s.control.kind == sizing:
            code = "MACHINE_PATIENT_TOO_SMALL" if low else "MACHINE_PATIENT_TOO_LARGE"
            template = ("{machine} cannot reach this patient: {control} would need {needed}, but the class goes "
                        + ("no lower than {lo}" if low else "no higher than {hi}") + ". Set at {setting}, " + gives
                        + ". Use a machine made for this size of patient.")
            out.append(caution("danger", code, template, words, paco2_mmhg=paco2,
                               ideal_mmhg=ms.aim_paco2_mmhg))
        else:
            template = ("{machine}: {control} would be {needed}, outside the class's {lo} to {hi}; it is set to "
                        "{setting} and the breath re-sized, so " + gives + ".")
            out.append(caution("caution", "MACHINE_CONTROL_OUT_OF_RANGE", template, words, paco2_mmhg=paco2,
                               ideal_mmhg=ms.aim_paco2_mmhg))
    return out


def rounding_shift(ms: MachineSettings, plan: Plan, th: dict[str, float]) -> list[Caution]:
    """The nearest steps move the expected PaCO2 by more than the threshold (all controls in range)."""
    paco2, ideal = ms.expected_paco2_mmhg, ms.aim_paco2_mmhg
    limit = th["paco2_shift_caution_mmhg"]
    if not ms.all_in_range or not math.isfinite(paco2) or abs(paco2 - ideal) <= limit:
        return []
    return [caution("caution", "MACHINE_ROUNDING_SHIFT",
                    "{machine}: the nearest settings give an expected PaCO2 of {paco2_mmhg} against "
                    "{ideal_mmhg} at the ideal settings (more than {limit_mmhg} apart): its steps are coarse for "
                    "this patient. Titrate to EtCO2 and a blood gas.", {"machine": ms.machine.label},
                    paco2_mmhg=paco2, ideal_mmhg=ideal, limit_mmhg=limit)]


def coupling(ms: MachineSettings, plan: Plan, th: dict[str, float]) -> list[Caution]:
    """Fresh gas adds FGF × Ti to each breath."""
    dv = ms.delivery
    if dv.coupled_ml <= 0:
        return []
    share = dv.coupled_ml / dv.evaluation.vt_ml if dv.evaluation.vt_ml > 0 else math.inf
    sev = "caution" if share > th["coupling_share_caution"] else "info"
    return [caution(sev, "MACHINE_FRESH_GAS_COUPLING",
                    "Fresh gas flowing during inspiration adds {coupled_ml} to each breath (FGF {fgf_ml_min} × Ti "
                    "{ti_s}), {share_percent} of the {vt_ml} the patient receives; the volume control is set that "
                    "much lower. Changing the fresh gas flow changes the breath.", coupled_ml=dv.coupled_ml,
                    fgf_ml_min=ms.rig.fresh_gas_ml_min, ti_s=dv.evaluation.ti_s, share_percent=share * 100,
                    vt_ml=dv.evaluation.vt_ml)]


def peep(ms: MachineSettings, plan: Plan, th: dict[str, float]) -> list[Caution]:
    """No PEEP control: a valve on the expiratory limb, or no PEEP at all."""
    want = plan.pressures.peep_cmh2o
    if ms.machine.control("peep") is not None or want <= 0:
        return []
    if ms.machine.peep_without_control == "add_on_valve":
        return [caution("info", "MACHINE_PEEP_VALVE",
                        "{machine}: no PEEP control; fit a PEEP valve of {peep_cmh2o} on the expiratory limb "
                        "(the dialled settings assume it).", {"machine": ms.machine.label}, peep_cmh2o=want)]
    return [caution("caution", "MACHINE_NO_PEEP",
                    "{machine}: holds no PEEP, so the settings are evaluated at 0 cmH2O instead of {peep_cmh2o}. "
                    "Expect less recruited lung and a lower PaO2.", {"machine": ms.machine.label}, peep_cmh2o=want)]


def breath_kind(ms: MachineSettings, plan: Plan, th: dict[str, float]) -> list[Caution]:
    """What the class's way of making a breath means for watching it."""
    m, dv = ms.machine, ms.delivery
    words = {"machine": m.label}
    if dv.cycling == "never":
        return [caution("danger", "MACHINE_DOES_NOT_CYCLE",
                        "{machine}: the airway does not reach the cycling pressure within {ti_s}, so inspiration "
                        "would not end. Raise the flow or lower the cycling pressure.", words, ti_s=dv.evaluation.ti_s)]
    if dv.cycling == "at_once":
        return [caution("danger", "MACHINE_CYCLES_AT_ONCE",
                        "{machine}: the flow alone reaches the cycling pressure at once, so almost no breath is "
                        "delivered. Lower the flow or raise the cycling pressure.", words)]
    found = []
    if m.breath in ("pressure_cycled", "pressure", "manual"):
        found.append(caution("info", "MACHINE_VOLUME_FOLLOWS_LUNG",
                             "{machine}: the tidal volume is not set; it follows compliance (less when the "
                             "abdomen is insufflated or the patient is on its back), and a leak changes it. Watch "
                             "the chest and the capnograph.", words))
    if m.cycles_after_disconnection:
        found.append(caution("info", "MACHINE_DISCONNECTION_HIDDEN",
                             "{machine}: keeps moving after a disconnection; rely on the pressure and capnograph "
                             "alarms, not on the bellows.", words))
    return found


def timing(ms: MachineSettings, plan: Plan, th: dict[str, float]) -> list[Caution]:
    """The dialled inspiratory time leaves too little time to breathe out."""
    if ms.dialled is not None:
        return []
    ev = ms.evaluation
    return [caution("danger", "MACHINE_TIMING",
                    "{machine}: the dialled inspiratory time {ti_s} leaves too little time to breathe out at "
                    "{rate_per_min} (cycle {cycle_s}).", {"machine": ms.machine.label}, ti_s=ev.ti_s,
                    rate_per_min=ev.rate_per_min, cycle_s=60.0 / ev.rate_per_min)]


def supply(ms: MachineSettings, plan: Plan, th: dict[str, float]) -> list[Caution]:
    """The oxygen supply runs out before the planned duration; driving gas said when it is used."""
    o = ms.oxygen
    words = {"machine": ms.machine.label, "supply": o.supply_label}
    found = []
    if o.driving_gas_l_min > 0 and o.driving_oxygen_l_min == 0:
        found.append(caution("info", "MACHINE_DRIVING_AIR",
                             "{machine}: driven by air, about {driving_l_min}, not drawn from the oxygen supply; "
                             "keep the air supply (compressor or cylinder) running for the whole anaesthetic.",
                             words, driving_l_min=o.driving_gas_l_min))
    elif o.driving_gas_l_min > 0 and o.fresh_gas_l_min > 0:
        found.append(caution("info", "MACHINE_DRIVING_GAS",
                             "{machine}: uses about {driving_l_min} of driving gas besides {fresh_l_min} of fresh "
                             "gas, so {supply} lasts about {supply_min}, against {fresh_only_min} on fresh gas alone.",
                             words, driving_l_min=o.driving_gas_l_min, fresh_l_min=o.fresh_gas_l_min,
                             supply_min=o.supply_min, fresh_only_min=o.fresh_only_min))
    if o.supply_min < o.planned_min:
        found.append(caution("caution", "MACHINE_SUPPLY_SHORT",
                             "Oxygen use {use_l_min} empties {supply} ({content_l}) in about {supply_min}, before "
                             "the planned {planned_min}: have a full cylinder connected or ready, or use a machine "
                             "without driving gas.", words, use_l_min=o.use_l_min, content_l=o.content_l,
                             supply_min=o.supply_min, planned_min=o.planned_min))
    return found


def as_dialled(ms: MachineSettings, plan: Plan, th: dict[str, float]) -> list[Caution]:
    """Cautions of the dialled plan (caution or danger) that the ideal plan does not have, said for the machine."""
    if ms.dialled is None:
        return []
    have = {c.code for c in plan.cautions}
    return [Caution(c.severity, f"MACHINE_DIALLED_{c.code}", "{machine}, as dialled: " + c.template, c.values,
                    (*c.texts, ("machine", ms.machine.label)))
            for c in ms.dialled.cautions if c.severity != "info" and c.code not in have]


RULES: tuple[Rule, ...] = (out_of_range, timing, breath_kind, rounding_shift, coupling, peep, supply, as_dialled)


def machine_cautions(ms: MachineSettings, plan: Plan, thresholds: dict[str, float]) -> list[Caution]:
    """Every machine rule on ``ms`` (unsorted; the stage merges them with the plan's)."""
    return [c for rule in RULES for c in rule(ms, plan, thresholds)]
