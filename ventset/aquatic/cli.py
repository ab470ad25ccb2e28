"""Command line: ``ventset irrigate`` — gill irrigation for an anaesthetised fish or aquatic amphibian."""

from __future__ import annotations

import argparse
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ventset import storage
from ventset.aquatic.inputs import AQUATIC_FIELDS, key_of_label
from ventset.cli_support import say
from ventset.errors import InputError, VentsetError

if TYPE_CHECKING:
    from ventset.aquatic.irrigation import IrrigationPlan, IrrigationRequest
    from ventset.case_irrigation import OpenedIrrigationCase

_OPTIONS = ("mass", "water-temperature", "salinity", "altitude", "barometric-pressure", "saturation", "duration",
            "system-volume", "vo2", "extraction", "demand-factor")


def register(sub: Any, _add_request_options: object = None) -> dict[str, Callable[[argparse.Namespace], int]]:
    """Add ``irrigate`` to the ``ventset`` command line."""
    p = sub.add_parser("irrigate", help="gill irrigation flow for an anaesthetised fish or aquatic amphibian",
                       description="The water flow through the mouth and over the gills that meets the fish's O2 "
                                   "need, from the water's O2 content (Henry's law, Garcia & Gordon 1992) at its "
                                   "temperature, salinity and barometric pressure.")
    p.add_argument("--species", help="group key, name or alias: koi, goldfish, trout, tilapia, zebrafish, "
                                     "reef fish, shark, bamboo shark, ray, axolotl, xenopus (see --list)")
    p.add_argument("--name", default="", help="patient name for the printout")
    p.add_argument("--list", action="store_true", help="list the aquatic groups and exit")
    for key in _OPTIONS:
        spec = AQUATIC_FIELDS[key]
        p.add_argument(f"--{key}", dest=key.replace("-", "_"), metavar="VALUE",
                       help=f"{spec.help} [{spec.unit or 'number'}]".replace("%", "%%"))
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--save", metavar="CASE", help="also save the case to this file (e.g. koi.ventcase); an existing "
                                                  "case with other inputs is kept unless --replace is given")
    p.add_argument("--replace", action="store_true", help="with --save: replace an existing file")
    p.add_argument("--pdf", metavar="FILE", help="also write the printed irrigation plan as PDF")
    return {"irrigate": _cmd_irrigate}


def _flag_error(err: InputError) -> InputError:
    key = key_of_label(err.field)
    if key is None and err.field in ("Species", "Patient name"):
        key = "species" if err.field == "Species" else "name"
    return InputError(f"--{key} ({err.field})", err.value, err.reason, err.unit) if key else err


def request_from_args(ns: argparse.Namespace) -> IrrigationRequest:
    """An IrrigationRequest from parsed options; every quantity parsed once, here."""
    from ventset.aquatic.irrigation import request_from_texts

    values = {key: getattr(ns, key.replace("-", "_")) for key in _OPTIONS}
    values["species"] = ns.species
    return request_from_texts(values, required=("species", "mass", "water-temperature", "salinity"), name=ns.name)


def _list() -> int:
    from ventset.aquatic.data import aquatic_data

    print(f"{'key':<20}{'group':<62}{'mass kg':<14}aliases")
    for g in aquatic_data().groups.values():
        ram = " [obligate ram ventilators]" if g.obligate_ram else ""
        print(f"{g.key:<20}{g.label[:60]:<62}{f'{g.mass_kg.min:g}-{g.mass_kg.max:g}':<14}"
              f"{', '.join(g.aliases[:4])}{ram}")
    return 0


def _cmd_irrigate(ns: argparse.Namespace) -> int:
    from ventset.aquatic.irrigation import plan_irrigation
    from ventset.aquatic.report import irrigation_to_dict, irrigation_to_text
    from ventset.cli_support import print_json

    if ns.list:
        return _list()
    try:
        plan = plan_irrigation(request_from_args(ns))
    except InputError as err:
        raise _flag_error(err) from None
    if ns.save:
        _save(ns, plan)
    if ns.pdf:
        write_irrigation_pdf(plan, ns.pdf, Path(ns.save).name if ns.save else "")
        say(f"wrote printed irrigation plan to {ns.pdf}")
    if ns.json:
        print_json(irrigation_to_dict(plan))
    else:
        print(irrigation_to_text(plan))
    return 0


def _save(ns: argparse.Namespace, plan: IrrigationPlan) -> None:
    """Save the case (stderr says where); an existing case with other inputs is kept unless --replace."""
    from ventset import case_irrigation, cases

    target = Path(ns.save)
    previous = None
    try:
        there = target.is_file()
    except OSError as exc:
        raise cases.CaseSaveError(target, storage.os_reason(exc)) from None
    if there and not ns.replace:
        try:
            previous = case_irrigation.load_irrigation_case(target).case
        except cases.CaseError:
            previous = None  # the writer refuses a file that is not a readable irrigation case, with the reason
        if previous is not None and previous.request != plan.request:
            raise cases.CaseSaveError(target, "a case with other inputs is already there; add --replace to "
                                              "overwrite it, or save under another name")
    case = case_irrigation.make_irrigation_case(plan.request, plan, previous=previous)
    case_irrigation.save_irrigation_case(target, case, replace_any=ns.replace)
    say(f"saved case to {ns.save}")


def write_irrigation_pdf(plan: IrrigationPlan, path: str, case_name: str = "") -> None:
    """The printed irrigation plan as PDF (needs the desktop components)."""
    try:
        from ventset.gui.aquatic_print import write_irrigation_pdf as write
    except ImportError as exc:
        raise VentsetError(f"the PDF needs the desktop components (PySide6), which are not available ({exc})") \
            from None
    write(plan, path, case_name=case_name)


def show_case(opened: OpenedIrrigationCase, ns: argparse.Namespace) -> int:
    """`ventset show CASE` for an irrigation case: the plan computed now from the stored inputs (notes on stderr)."""
    from ventset.aquatic.report import irrigation_summary, irrigation_to_dict, irrigation_to_text
    from ventset.cli_support import print_json

    if ns.stored:
        if opened.case.plan is None:
            raise VentsetError(f"cannot open '{ns.case}': it holds no stored plan"
                               + (f" ({opened.case.plan_error})" if opened.case.plan_error else ""))
        print_json(opened.case.plan)
        return 0
    for line in opened.messages:
        say(line)
    if opened.plan is None:
        raise InputError("case", ns.case, f"its inputs no longer give a plan ({opened.plan_error}); "
                                          "'ventset show --stored' prints the plan as saved")
    if ns.summary:
        print(irrigation_summary(opened.plan))
    elif ns.json:
        print_json(irrigation_to_dict(opened.plan))
    else:
        print(irrigation_to_text(opened.plan))
    return 0
