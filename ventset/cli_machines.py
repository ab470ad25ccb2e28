"""``ventset machines [--json]``: the ventilator classes and the clinic's own machines, their controls, ranges and
steps; ``--species/--mass`` ranks them for a patient; ``add|edit|remove|export|import`` keep the clinic's
machines (ventset.cli_machines_clinic)."""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from typing import TYPE_CHECKING

from ventset.cli_support import print_json, say

if TYPE_CHECKING:
    from ventset.machines.data import MachineClass


def register(sub, add_request_options) -> dict:
    """Add ``machines`` to the ``ventset`` command line."""
    from ventset.cli_machines_clinic import register_commands

    p = sub.add_parser("machines", help="list the ventilator classes and the clinic's machines; add, edit, remove, "
                                        "export or import the clinic's machines",
                       description="The generic ventilator classes, and the clinic's own machines made from them, "
                                   "that a plan can be dialled on ('ventset plan ... --machine KEY_OR_NAME'): how "
                                   "each sets the breath, its controls with their ranges and steps, and its driving "
                                   "gas. 'ventset machines add NAME --class KEY ...' adds one of the clinic's.")
    p.add_argument("--json", action="store_true", help="print a JSON list")
    p.add_argument("--species", help="with --mass: rank the classes and the clinic's machines for this patient, "
                                     "best first")
    p.add_argument("--mass", metavar="VALUE", help="body mass of that patient (e.g. '20 kg')")
    register_commands(p)
    return {"machines": _cmd_machines}


def _clinic(strict: bool) -> tuple[list[MachineClass], bool]:
    """The clinic's machines as classes, and whether they were read; a damaged library is said (or raised when
    ``strict``), never taken as empty without a word."""
    from ventset.errors import VentsetError
    from ventset.partslib import clinic_machines

    try:
        own = clinic_machines()
    except VentsetError as err:
        if strict:
            raise
        say(f"warning: the clinic's machines are not listed: {err}")
        return [], False
    found = []
    for m in own:
        try:
            found.append(m.as_machine())
        except VentsetError as err:
            if strict:
                raise
            say(f"warning: {err}")
    return found, True


def _cmd_rank(ns: argparse.Namespace) -> int:
    """Every class and clinic machine for one patient, best first, with its dial settings and expected PaCO2."""
    from ventset.errors import InputError
    from ventset.fields import request_from_inputs
    from ventset.library import load_library
    from ventset.machines.stage import rank_classes
    from ventset.model import STANDING_NOTICE
    from ventset.planner import plan, plan_at
    from ventset.units import fmt

    lib = load_library()
    if not ns.species or not ns.mass:
        raise InputError("species" if not ns.species else "mass", "", "give both --species and --mass to rank "
                                                                       "the classes for a patient")
    request, errors = request_from_inputs({"species": ns.species, "mass": ns.mass}, library=lib)
    if request is None:
        raise errors[0]
    own, read = _clinic(strict=ns.json)
    ranked = rank_classes(plan(request, lib), lib, plan_at, clinic=own)
    if ns.json:
        from ventset.machines.output import machine_to_dict
        from ventset.report import cautions_to_json, json_number

        print_json([{**machine_to_dict(ms, json_number), "cautions": cautions_to_json(ms.cautions)}
                    for ms in ranked])
        return 0
    for ms in ranked:
        worst = [c.severity for c in ms.cautions]
        dials = ", ".join(f"{s.control.label} {s.control.shown(s.value)}" for s in ms.settings)
        mark = "clinic  " if ms.machine.is_clinic else ""
        print(f"{mark}{ms.machine.key:<28}{worst.count('danger')} danger, {worst.count('caution')} caution; "
              f"PaCO2 {fmt(ms.expected_paco2_mmhg)} mmHg (ideal {fmt(ms.aim_paco2_mmhg)}): {dials}")
    print("Best first: fewest dangers, then cautions, then the smallest change of PaCO2; 'ventset plan ... "
          "--machine KEY_OR_NAME' gives the cautions and the full plan.")
    print("NOTICE: " + STANDING_NOTICE)
    return 0 if read else 1


def _print_machine(m: MachineClass) -> None:
    gas = (f"driving gas ({m.driving_gas}) {m.driving_gas_ve_multiple.value:g} × minute volume"
           if m.driving_gas_ve_multiple.value else "no driving gas")
    coupled = "fresh gas adds to the breath" if m.coupled else "fresh gas does not add to the breath"
    if m.is_clinic:
        print(f"{m.key}  (the clinic's, made from {m.class_key}: {m.class_label})")
        if m.note:
            print(f"    {m.note}")
        if m.compressible_ml_cmh2o is not None:
            print(f"    compressible volume {m.compressible_ml_cmh2o.value:g} mL/cmH2O (measured)")
    else:
        print(f"{m.key}  {m.label}")
        print(f"    {m.description}")
    print(f"    {gas}; {coupled}")
    for c in m.controls:
        print(f"    {c.label + ' [' + c.kind + ']':<44}{c.shown(c.min)} to {c.shown(c.max)} in steps of "
              f"{c.shown(c.step)}  [{c.source}]")


def _list(classes: Sequence[MachineClass], own: Sequence[MachineClass], read: bool) -> int:
    from ventset.partslib import library_path

    for m in classes:
        _print_machine(m)
    print(f"{len(classes)} classes, described by how they work; ranges are typical, not any one machine's.")
    print("")
    if own:
        print("THE CLINIC'S MACHINES")
        for m in own:
            _print_machine(m)
    elif read:
        print(f"The clinic has no machines of its own yet ({library_path()}); add one with 'ventset machines add "
              "NAME --class KEY [--min CONTROL=VALUE] ...'.")
    return 0 if read else 1


def _cmd_machines(ns: argparse.Namespace) -> int:
    from ventset.machines.data import load_machines
    from ventset.machines.output import class_to_dict

    if getattr(ns, "machines_command", None):
        from ventset.cli_machines_clinic import run

        return run(ns)
    if ns.species or ns.mass:
        return _cmd_rank(ns)
    machines = load_machines()
    own, read = _clinic(strict=ns.json)
    if ns.json:
        print_json([class_to_dict(m) for m in (*machines.classes.values(), *own)])
        return 0
    return _list(list(machines.classes.values()), own, read)
