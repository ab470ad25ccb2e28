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
    p.add_argument("--species", help="with --mass: rank the classes for this patient, best first")
    p.add_argument("--mass", metavar="VALUE", help="body mass of that patient (e.g. '20 kg')")
    return {"machines": _cmd_machines}


def _cmd_rank(ns: argparse.Namespace) -> int:
    """Every class for one patient, best first, with its dial settings and expected PaCO2."""
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
    ranked = rank_classes(plan(request, lib), lib, plan_at)
    if ns.json:
        from ventset.machines.output import machine_to_dict
        from ventset.report import cautions_to_json, json_number

        print_json([{**machine_to_dict(ms, json_number), "cautions": cautions_to_json(ms.cautions)}
                    for ms in ranked])
        return 0
    for ms in ranked:
        worst = [c.severity for c in ms.cautions]
        dials = ", ".join(f"{s.control.label} {s.control.shown(s.value)}" for s in ms.settings)
        print(f"{ms.machine.key:<28}{worst.count('danger')} danger, {worst.count('caution')} caution; "
              f"PaCO2 {fmt(ms.expected_paco2_mmhg)} mmHg (ideal {fmt(ms.aim_paco2_mmhg)}): {dials}")
    print("Best first: fewest dangers, then cautions, then the smallest change of PaCO2; 'ventset plan ... "
          "--machine KEY' gives the cautions and the full plan.")
    print("NOTICE: " + STANDING_NOTICE)
    return 0


def _cmd_machines(ns: argparse.Namespace) -> int:
    from ventset.machines.data import load_machines
    from ventset.machines.output import class_to_dict

    if ns.species or ns.mass:
        return _cmd_rank(ns)
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
