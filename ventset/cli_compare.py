"""`ventset compare` (setups side by side for one patient) and `ventset chart` (starting settings by body mass)."""

from __future__ import annotations

import argparse
import sys

from ventset.cli_support import print_json, request_from_args, say
from ventset.errors import InputError, VentsetError


def register(sub, add_request_options) -> dict:
    from ventset.compare import spec_help

    p = sub.add_parser("compare", help="plan 2 to 4 setups for one patient side by side",
                       description="Plan the patient (the request options) with each --setup and show what differs.")
    add_request_options(p)
    p.add_argument("--setup", action="append", default=[], metavar="SPEC", required=True,
                   help=f"one setup, repeat 2 to 4 times: {spec_help()}")
    p.add_argument("--json", action="store_true", help='print {"setups": [plan, ...], "differences": [...]}')
    p.add_argument("--gas-unit", choices=("mmHg", "kPa"), default="mmHg", help="unit for gas pressures")

    c = sub.add_parser("chart", help="starting settings by body mass for one species on the clinic's circuit",
                       description="A table of starting settings across a mass range, computed by a sweep of the "
                                   "planner's own equations. The request options apply to every row (--mass is "
                                   "not used).")
    add_request_options(c)
    c.add_argument("--from", dest="mass_from", metavar="MASS", help="lightest patient, e.g. '2 kg'")
    c.add_argument("--to", dest="mass_to", metavar="MASS", help="heaviest patient, e.g. '40 kg'")
    c.add_argument("--masses", metavar="LO-HI", help="the range in one option, e.g. '2-40 kg'")
    c.add_argument("--step", metavar="MASS", help="a row every STEP (e.g. '2 kg'); default: --rows rows")
    c.add_argument("--rows", type=int, default=None, metavar="N",
                   help="number of rows, evenly spaced on a log scale (default 20)")
    c.add_argument("--preset", metavar="NAME", help="the clinic's circuit preset (see 'ventset clinic-parts list')")
    out = c.add_mutually_exclusive_group()
    out.add_argument("--json", action="store_true", help='print {"rows": [...], ...}')
    out.add_argument("--csv", nargs="?", const="-", metavar="FILE", help="CSV to FILE (or to the terminal)")
    c.add_argument("--pdf", metavar="FILE", help="also write the chart as a printable PDF page")
    c.add_argument("--gas-unit", choices=("mmHg", "kPa"), default="mmHg", help="unit for gas pressures")
    return {"compare": _cmd_compare, "chart": _cmd_chart}


def _cmd_compare(ns: argparse.Namespace) -> int:
    from ventset.compare import comparison_to_dict, plan_setups
    from ventset.compare_text import comparison_to_text
    from ventset.library import load_library

    lib = load_library()
    result = plan_setups(request_from_args(ns, lib), ns.setup, lib)
    if ns.json:
        print_json(comparison_to_dict(result))
    else:
        print(comparison_to_text(result, ns.gas_unit))
    return 0


def _mass(text: str, option: str) -> float:
    from ventset.fields import parse_field

    try:
        return parse_field("mass", text)
    except InputError as err:
        raise InputError(option.lstrip("-"), err.value, err.reason, label=option) from None


def _range(ns: argparse.Namespace) -> tuple[float, float]:
    from ventset.chart import parse_mass_range

    if ns.masses and (ns.mass_from or ns.mass_to):
        raise InputError("masses", ns.masses, "give --masses or --from/--to, not both", label="--masses")
    lo, hi = parse_mass_range(ns.masses) if ns.masses else (ns.mass_from, ns.mass_to)
    if not lo or not hi:
        raise InputError("from", "", "give the mass range: --from 2kg --to 40kg (or --masses 2-40kg)", label="--from")
    return _mass(lo, "--from"), _mass(hi, "--to")


def _chart_request(ns: argparse.Namespace, lib):
    from dataclasses import replace

    if ns.mass is not None:
        raise InputError("mass", ns.mass, "a chart takes its masses from --from/--to, not --mass", label="--mass")
    ns.mass = "1 kg"  # the request builder needs a mass; each row replaces it
    request = request_from_args(ns, lib)
    if not ns.preset:
        return request
    from ventset.partslib import load_clinic_library

    preset = load_clinic_library().preset(ns.preset)
    if preset is None:
        raise InputError("preset", ns.preset, "is not a circuit preset of this clinic (see 'ventset clinic-parts "
                                              "list')", label="--preset")
    return replace(request, circuit=preset.apply(request.circuit))


def _check_ends(request, lo: float, hi: float, lib) -> None:
    """Both ends of the range inside the species' mass range, each error naming the option typed."""
    from ventset.stages.inputs import check_mass, find_species
    from ventset.sweep import with_mass

    sp = find_species(lib, request.patient.species)
    for value, option in ((lo, "--from"), (hi, "--to")):
        try:
            check_mass(with_mass(request, value), sp)
        except InputError as err:
            raise InputError(option.lstrip("-"), err.value, err.reason, label=option) from None


def _cmd_chart(ns: argparse.Namespace) -> int:
    from ventset.chart import chart_to_csv, chart_to_dict, chart_to_text, make_chart
    from ventset.library import load_library
    from ventset.present.quantities import Units
    from ventset.storage import atomic_write_bytes
    from ventset.sweep import masses_between

    lib = load_library()
    request = _chart_request(ns, lib)
    lo, hi = _range(ns)
    _check_ends(request, lo, hi, lib)
    step = _mass(ns.step, "--step") if ns.step else None
    chart = make_chart(request, masses_between(lo, hi, step, ns.rows), lib, preset=ns.preset or "")
    if ns.pdf:
        _write_pdf(chart, ns.pdf, ns.gas_unit)
    if ns.json:
        print_json(chart_to_dict(chart))
    elif ns.csv:
        text = chart_to_csv(chart)
        if ns.csv == "-":
            sys.stdout.write(text)
        else:
            atomic_write_bytes(ns.csv, text.encode("utf-8"))
            say(f"wrote the chart as CSV to {ns.csv}")
    else:
        print(chart_to_text(chart, Units(gas=ns.gas_unit)))
    return 0


def _write_pdf(chart, path: str, gas_unit: str) -> None:
    try:
        from ventset.gui.chart_print import write_chart_pdf
    except ImportError as exc:
        raise VentsetError(f"the PDF needs the desktop components (PySide6), which are not available ({exc})") \
            from None
    write_chart_pdf(chart, path, gas_unit=gas_unit)
    say(f"wrote the chart as PDF to {path}")
