"""``ventset machines add|edit|remove|export|import``: the clinic's own ventilators in the clinic library, in the
style of ``ventset clinic-parts`` (the same file, atomic saves, text policy and import conflict rules)."""

from __future__ import annotations

import argparse

from ventset import partslib
from ventset.cli_support import say
from ventset.errors import InputError
from ventset.partslib_machines import DRIVING_GASES, PARTS, ClinicMachine, find_control, machine_to_dict

RESETS = ("compressible-volume", "driving-gas", "driving-gas-use", "note")


def _entry_options(p: argparse.ArgumentParser) -> None:
    """The options of one clinic machine, shared by add and edit."""
    for part, what in (("min", "lowest setting"), ("max", "highest setting"), ("step", "smallest change")):
        p.add_argument(f"--{part}", action="append", default=[], metavar="CONTROL=VALUE",
                       help=f"the control's {what} on this machine, in the unit 'ventset machines' shows "
                            f"(e.g. 'rate=4'); repeat for each control. Not given: the class's")
    p.add_argument("--compressible-volume", metavar="VALUE",
                   help="measured compressible volume of the machine and its hose [mL/cmH2O] (default: from the "
                        "class's internal gas by Boyle)")
    p.add_argument("--driving-gas", choices=DRIVING_GASES,
                   help="what drives a gas-driven machine: oxygen (drawn from the oxygen supply; default) or air")
    p.add_argument("--driving-gas-use", metavar="MULTIPLE",
                   help="driving gas it uses, as a multiple of the minute volume it delivers (default: the class's)")
    p.add_argument("--note", help="a note (one line)")


def register_commands(p: argparse.ArgumentParser) -> None:
    """Add the clinic subcommands under ``ventset machines``."""
    sub = p.add_subparsers(dest="machines_command", metavar="{add,edit,remove,export,import}")
    a = sub.add_parser("add", help="add one of the clinic's ventilators, made from a class")
    a.add_argument("name", help="the clinic's name for it (at most 80 characters)")
    a.add_argument("--class", dest="machine_class", required=True, metavar="KEY",
                   help="the ventilator class it is made from (see 'ventset machines')")
    _entry_options(a)
    a.add_argument("--replace", action="store_true", help="replace a clinic machine of the same name")
    e = sub.add_parser("edit", help="change one of the clinic's ventilators (only what is given changes)")
    e.add_argument("name")
    e.add_argument("--class", dest="machine_class", metavar="KEY",
                   help="make it from another class (its own ranges are then dropped)")
    e.add_argument("--rename", metavar="NEW", help="a new name")
    _entry_options(e)
    e.add_argument("--reset", action="append", default=[], metavar="WHAT",
                   help=f"go back to the class's value: a control (its range and step) or one of {', '.join(RESETS)}")
    r = sub.add_parser("remove", help="remove one of the clinic's ventilators")
    r.add_argument("name")
    x = sub.add_parser("export", help="write the clinic's ventilators to a file to share")
    x.add_argument("file")
    i = sub.add_parser("import", help="merge the ventilators of a shared clinic library file into this computer's")
    i.add_argument("file")
    i.add_argument("--on-conflict", choices=partslib.CONFLICT_CHOICES, default="keep",
                   help="same name, different values: keep this computer's (default), import under a new name, or "
                        "replace this computer's")


def _pairs(option: str, items: list[str]) -> list[tuple[str, str]]:
    out = []
    for item in items:
        control, sep, value = item.partition("=")
        if not sep or not control.strip():
            raise InputError(option, item, "needs CONTROL=VALUE, e.g. 'rate=4'")
        out.append((control.strip(), value))
    return out


def _ranges(ns: argparse.Namespace, machine_class: str, start: dict[str, dict[str, object]]) -> list[dict]:
    """The control ranges from ``start`` (kind → parts) with the --min/--max/--step given applied."""
    from ventset.machines.stage import find_machine

    cls = find_machine(machine_class) if ns.min or ns.max or ns.step else None
    ranges = {k: dict(v) for k, v in start.items()}
    for part in PARTS:
        for control, value in _pairs(f"--{part}", getattr(ns, part)):
            assert cls is not None
            kind = find_control(cls, control).kind
            ranges.setdefault(kind, {"control": kind})[part] = value
    return list(ranges.values())


def _add(ns: argparse.Namespace, lib: partslib.ClinicLibrary) -> None:
    from ventset.machines.stage import find_machine

    klass = find_machine(ns.machine_class)
    if klass.is_clinic:
        raise InputError("machine-class", ns.machine_class, "is one of the clinic's machines; give a class")
    m = ClinicMachine.checked(ns.name, klass.key, _ranges(ns, klass.key, {}), ns.compressible_volume,
                              ns.driving_gas, ns.driving_gas_use, ns.note or "")
    partslib.save_clinic_library(lib.with_machine(m, replace_existing=ns.replace))
    say(f"added ventilator '{m.name}' ({m.summary()}) to {partslib.library_path()}")


def _edit(ns: argparse.Namespace, lib: partslib.ClinicLibrary) -> None:
    old = lib.machine(ns.name)
    if old is None:
        raise InputError("machine-name", ns.name, "is not one of the clinic's machines")
    d = machine_to_dict(old)
    start = {r["control"]: r for r in d["controls"]}
    klass = d["class"]
    if ns.machine_class:
        from ventset.machines.stage import find_machine

        klass = find_machine(ns.machine_class).key
        if klass != old.machine_class:
            if start:
                say(f"the clinic's own ranges of '{old.name}' were for class {old.machine_class} and are dropped")
            start, d["driving_gas"], d["driving_gas_ve_multiple"] = {}, None, None
    for what in ns.reset:
        if what in RESETS:
            d[{"compressible-volume": "compressible_ml_cmh2o", "driving-gas": "driving_gas",
               "driving-gas-use": "driving_gas_ve_multiple", "note": "note"}[what]] = "" if what == "note" else None
        else:
            from ventset.machines.stage import find_machine

            start.pop(find_control(find_machine(klass), what).kind, None)
    for key, value in (("compressible_ml_cmh2o", ns.compressible_volume), ("driving_gas", ns.driving_gas),
                       ("driving_gas_ve_multiple", ns.driving_gas_use), ("note", ns.note)):
        if value is not None:
            d[key] = value
    new = ClinicMachine.checked(ns.rename or old.name, klass, _ranges(ns, klass, start), d["compressible_ml_cmh2o"],
                                d["driving_gas"], d["driving_gas_ve_multiple"], d["note"])
    rest = lib.without_machine(old.name)
    partslib.save_clinic_library(rest.with_machine(new))
    say(f"changed ventilator '{new.name}' ({new.summary()})")


def run(ns: argparse.Namespace) -> int:
    """One of the clinic subcommands (``ns.machines_command``)."""
    cmd = ns.machines_command
    lib = partslib.load_clinic_library()
    if cmd == "add":
        _add(ns, lib)
    elif cmd == "edit":
        _edit(ns, lib)
    elif cmd == "remove":
        partslib.save_clinic_library(lib.without_machine(ns.name))
        say(f"removed ventilator '{ns.name}'")
    elif cmd == "export":
        partslib.write_library_file(partslib.ClinicLibrary(clinic=lib.clinic, machines=lib.machines), ns.file)
        say(f"exported {len(lib.machines)} ventilators to {ns.file} (parts and presets: 'ventset clinic-parts "
            "export')")
    elif cmd == "import":
        incoming = partslib.read_library_file(ns.file)
        report = partslib.import_file(ns.file, ns.on_conflict, kinds=("machine",))
        for line in report.lines():
            say(line)
        if incoming.parts or incoming.presets:
            say(f"the file also holds {len(incoming.parts)} parts and {len(incoming.presets)} presets, not imported "
                "here ('ventset clinic-parts import' merges everything)")
        return 1 if report.conflicts and ns.on_conflict == "keep" else 0
    return 0
