"""The declaration of resources/machines.toml (collected in ventset.datafiles.FILES with every other file).

Kept here because ventset/datafiles.py is at its size limit; it uses only the schema descriptors and the words
of ``ventset.machines.kinds``.
"""

from __future__ import annotations

from typing import Any

from ventset.machines.kinds import BREATHS, CONTROLS, DRIVES, OPTIONAL_CONTROLS, PEEP_WITHOUT_CONTROL
from ventset.schema import (
    Choice,
    Entries,
    FileSchema,
    Flag,
    Number,
    Section,
    Source,
    SourcedNumber,
    Table,
    TableList,
    Text,
    Where,
)

GRID_TOLERANCE = 1e-6  # a range end counts as on the step grid within this share of a step (rounding guard)


def on_grid(x: float, step: float) -> bool:
    """True when ``x`` is a whole number of steps (within GRID_TOLERANCE of a step)."""
    return abs(x / step - round(x / step)) < GRID_TOLERANCE


def _control_range(v: dict[str, Any], at: Where) -> None:
    """min < max; min and max are whole numbers of steps; the unit is one the control may be shown in"""
    lo, hi, step = v["min"], v["max"], v["step"]
    if lo >= hi:
        raise at.at("min").fail(f"{lo:g} must be below max {hi:g}")
    for name, x in (("min", lo), ("max", hi)):
        if not on_grid(x, step):
            raise at.at(name).fail(f"{x:g} is not a whole number of steps of {step:g}")
    units = CONTROLS[v["control"]][0]
    if v["unit"] not in units:
        raise at.at("unit").fail(f"must be {' or '.join(units)} for control {v['control']!r} (got {v['unit']!r})")


def _class_controls(v: dict[str, Any], at: Where) -> None:
    """the controls are the ones the breath kind needs (one of each group) plus optional PEEP and pressure
    limit, none twice; a demand valve states its flow; an electric or hand-worked machine uses no driving gas"""
    kinds = [c["control"] for c in v["controls"]]
    twice = sorted({k for k in kinds if kinds.count(k) > 1})
    if twice:
        raise at.at("controls").fail(f"lists {twice[0]!r} more than once")
    groups, _ = BREATHS[v["breath"]]
    for group in groups:
        found = [k for k in group if k in kinds]
        if len(found) != 1:
            raise at.at("controls").fail(f"needs exactly one of {', '.join(group)} for breath {v['breath']!r} "
                                         f"(found {len(found)})")
    allowed = {k for g in groups for k in g} | set(OPTIONAL_CONTROLS)
    extra = [k for k in kinds if k not in allowed]
    if extra:
        raise at.at("controls").fail(f"{extra[0]!r} is not a control of breath {v['breath']!r}")
    if (v["breath"] == "demand") != (v["valve_flow_l_min"] is not None):
        raise at.at("valve_flow_l_min").fail("is needed for breath 'demand' and only there")
    if v["drive"] != "gas" and v["driving_gas_ve_multiple"].value != 0:
        raise at.at("driving_gas_ve_multiple").fail(f"must be 0 for drive {v['drive']!r}")


def _supplies_exist(v: dict[str, Any], at: Where) -> None:
    """every class's usual_supply is a key of [supplies]"""
    for key, cls in v["classes"].items():
        if cls["usual_supply"] not in v["supplies"]:
            raise at.enter(f"machine class {key!r}").at("usual_supply").fail(
                f"{cls['usual_supply']!r} is not in [supplies] ({', '.join(v['supplies'])})")


CONTROL_FIELDS = (
    Choice("control", choices=tuple(CONTROLS), help="which control (see ventset/machines/kinds.py)"),
    Text("label", help="the name shown beside the dial (ventset's own wording, no product's)"),
    Choice("unit", choices=tuple(sorted({u for units, _ in CONTROLS.values() for u in units})),
           help="unit the control is read in"),
    Number("min", lo=0, help="lowest setting (a whole number of steps)"),
    Number("max", lo=0, lo_open=True, help="highest setting (a whole number of steps)"),
    Number("step", lo=0, lo_open=True, help="smallest change the control makes (its resolution)"),
    Source(),
)

CLASS_FIELDS = (
    Text("label", help="the class, described by how it works (never a product)"),
    Choice("breath", choices=tuple(BREATHS), help="how the breath is set (ventset/machines/kinds.py)"),
    Text("description", help="one sentence on how it works and its traps"),
    Choice("drive", choices=DRIVES, help="what moves the gas"),
    SourcedNumber("driving_gas_ve_multiple", unit="× VE", lo=0, hi=3,
                  help="driving gas used, as a multiple of the minute volume the machine delivers (0: none). "
                       "Allowed 0-3: bench data stay below 2 × VE (a guard)"),
    Table("fresh_gas_coupling", help="whether fresh gas flowing during inspiration adds to the breath (FGF × Ti)",
          fields=(Flag("value", help="true: fresh gas adds to the breath"), Source())),
    SourcedNumber("internal_gas_ml", unit="mL", lo=0, hi=100000,
                  help="gas on the patient side inside the machine and its hose, not counted in the circuit; "
                       "it compresses by V/PB per cmH2O (Boyle). Allowed up to 100 L (a guard)"),
    Choice("peep_without_control", choices=PEEP_WITHOUT_CONTROL, required=False, default="none",
           help="with no PEEP control: a valve added on the expiratory limb holds the plan's PEEP, or none"),
    Flag("own_gas_path", required=False, default=False,
         help="true when the breath comes from the machine's own supply, not through a breathing circuit"),
    SourcedNumber("valve_flow_l_min", unit="L/min", lo=0, hi=1000, lo_open=True, required=False, default=None,
                  help="demand valve: its flow while held open (the breath is flow × press time)"),
    Flag("cycles_after_disconnection", required=False, default=False,
         help="true when the machine keeps moving after a disconnection (a leak is not seen)"),
    Text("usual_supply", help="key of the oxygen supply usually found with this class ([supplies])"),
    TableList("controls", min_items=2, fields=CONTROL_FIELDS, checks=(_control_range,),
              help="the controls in the order they are set"),
    Source(),
)

MACHINES = FileSchema("machines.toml", "ventilator classes, their controls and oxygen supplies", doc=(
    "Generic classes of ventilator described by how they work, never by any product: each control's typical "
    "range and step (common practice unless cited), how the breath is set, whether fresh gas adds to it, the "
    "driving gas and the gas inside the machine. `ventset/machines/` turns a plan's ideal settings into the "
    "nearest settings on these controls and evaluates them as dialled. Ranges are typical; a clinic's own "
    "machine may differ, so the plan says when a setting is at the end of a range."), fields=(
    Section("thresholds", help="Thresholds of the machine cautions.", fields=(
        SourcedNumber("paco2_shift_caution_mmhg", unit="mmHg", lo=0, hi=20, lo_open=True,
                      help="rounding to the controls moves the expected PaCO2 by more than this: caution"),
        SourcedNumber("coupling_share_caution", lo=0, hi=1, lo_open=True,
                      help="fresh gas adds more than this share of the breath: caution"),
        SourcedNumber("planned_duration_min", unit="min", lo=0, hi=2880, lo_open=True,
                      help="default planned duration for the oxygen supply check (up to 48 h, a guard)"),
    )),
    Entries("supplies", label="oxygen supply", help="Oxygen supplies (typical sizes).", fields=(
        Text("label", help="name shown to the user"),
        SourcedNumber("content_l", unit="L", lo=0, hi=100000, lo_open=True,
                      help="free gas when full (litres at room pressure)"))),
    Entries("classes", label="machine class", help="Ventilator classes.", fields=CLASS_FIELDS,
            checks=(_class_controls,)),
), checks=(_supplies_exist,))
