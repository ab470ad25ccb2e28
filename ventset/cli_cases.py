"""Command line for case files, the clinic parts library and the printed plan.

Adds ``ventset show CASE``, ``ventset clinic-parts ...`` and the ``--save CASE`` / ``--pdf FILE``
options of ``ventset plan``. Messages go to stderr so ``--json`` output stays clean. Qt is imported
only inside the ``--pdf`` handler.
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path
from typing import TYPE_CHECKING, cast

from ventset.case_model import SUFFIX
from ventset.cli_support import print_json, say
from ventset.errors import InputError, VentsetError
from ventset.model import Plan
from ventset.partslib_model import CONFLICT_CHOICES

if TYPE_CHECKING:  # the case and parts modules load when a command uses them, not when the parser is built
    from ventset import partslib

_say = say


def _is_file(path: Path) -> bool:
    from ventset import cases, storage

    try:
        return path.is_file()
    except OSError as exc:
        raise cases.CaseSaveError(path, storage.os_reason(exc)) from None


def register(sub, add_request_options) -> dict:
    """Add `show` and `clinic-parts` to the command line; returns their handlers."""
    p_show = sub.add_parser("show", help="print the plan of a saved case file")
    p_show.add_argument("case", metavar="CASE", help="a case file saved by 'ventset plan --save', 'ventset irrigate "
                                                     "--save' or the window")
    p_show.add_argument("--json", action="store_true", help="print one JSON object, as 'ventset plan --json'")
    p_show.add_argument("--gas-unit", choices=("mmHg", "kPa"), default="mmHg", help="unit for gas pressures")
    p_show.add_argument("--stored", action="store_true",
                        help="print the plan as stored in the file (JSON) instead of planning its inputs again")
    p_show.add_argument("--summary", action="store_true", help="print the short summary for the clinical record")

    p_cp = sub.add_parser("clinic-parts", help="the clinic's own measured parts and circuit presets (its "
                                               "ventilators: 'ventset machines'); export and import carry all three")
    cp = p_cp.add_subparsers(dest="clinic_command", required=True)
    p_list = cp.add_parser("list", help="list the clinic's parts and presets")
    p_list.add_argument("--json", action="store_true")
    p_list.add_argument("--all", action="store_true", help="also list the shipped catalogue")
    p_add = cp.add_parser("add", help="add a measured part")
    p_add.add_argument("name")
    p_add.add_argument("volume", help="internal volume, e.g. '9.5 mL'")
    p_add.add_argument("--note", default="")
    p_add.add_argument("--measured-by", default="", help="who measured it")
    p_add.add_argument("--measured-on", default="", help="date measured, YYYY-MM-DD")
    p_add.add_argument("--replace", action="store_true", help="replace a part of the same name")
    p_rm = cp.add_parser("remove", help="remove a part")
    p_rm.add_argument("name")
    p_pre = cp.add_parser("preset-add", help="add a circuit preset")
    p_pre.add_argument("name")
    p_pre.add_argument("--part", action="append", default=[], metavar="PART",
                       help="a clinic part name, a catalogue key, or NAME=VOLUME; repeat for each part")
    p_pre.add_argument("--compressible-volume", metavar="VALUE", help="circuit compressible volume [mL/cmH2O]")
    p_pre.add_argument("--circuit", help="circuit type (non_rebreathing, rebreathing_small_animal, ...)")
    p_pre.add_argument("--note", default="")
    p_pre.add_argument("--replace", action="store_true", help="replace a preset of the same name")
    p_prm = cp.add_parser("preset-remove", help="remove a circuit preset")
    p_prm.add_argument("name")
    p_exp = cp.add_parser("export", help="write the clinic library to a file to share")
    p_exp.add_argument("file")
    p_imp = cp.add_parser("import", help="merge a shared clinic library file into this machine's")
    p_imp.add_argument("file")
    p_imp.add_argument("--on-conflict", choices=CONFLICT_CHOICES, default="keep",
                       help="same name, different values: keep this machine's (default), import under a new "
                            "name, or replace this machine's")
    return {"show": _cmd_show, "clinic-parts": _cmd_clinic_parts}


def extend_plan(p_plan: argparse.ArgumentParser) -> None:
    """`ventset plan --save CASE --pdf FILE`."""
    p_plan.add_argument("--save", metavar="CASE", help=f"also save the case to this file (e.g. dog{SUFFIX}); "
                        "an existing case with other inputs is kept unless --replace is given")
    p_plan.add_argument("--replace", action="store_true", help="with --save: replace an existing case file")
    p_plan.add_argument("--pdf", metavar="FILE", help="also write the printed plan as PDF")
    p_plan.add_argument("--paper", choices=("A4", "Letter"), default=None,
                        help="paper for --pdf (default: from the locale, Letter in the US and Canada, else A4)")


def after_plan(ns: argparse.Namespace, request, plan) -> None:
    """Save the case and/or write the PDF the options asked for (messages to stderr)."""
    from ventset import cases
    from ventset.library import load_library

    if getattr(ns, "save", None):
        target = Path(ns.save)
        previous = None
        if _is_file(target) and not ns.replace:
            try:
                previous = cases.load_case(target).case
            except cases.CaseError:
                previous = None  # save_case refuses a file that is not a readable case, with the reason
            if previous is not None and previous.request != request:
                raise cases.CaseSaveError(target, "a case with other inputs is already there; add --replace to "
                                                  "overwrite it, or save under another name")
        case = cases.make_case(request, plan, library=load_library(), previous=previous)
        cases.save_case(target, case, replace_any=ns.replace)
        _say(f"saved case to {ns.save}")
        warning = cases.add_recent(ns.save)
        if warning:
            _say(f"warning: {warning}")
    if getattr(ns, "pdf", None):
        write_pdf(plan, ns.pdf, getattr(ns, "gas_unit", "mmHg"), Path(ns.save).name if getattr(ns, "save", None)
                  else "", paper=getattr(ns, "paper", None))
        _say(f"wrote printed plan to {ns.pdf}")


def write_pdf(plan, path: str, gas_unit: str = "mmHg", case_name: str = "", paper: str | None = None) -> None:
    try:
        from ventset.gui.printing import write_plan_pdf
    except ImportError as exc:
        raise VentsetError(f"the PDF needs the desktop components (PySide6), which are not available ({exc})") \
            from None
    write_plan_pdf(plan, path, gas_unit=gas_unit, case_name=case_name, paper=paper)


def _cmd_show(ns: argparse.Namespace) -> int:
    from ventset import cases
    from ventset.case_irrigation import OpenedIrrigationCase, open_any_case
    from ventset.library import load_library
    from ventset.report import plan_to_dict, plan_to_text

    opened = open_any_case(ns.case, load_library())
    if isinstance(opened, OpenedIrrigationCase):  # a fish's gill irrigation case
        from ventset.aquatic.cli import show_case

        return show_case(opened, ns)
    if ns.stored:
        if opened.case.plan is None:
            raise cases.CaseError(ns.case, "it holds no stored plan" + (f" ({opened.case.plan_error})"
                                                                         if opened.case.plan_error else ""))
        print_json(opened.case.plan)
        return 0
    for line in opened.messages:
        _say(line)
    if opened.plan is None:
        raise InputError("case", ns.case, f"its inputs no longer give a plan ({opened.plan_error}); "
                                          "'ventset show --stored' prints the plan as saved")
    result = cast(Plan, opened.plan)
    if ns.summary:
        from ventset.summary import plan_summary

        print(plan_summary(result, ns.gas_unit))
    elif ns.json:
        print_json(plan_to_dict(result))
    else:
        print(plan_to_text(result, ns.gas_unit))
    return 0


def print_case(path: str, gas_unit: str = "mmHg") -> int:
    """The case's plan as text, as ``ventset show CASE`` (``ventset CASE`` without a display)."""
    return _cmd_show(argparse.Namespace(case=path, stored=False, summary=False, json=False, gas_unit=gas_unit))


def _resolve_part(text: str, clinic: partslib.ClinicLibrary, library):
    from ventset import partslib

    def mine(name: str):
        part = clinic.part(name)
        return part.as_apparatus() if part is not None else None

    return partslib.part_from_text(text, library, mine)


def _cmd_clinic_parts(ns: argparse.Namespace) -> int:
    from ventset import partslib
    from ventset.library import load_library

    cmd = ns.clinic_command
    lib = partslib.load_clinic_library()
    if cmd == "list":
        return _list(ns, lib)
    if cmd == "add":
        part = partslib.ClinicPart.checked(ns.name, ns.volume, ns.note, ns.measured_by, ns.measured_on)
        partslib.save_clinic_library(lib.with_part(part, replace_existing=ns.replace))
        _say(f"added part '{part.name}' ({part.volume_ml:g} mL) to {partslib.library_path()}")
    elif cmd == "remove":
        partslib.save_clinic_library(lib.without_part(ns.name))
        _say(f"removed part '{ns.name}'")
    elif cmd == "preset-add":
        library = load_library()
        parts = [_resolve_part(p, lib, library) for p in ns.part]
        comp = ns.compressible_volume
        preset = partslib.CircuitPreset.checked(ns.name, parts, comp, ns.circuit, ns.note)
        partslib.save_clinic_library(lib.with_preset(preset, replace_existing=ns.replace))
        _say(f"added preset '{preset.name}' ({preset.summary()})")
    elif cmd == "preset-remove":
        partslib.save_clinic_library(lib.without_preset(ns.name))
        _say(f"removed preset '{ns.name}'")
    elif cmd == "export":
        partslib.write_library_file(lib, ns.file, private=False)
        _say(f"exported {len(lib.parts)} parts, {len(lib.presets)} presets and {len(lib.machines)} ventilators to "
             f"{ns.file}")
    elif cmd == "import":
        report = partslib.import_file(ns.file, ns.on_conflict)
        for line in report.lines():
            _say(line)
        return 1 if report.conflicts and ns.on_conflict == "keep" else 0
    return 0


def _list(ns: argparse.Namespace, lib: partslib.ClinicLibrary) -> int:
    from ventset import partslib

    rows = [r for r in partslib.all_parts(lib) if ns.all or r.origin == "clinic"]
    if ns.json:
        doc = partslib.library_to_dict(lib)
        if ns.all:
            doc["catalogue"] = [{"key": r.key, "name": r.name, "volume_ml": r.volume_ml, "source": r.source}
                                for r in rows if r.origin == "catalogue"]
        print(json.dumps(doc, indent=2, ensure_ascii=False))
        return 0
    if not lib.parts and not lib.presets and not lib.machines:
        print(f"The clinic library is empty ({partslib.library_path()}). Add a part with "
              "'ventset clinic-parts add NAME VOLUME'.")
    for r in rows:
        print(f"{r.origin:<10}{r.key[:34]:<35}{r.volume_ml:>7g} mL  [{r.source}]")
    for s in lib.presets:
        print(f"{'preset':<10}{s.name[:34]:<35}{s.summary()}")
        for p in s.parts:
            print(f"{'':<12}{p.name} {p.volume_ml:g} mL [{p.source}]")
    for m in lib.machines:
        print(f"{'ventilator'} {m.name[:33]:<34}{m.summary()}  ('ventset machines' shows its controls)")
    return 0
