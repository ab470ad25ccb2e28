"""``ventset machines [--json]``: the ventilator classes, their controls, ranges and steps."""

from __future__ import annotations

import argparse

from ventset.cli_support import print_json


def register(sub, add_request_options) -> dict:
    """Add ``machines`` to the ``ventset`` command line."""
    p = sub.add_parser("machines", help="list the ventilator classes and their controls",
                       description="The generic ventilator classes a plan can be dialled on ('ventset plan ... "
                                   "--machine KEY'): how each sets the breath, its controls with their ranges and "
                                   "steps, and its driving gas.")
    p.add_argument("--json", action="store_true", help="print a JSON list")
    return {"machines": _cmd_machines}


def _cmd_machines(ns: argparse.Namespace) -> int:
    from ventset.machines.data import load_machines
    from ventset.machines.output import class_to_dict

    machines = load_machines()
    if ns.json:
        print_json([class_to_dict(m) for m in machines.classes.values()])
        return 0
    for m in machines.classes.values():
        gas = (f"driving gas {m.driving_gas_ve_multiple.value:g} × minute volume" if m.driving_gas_ve_multiple.value
               else "no driving gas")
        coupled = "fresh gas adds to the breath" if m.coupled else "fresh gas does not add to the breath"
        print(f"{m.key}  {m.label}")
        print(f"    {m.description}")
        print(f"    {gas}; {coupled}")
        for c in m.controls:
            print(f"    {c.label:<30}{c.shown(c.min)} to {c.shown(c.max)} in steps of {c.shown(c.step)}  [{c.source}]")
    print(f"{len(machines.classes)} classes, described by how they work; ranges are typical, not any one machine's.")
    return 0
