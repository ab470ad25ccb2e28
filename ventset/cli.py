"""Command line: ``ventset plan``, ``ventset species``, ``ventset parts``; no arguments opens the window."""

from __future__ import annotations

import argparse
import importlib
import json
import sys
from collections.abc import Sequence

from ventset.errors import DataError, InputError, VentsetError
from ventset.fields import FIELDS, parse_field
from ventset.model import MODES, STRATEGIES, ApparatusPart, Circuit, Patient, Request, Strategy, Targets
from ventset.units import parse_quantity

# Modules that add subcommands: each defines register(sub, add_request_options) -> {name: handler},
# and may define extend_plan(p_plan) (extra `plan` options) and after_plan(ns, request, plan).
EXTENSIONS: tuple[str, ...] = ("ventset.cli_cases", "ventset.cli_titrate", "ventset.cli_validate")

DEMO_ARGS = ["--species", "cat", "--mass", "4.2 kg", "--name", "Pickle (demo)", "--apparatus", "hme_paediatric",
             "--apparatus", "capnograph_mainstream_adult", "--tube-id", "4 mm", "--tube-length", "5 cm"]


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # one line, exit 2, no usage dump
        self.exit(2, f"ventset: {message}\n")


def print_json(obj: object) -> None:
    """Print a result as strict JSON (no NaN/Infinity; non-ASCII kept) on stdout."""
    print(json.dumps(obj, indent=2, ensure_ascii=False, allow_nan=False))


def _add_request_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--species", required=True, help="species key, name or alias (see 'ventset species')")
    p.add_argument("--name", default="", help="patient name for the printout")
    p.add_argument("--custom-species", default="", metavar="NAME",
                   help="a species not in the library, planned with the values of --species (its base) unless "
                        "entered; a caution says so")
    p.add_argument("--apparatus", action="append", default=[], metavar="NAME[=VOLUME]",
                   help="a part between Y-piece and incisors: a catalogue key (see 'ventset parts'), "
                        "or NAME=VOLUME such as 'hme=12 mL'; repeat for each part")
    p.add_argument("--mode", choices=MODES, help="volume or pressure (default: species)")
    p.add_argument("--strategy", choices=STRATEGIES, default="volume_first",
                   help="volume_first: tidal volume per kg, then rate; least_work: Otis rate, then tidal volume")
    p.add_argument("--circuit", help="non_rebreathing, rebreathing_small_animal, ... (default: by mass)")
    for spec in FIELDS.values():
        p.add_argument(f"--{spec.key}", dest=spec.key.replace("-", "_"), metavar="VALUE",
                       help=f"{spec.help} [{spec.unit or 'number'}]".replace("%", "%%"))


def _parts(items: Sequence[str], library) -> tuple[ApparatusPart, ...]:
    out = []
    for item in items:
        name, _, vol = item.partition("=")
        name = name.strip()
        if not name:
            raise InputError("--apparatus", item, "needs NAME=VOLUME or a catalogue key")
        if vol.strip():
            volume = parse_quantity(vol, "mL", f"--apparatus {name}")
            if volume < 0:
                raise InputError(f"--apparatus {name}", vol, "volume must be 0 mL or more")
            out.append(ApparatusPart(name, volume))
        elif name in library.parts:
            part = library.parts[name]
            out.append(ApparatusPart(part.label, part.volume_ml.value, part.volume_ml.source))
        elif (clinic := _clinic_part(name)) is not None:
            out.append(clinic)
        else:
            raise InputError("--apparatus", item, "is not a catalogue or clinic part; give a volume, e.g. "
                                                  "'hme=12 mL' (see 'ventset parts', 'ventset clinic-parts list')")
    return tuple(out)


def _clinic_part(name: str) -> ApparatusPart | None:
    """A part from the clinic's own library (user data folder), or None."""
    from ventset.partslib import load_clinic_library

    try:
        part = load_clinic_library().part(name)
    except VentsetError:
        return None
    return part.as_apparatus() if part is not None else None


def request_from_args(ns: argparse.Namespace, library) -> Request:
    """Build a Request from parsed options; every quantity parsed once, here."""
    values: dict[str, float | None] = {}
    for spec in FIELDS.values():
        raw = getattr(ns, spec.key.replace("-", "_"))
        if raw is None:
            values[spec.key] = None
            continue
        try:
            values[spec.key] = parse_field(spec.key, raw)
        except InputError as err:
            raise InputError(f"--{spec.key}", raw, err.reason) from None
    if values["mass"] is None:
        raise InputError("--mass", "", "is required (e.g. '--mass 20 kg')")
    if library.find_species(ns.species) is None:
        raise InputError("--species", ns.species, "unknown species; run 'ventset species' for the list")
    v = values
    return Request(
        patient=Patient(ns.species, v["mass"], v["lean-mass"], v["body-temperature"], v["metabolic-rate"], v["rq"],
                        v["alveolar-dead-space"], v["compliance"], v["resistance"], ns.name,
                        ns.custom_species),
        circuit=Circuit(_parts(ns.apparatus, library), v["tube-id"], v["tube-length"], ns.circuit,
                        v["compressible-volume"], ns.mode, v["sampling-flow"] or 0.0),
        targets=Targets(paco2_mmhg=v["target-paco2"], etco2_mmhg=v["target-etco2"], gradient_mmhg=v["gradient"],
                        peep_cmh2o=v["peep"], ie_expiratory_part=v["ie"], pressure_limit_cmh2o=v["pressure-limit"],
                        fio2=v["fio2"], altitude_m=v["altitude"] or 0.0, barometric_mmhg=v["barometric-pressure"],
                        ti_s=v["ti"]),
        strategy=Strategy(ns.strategy, v["vt-per-kg"], v["rate"]),
    )


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="ventset", description="Draft starting ventilator settings for an anaesthetised animal. "
                     "With no command, opens the desktop window.")
    sub = parser.add_subparsers(dest="command")
    p_plan = sub.add_parser("plan", help="plan settings for one patient")
    _add_request_options(p_plan)
    p_plan.add_argument("--json", action="store_true", help="print one JSON object")
    p_plan.add_argument("--gas-unit", choices=("mmHg", "kPa"), default="mmHg", help="unit for gas pressures")
    sub.add_parser("demo", help="print the plan for the demo patient")
    p_sp = sub.add_parser("species", help="list the species library")
    p_sp.add_argument("--json", action="store_true")
    p_parts = sub.add_parser("parts", help="list the apparatus catalogue")
    p_parts.add_argument("--json", action="store_true")
    sub.add_parser("gui", help="open the desktop window")
    parser.set_defaults(_handlers={})
    handlers: dict = {}
    for name in EXTENSIONS:
        mod = importlib.import_module(name)
        handlers.update(mod.register(sub, _add_request_options))
        if hasattr(mod, "extend_plan"):
            mod.extend_plan(p_plan)
    parser.set_defaults(_handlers=handlers)
    return parser


def _cmd_plan(ns: argparse.Namespace) -> int:
    from ventset.library import load_library
    from ventset.planner import plan
    from ventset.report import plan_to_dict, plan_to_text

    lib = load_library()
    request = request_from_args(ns, lib)
    result = plan(request, lib)
    for name in EXTENSIONS:
        mod = importlib.import_module(name)
        if hasattr(mod, "after_plan"):
            mod.after_plan(ns, request, result)
    if ns.json:
        print_json(plan_to_dict(result))
    else:
        print(plan_to_text(result, ns.gas_unit))
    return 0


def _cmd_species(ns: argparse.Namespace) -> int:
    from ventset.library import load_library

    lib = load_library()
    if ns.json:
        print(json.dumps([{"key": s.key, "label": s.label, "group": s.group.key, "mass_kg": [s.mass_kg.min,
                          s.mass_kg.max]} for s in lib.species.values()], indent=2))
        return 0
    print(f"{'key':<22}{'species':<34}{'group':<15}{'VT mL/kg':<11}{'rate /min':<11}mass kg")
    for s in lib.species.values():
        vt, f = s.tidal_volume_ml_kg, s.rate_per_min
        print(f"{s.key:<22}{s.label[:33]:<34}{s.group.key:<15}{f'{vt.min:g}-{vt.max:g}':<11}"
              f"{f'{f.min:g}-{f.max:g}':<11}{s.mass_kg.min:g}-{s.mass_kg.max:g}")
    return 0


def _cmd_parts(ns: argparse.Namespace) -> int:
    from ventset.library import load_library

    lib = load_library()
    if ns.json:
        print(json.dumps([{"key": p.key, "label": p.label, "kind": p.kind, "volume_ml": p.volume_ml.value,
                           "source": p.volume_ml.source} for p in lib.parts.values()], indent=2))
        return 0
    for p in lib.parts.values():
        print(f"{p.key:<32}{p.volume_ml.value:>7g} mL  {p.label}  [{p.volume_ml.source}]")
    return 0


def run_demo() -> int:
    """Print the demo patient's plan (used when no display is available)."""
    return main(["plan", *DEMO_ARGS])


def _cmd_gui(_: argparse.Namespace) -> int:
    try:
        from ventset.gui.app import run
    except ImportError as exc:
        print(f"ventset: the desktop window is not available ({exc}); printing the demo plan instead.")
        return run_demo()
    return run()


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status (2 for bad input, naming the field)."""
    args = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    ns = parser.parse_args(args)
    handlers = {"plan": _cmd_plan, "species": _cmd_species, "parts": _cmd_parts, "gui": _cmd_gui,
                "demo": lambda _ns: run_demo(), None: _cmd_gui, **ns._handlers}
    try:
        return handlers[ns.command](ns)
    except InputError as err:
        flag = next((f"--{f.key}" for f in FIELDS.values() if f.label == err.field), None)
        if flag and ns.command not in (None, "gui"):
            err = InputError(f"{flag} ({err.field})", err.value, err.reason, err.unit)
        print(f"ventset: {err}", file=sys.stderr)
        return 2
    except DataError as err:
        print(f"ventset: data file problem: {err}", file=sys.stderr)
        return 2
    except VentsetError as err:
        print(f"ventset: {err}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # output piped into `head` and closed early
        sys.stderr.close()
        return 0


if __name__ == "__main__":
    sys.exit(main())
