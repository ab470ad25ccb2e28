"""The plan stage after the ideal settings: the plan on the chosen machine class (``circuit.machine``).

With no machine chosen the plan is returned unchanged. Otherwise the ideal settings are dialled on the class's
controls (ventset.machines.dial), the dialled settings are evaluated through ventset.planner.plan_at on the
patient as the machine changes it (mode, PEEP, pressure limit, compressible volume, Ti), oxygen use and the
supply are added, and the machine's cautions are merged into the plan's.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import TYPE_CHECKING

from ventset.errors import InputError
from ventset.library import Library
from ventset.machines.cautions import machine_cautions
from ventset.machines.data import MachineClass, Machines, load_machines
from ventset.machines.dial import Delivery, dial, make_rig
from ventset.machines.result import MachineSettings
from ventset.machines.supply import oxygen_use
from ventset.model import Assumption, Plan
from ventset.stages.trail import note

if TYPE_CHECKING:
    from ventset.partslib_machines import ClinicMachine


def find_machine(key: str, machines: Machines | None = None, clinic: Sequence[ClinicMachine] | None = None
                 ) -> MachineClass:
    """The class or clinic machine for ``key``: a class by key or label, else a clinic machine by name (case and
    spacing aside), else a unique part of either; InputError naming 'machine' otherwise. ``clinic`` defaults to
    this computer's clinic machines, read only when ``key`` is not a class (a stored plan names a class by key)."""
    mlib = machines or load_machines()
    exact = [m for m in mlib.matches(key) if key.strip().lower() in (m.key, m.label.lower())]
    if exact:
        return exact[0]
    own, unread = _clinic(clinic)
    from ventset.partslib_model import name_key

    mine = [m for m in own if name_key(m.name) == name_key(key)]
    if mine:
        return mine[0].as_machine(mlib)
    part = name_key(key)
    classes = [m.key for m in mlib.matches(key)]
    names = [m.name for m in own if part and part in name_key(m.name)]
    hits = [*classes, *names]
    if len(hits) > 1:
        said = [f"{len(classes)} ventilator classes ({', '.join(classes)})"] if classes else []
        said += [f"{len(names)} of the clinic's machines ({', '.join(names)})"] if names else []
        raise InputError("machine", key, f"matches {' and '.join(said)}; give one key or name")
    if hits:
        return find_machine(hits[0], mlib, own)
    if unread:
        raise InputError("machine", key, f"is not a ventilator class, and the clinic's machines cannot be read "
                                         f"({unread})")
    raise InputError("machine", key, "is not a ventilator class or one of the clinic's machines; run 'ventset "
                                     "machines' for the list")


def _clinic(clinic: Sequence[ClinicMachine] | None) -> tuple[Sequence[ClinicMachine], str]:
    """The clinic machines given, else this computer's; and why they could not be read ('' when they could)."""
    if clinic is not None:
        return clinic, ""
    from ventset.errors import VentsetError
    from ventset.partslib import clinic_machines

    try:
        return clinic_machines(), ""
    except VentsetError as err:
        return (), str(err)


# ventset.planner.plan_at, handed in by the planner (this module does not import the planner: no cycle).
EvaluateAt = Callable[..., Plan]


def dialled_plan(plan: Plan, dv: Delivery, library: Library, plan_at: EvaluateAt) -> Plan | None:
    """``plan``'s patient evaluated at the dialled breath (None when its timing leaves no time to breathe out)."""
    b, s = plan.basis, dv.subject
    if b is None:  # pragma: no cover - every plan from planner.plan has its basis
        return None
    mech = replace(b.mechanics, peep_cmh2o=s.peep_cmh2o, pressure_limit_cmh2o=s.pressure_limit_cmh2o)
    basis = replace(b, inputs=replace(b.inputs, mode=s.mode), timing=s.timing, mechanics=mech,
                    system=replace(b.system, compressible_ml_cmh2o=s.compressible_ml_cmh2o))
    try:
        return plan_at(replace(plan, basis=basis, subject=s), dv.evaluation.vt_ml, dv.evaluation.rate_per_min,
                       library)
    except InputError:
        return None


def on_machine(plan: Plan, machine: MachineClass, library: Library, plan_at: EvaluateAt,
               machines: Machines | None = None) -> MachineSettings:
    """``plan`` (made by ventset.planner.plan) dialled on ``machine``, with its cautions; ``plan_at`` is
    ventset.planner.plan_at."""
    mlib = machines or load_machines()
    rig = make_rig(plan, machine)
    d = dial(plan, rig)
    notes = (_compressible_note(machine, rig.machine_compressible_ml_cmh2o),
             note("machine_coupling", "Fresh gas added to the breath", "yes" if machine.coupled else "no", "",
                  machine.coupling_source))
    o2 = oxygen_use(plan, machine, d.delivery, mlib)
    ms = MachineSettings(machine, d.settings, d.delivery, dialled_plan(plan, d.delivery, library, plan_at),
                         d.aim_paco2_mmhg, rig, o2, assumptions=(*notes, *o2.assumptions))
    th = {k: v.value for k, v in mlib.thresholds.items()}
    return replace(ms, cautions=tuple(machine_cautions(ms, plan, th)))


def _compressible_note(machine: MachineClass, ml_cmh2o: float) -> Assumption:
    if machine.compressible_ml_cmh2o is not None:
        return note("machine_compressible", f"Compressible volume of the machine ({machine.label})", ml_cmh2o,
                    "mL/cmH2O", machine.compressible_ml_cmh2o.source)
    gas = machine.internal_gas_ml
    return note("machine_compressible", f"Gas inside the machine ({machine.label})", gas.value, "mL",
                f"{gas.source}; compresses by V/PB (Boyle): {ml_cmh2o:.3g} mL/cmH2O")


def machine_stage(plan: Plan, library: Library, plan_at: EvaluateAt) -> Plan:
    """The plan with its machine section and the machine's cautions, or ``plan`` unchanged with no machine."""
    from ventset.cautions import sort_cautions

    key = plan.request.circuit.machine
    if not key:
        return plan
    ms = on_machine(plan, find_machine(key), library, plan_at)
    return replace(plan, machine=ms, cautions=sort_cautions([*plan.cautions, *ms.cautions]))


def rank_classes(plan: Plan, library: Library, plan_at: EvaluateAt, machines: Machines | None = None,
                 clinic: Sequence[MachineClass] = ()) -> list[MachineSettings]:
    """Every class (and the clinic's machines, ``clinic``) with ``plan`` dialled on it, best first: fewest
    dangers, then fewest cautions from the machine, then the smallest move of the expected PaCO2 from the ideal."""
    mlib = machines or load_machines()
    found = [on_machine(plan, m, library, plan_at, mlib) for m in (*clinic, *mlib.classes.values())]

    def key(ms: MachineSettings) -> tuple[int, int, float]:
        sev = [c.severity for c in ms.cautions]
        shift = abs(ms.expected_paco2_mmhg - ms.aim_paco2_mmhg)
        return sev.count("danger"), sev.count("caution"), shift if shift == shift else float("inf")

    return sorted(found, key=key)
