"""The clinic's own ventilators in the clinic library: named by the clinic, made from a ventilator class
(resources/machines.toml), with the clinic's own ranges and steps, compressible volume and driving gas.

``ClinicMachine.checked`` builds one from what a person entered (InputError naming the field: "Breaths per
minute step: 0 — must be above 0"); ``as_machine`` turns it into the ``MachineClass`` the planner dials on, so
a clinic machine is planned exactly as a class is, only with its own numbers. ``machine_from_dict`` /
``machine_to_dict`` are its layout in the clinic library file (docs/case-format.md, schema 2). No Qt here.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

from ventset.errors import InputError, register_labels
from ventset.textpolicy import check_text

if TYPE_CHECKING:
    from ventset.machines.data import Control, MachineClass, Machines

DRIVING_GASES = ("oxygen", "air")
# Largest setting a clinic may give a control, by the control's unit: guards against a slipped digit, not
# limits of any machine (from memory: above every class in machines.toml by a wide margin).
MAX_SETTING = {"mL": 20000.0, "L": 20.0, "L/min": 1000.0, "/min": 300.0, "s": 60.0, "cmH2O": 120.0, "1:E": 20.0}
MAX_STEPS = 100_000  # settings on one control (range ÷ step): a guard
MAX_DRIVING_MULTIPLE = 3.0  # as machines.toml (bench data stay below 2 × VE; a guard)
_PARSE_UNIT = {"mL": "mL", "L": "L", "L/min": "L/min", "/min": "1/min", "s": "s", "cmH2O": "cmH2O", "1:E": ""}
PARTS = ("min", "max", "step")
register_labels({"machine-class": "Ventilator class", "machine-control": "Control",
                 "driving-gas": "Driving gas", "driving-gas-use": "Driving gas use"})


@dataclass(frozen=True)
class ControlRange:
    """The clinic's range and step of one control, in the unit the class reads it in."""

    control: str
    min: float
    max: float
    step: float


@dataclass(frozen=True)
class ClinicMachine:
    """A ventilator of the clinic. ``controls`` holds the clinic's own ranges (controls not listed keep the
    class's); ``compressible_ml_cmh2o`` the measured compressible volume of the machine and its hose (None: from
    the class's internal gas); ``driving_gas`` 'oxygen' or 'air' for a gas-driven class (None otherwise);
    ``driving_gas_ve_multiple`` the measured driving-gas use (None: the class's)."""

    name: str
    machine_class: str
    controls: tuple[ControlRange, ...] = ()
    compressible_ml_cmh2o: float | None = None
    driving_gas: str | None = None
    driving_gas_ve_multiple: float | None = None
    note: str = ""

    @staticmethod
    def checked(name: object, machine_class: object, controls: Iterable[object] = (),
                compressible_ml_cmh2o: object = None, driving_gas: object = None,
                driving_gas_ve_multiple: object = None, note: object = "",
                machines: Machines | None = None) -> ClinicMachine:
        """Build a machine from user input; raises InputError naming the field."""
        from ventset.machines.data import load_machines
        from ventset.partslib_model import _clean_name, clean_text, name_key

        mlib = machines or load_machines()
        clean = _clean_name(name, "machine-name")
        for m in mlib.classes.values():
            if name_key(clean) in (name_key(m.key), name_key(m.label)):
                raise InputError("machine-name", clean, "is the name of a ventilator class; give the clinic's own "
                                                        "name for its machine")
        cls = _class(machine_class, mlib)
        ranges = _ranges(cls, controls)
        comp = None
        if compressible_ml_cmh2o is not None and compressible_ml_cmh2o != "":
            from ventset.fields import parse_field

            try:
                comp = parse_field("compressible-volume", compressible_ml_cmh2o)
            except InputError as err:
                raise err.named("Machine compressible volume") from None
        gas, multiple = _driving(cls, driving_gas, driving_gas_ve_multiple)
        return ClinicMachine(clean, cls.key, ranges, comp, gas, multiple, clean_text(note, "part-note"))

    def range_of(self, kind: str) -> ControlRange | None:
        return next((r for r in self.controls if r.control == kind), None)

    def as_machine(self, machines: Machines | None = None) -> MachineClass:
        """The class this machine is made from, with the clinic's name, ranges, compressible volume and gas."""
        from ventset.machines.data import load_machines
        from ventset.schema import Sourced

        mlib = machines or load_machines()
        cls = mlib.classes.get(self.machine_class)
        if cls is None:
            raise InputError("machine", self.name, f"is made from the ventilator class {self.machine_class!r}, which "
                                                   "this version does not have; edit it and choose a class")
        own = f"clinic machine '{self.name}': the clinic's own range and step"
        controls = tuple(replace(c, min=r.min, max=r.max, step=r.step, source=own) if (r := self.range_of(c.kind))
                         else c for c in cls.controls)
        comp = (None if self.compressible_ml_cmh2o is None else
                Sourced(self.compressible_ml_cmh2o, f"clinic machine '{self.name}': compressible volume as entered"))
        multiple = (cls.driving_gas_ve_multiple if self.driving_gas_ve_multiple is None else
                    Sourced(self.driving_gas_ve_multiple, f"clinic machine '{self.name}': driving gas use as entered"))
        return replace(cls, key=self.name, label=self.name, controls=controls, class_key=cls.key,
                       class_label=cls.label, driving_gas=self.driving_gas or "oxygen", compressible_ml_cmh2o=comp,
                       driving_gas_ve_multiple=multiple, note=self.note)

    def summary(self) -> str:
        """One line for lists and import conflicts."""
        bits = [self.machine_class]
        bits += [f"{r.control} {r.min:g}-{r.max:g} by {r.step:g}" for r in self.controls]
        if self.compressible_ml_cmh2o is not None:
            bits.append(f"{self.compressible_ml_cmh2o:g} mL/cmH2O")
        if self.driving_gas:
            use = f" {self.driving_gas_ve_multiple:g} × VE" if self.driving_gas_ve_multiple is not None else ""
            bits.append(f"driven by {self.driving_gas}{use}")
        if self.note:
            bits.append(self.note)
        return "; ".join(bits)


def _class(text: object, mlib: Machines) -> MachineClass:
    if not isinstance(text, str) or not text.strip():
        raise InputError("machine-class", "" if text is None else str(text),
                         "is needed: one of the classes 'ventset machines' lists")
    check_text("choice", text, label="Ventilator class")
    found = mlib.classes.get(text.strip()) or mlib.find(text)
    if found is None:
        raise InputError("machine-class", text, "is not a ventilator class (or matches several); give a key "
                                                "from 'ventset machines'")
    return found


def control_label(c: Control, part: str) -> str:
    """How a part of a control's range is named in a message: 'Breaths per minute step'."""
    return f"{c.label} {part}"


def number_in_unit(c: Control, part: str, value: object) -> float:
    """A min, max or step of control ``c`` in its unit ('1:2' accepted for the E of I:E)."""
    from ventset.units import parse_quantity

    label = control_label(c, part)
    if c.unit == "1:E" and isinstance(value, str) and value.strip().startswith("1:"):
        value = value.strip()[2:]
    if isinstance(value, bool) or value is None:
        raise InputError("machine-control", value, "must be a number", label=label)
    try:
        x = float(value) if isinstance(value, int | float) else parse_quantity(value, _PARSE_UNIT[c.unit], label)
    except OverflowError:
        x = math.inf
    except InputError as err:
        raise err.named(label) from None
    if not math.isfinite(x):
        raise InputError("machine-control", value, "is not a finite number", label=label)
    return x


def _one_range(c: Control, given: dict[str, object]) -> ControlRange:
    """The clinic's range of ``c`` from the parts given (the class's for the others), checked."""
    lo, hi, step = (number_in_unit(c, p, given[p]) if p in given else float(getattr(c, p)) for p in PARTS)
    shown = {"min": c.wanted(lo), "max": c.wanted(hi), "step": f"{step:g}"}
    if step <= 0:
        raise InputError("machine-control", shown["step"], "must be above 0", label=control_label(c, "step"))
    floor_ok = lo >= 0 if c.kind == "peep" else lo > 0
    if not floor_ok:
        why = "must be 0 or more" if c.kind == "peep" else "must be above 0 (a setting of 0 or less gives no breath)"
        raise InputError("machine-control", shown["min"], why, label=control_label(c, "min"))
    top = MAX_SETTING[c.unit]
    if hi > top:
        raise InputError("machine-control", shown["max"], f"must be at most {c.wanted(top)} (a guard against a "
                                                          "slipped digit)", label=control_label(c, "max"))
    if lo >= hi:
        raise InputError("machine-control", shown["min"], f"must be below the max ({shown['max']})",
                         label=control_label(c, "min"))
    from ventset.machines.filedecl import on_grid

    for part, x in (("min", lo), ("max", hi)):
        if not on_grid(x, step):
            raise InputError("machine-control", shown[part], f"is not a whole number of steps of {step:g}; "
                                                             "settings lie on the step", label=control_label(c, part))
    if (hi - lo) / step > MAX_STEPS:
        raise InputError("machine-control", shown["step"], f"gives more than {MAX_STEPS:,} settings; a dial has "
                                                           "fewer", label=control_label(c, "step"))
    return ControlRange(c.kind, lo, hi, step)


def find_control(cls: MachineClass, text: str) -> Control:
    """A control of ``cls`` by its kind ('rate') or its label (any case); InputError naming 'Control'."""
    t = text.strip().lower().replace("-", "_")
    found = next((c for c in cls.controls if t in (c.kind, c.label.lower())), None)
    if found is None:
        have = ", ".join(f"{c.kind} ({c.label})" for c in cls.controls)
        raise InputError("machine-control", text, f"is not a control of {cls.label}; it has {have}")
    return found


def _ranges(cls: MachineClass, controls: Iterable[object]) -> tuple[ControlRange, ...]:
    """The clinic's ranges: each a ControlRange or a dict {control, min?, max?, step?}; a control once."""
    out: dict[str, ControlRange] = {}
    for item in controls:
        if isinstance(item, ControlRange):
            item = {"control": item.control, "min": item.min, "max": item.max, "step": item.step}
        if not isinstance(item, dict) or not isinstance(item.get("control"), str) or set(item) - {"control", *PARTS}:
            raise InputError("machine-control", type(item).__name__, "needs a control and its min, max and step")
        c = find_control(cls, item["control"])
        if c.kind in out:
            raise InputError("machine-control", c.kind, "is given twice", label=c.label)
        out[c.kind] = _one_range(c, {p: item[p] for p in PARTS if p in item})
    return tuple(out[c.kind] for c in cls.controls if c.kind in out)


def _driving(cls: MachineClass, gas: object, multiple: object) -> tuple[str | None, float | None]:
    """The driving gas and its use (× VE) of a machine of ``cls``, checked."""
    if gas in (None, "", "none") and multiple in (None, "") and cls.drive != "gas":
        return None, None
    if gas in (None, "") and multiple in (None, ""):
        return "oxygen", None
    if cls.drive != "gas":
        field = "driving-gas" if gas not in (None, "") else "driving-gas-use"
        raise InputError(field, gas if field == "driving-gas" else multiple,
                         f"the class is driven by {'hand' if cls.drive == 'hand' else 'electricity'}; it uses no "
                         "driving gas")
    text = "oxygen" if gas in (None, "") else gas
    if not isinstance(text, str) or text.strip().lower() not in DRIVING_GASES:
        raise InputError("driving-gas", text, f"must be one of {', '.join(DRIVING_GASES)}")
    use = None
    if multiple not in (None, ""):
        from ventset.units import check_range, parse_quantity

        if isinstance(multiple, bool):
            raise InputError("driving-gas-use", multiple, "must be a number (× the minute volume)")
        use = check_range(parse_quantity(multiple, "", "driving-gas-use"), 0.0, MAX_DRIVING_MULTIPLE,
                          "driving-gas-use", "")
    return text.strip().lower(), use


# ------------------------------------------------------------------------------------------------------------
# the clinic library file (schema 2)
# ------------------------------------------------------------------------------------------------------------

MACHINE_KEYS = {"name", "class", "controls", "compressible_ml_cmh2o", "driving_gas", "driving_gas_ve_multiple",
                "note"}


def machine_to_dict(m: ClinicMachine) -> dict:
    return {"name": m.name, "class": m.machine_class,
            "controls": [{"control": r.control, "min": r.min, "max": r.max, "step": r.step} for r in m.controls],
            "compressible_ml_cmh2o": m.compressible_ml_cmh2o, "driving_gas": m.driving_gas,
            "driving_gas_ve_multiple": m.driving_gas_ve_multiple, "note": m.note}


def _plain_number(value: object, where: str) -> None:
    if value is not None and (isinstance(value, bool) or not isinstance(value, int | float)):
        raise ValueError(f"{where} must be a number or null")


def machine_from_dict(d: object, where: str) -> ClinicMachine:
    """A machine of a clinic library file; ValueError naming the entry and field."""
    if not isinstance(d, dict):
        raise ValueError(f"{where} must be an object")
    unknown = sorted(set(d) - MACHINE_KEYS)
    if unknown:
        raise ValueError(f"{where} has unknown fields: {', '.join(unknown)}")
    for key in ("compressible_ml_cmh2o", "driving_gas_ve_multiple"):
        _plain_number(d.get(key), f"{where}.{key}")
    controls = d.get("controls", [])
    if not isinstance(controls, list):
        raise ValueError(f"{where}.controls must be a list")
    for i, c in enumerate(controls):
        if not isinstance(c, dict) or set(c) != {"control", *PARTS}:
            raise ValueError(f"{where}.controls[{i}] needs control, min, max and step")
        for p in PARTS:
            if c[p] is None:
                raise ValueError(f"{where}.controls[{i}].{p} must be a number")
            _plain_number(c[p], f"{where}.controls[{i}].{p}")
    try:
        return ClinicMachine.checked(d.get("name"), d.get("class"), controls, d.get("compressible_ml_cmh2o"),
                                     d.get("driving_gas"), d.get("driving_gas_ve_multiple"), d.get("note", ""))
    except InputError as err:
        raise ValueError(f"{where} ({visible_name(d.get('name'))}): {err}") from None


def visible_name(name: object) -> str:
    from ventset.errors import visible

    return repr(visible(name, 40)) if isinstance(name, str) else "unnamed"
