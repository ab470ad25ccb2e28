"""Command line: ``ventset plan``, ``ventset species``, ``ventset parts``; no arguments opens the window."""

from __future__ import annotations

import argparse
import gc
import importlib
import json
import os
import sys
from collections.abc import Sequence
from typing import NoReturn

from ventset import __version__
from ventset.cli_support import add_request_options, option_error, print_json, request_from_args, say
from ventset.errors import DataError, InputError, VentsetError, one_line, visible_path

__all__ = ["build_parser", "main", "print_json", "request_from_args", "run_demo"]

# Modules that add subcommands: each defines register(sub, add_request_options) -> {name: handler},
# and may define extend_plan(p_plan) (extra `plan` options) and after_plan(ns, request, plan).
EXTENSIONS: tuple[str, ...] = ("ventset.cli_cases", "ventset.cli_titrate", "ventset.aquatic.cli",
                              "ventset.cli_validate", "ventset.cli_compare", "ventset.cli_situations",
                              "ventset.cli_machines", "ventset.desktop")


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> NoReturn:  # one line, exit 2, no usage dump
        self.exit(2, f"ventset: {one_line(message)}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="ventset", usage="ventset [--version] [CASE.ventcase | COMMAND ...]",
                     description="Draft starting ventilator settings for an anaesthetised animal. With no command, "
                     "opens the desktop window; with a case file (ventset CASE.ventcase), opens it in the window.")
    parser.add_argument("--version", action="version", version=f"ventset {__version__}")
    sub = parser.add_subparsers(dest="command")
    p_plan = sub.add_parser("plan", help="plan settings for one patient")
    add_request_options(p_plan)
    p_plan.add_argument("--json", action="store_true", help="print one JSON object")
    p_plan.add_argument("--gas-unit", choices=("mmHg", "kPa"), default="mmHg", help="unit for gas pressures")
    sub.add_parser("demo", help="print the plan for the demo patient")
    p_sp = sub.add_parser("species", help="list the species library (or the entries a name or alias finds)")
    p_sp.add_argument("search", nargs="?", default="", metavar="NAME",
                      help="show only the entries whose key, label or any alias contains NAME (e.g. 'sea lion')")
    p_sp.add_argument("--json", action="store_true", help="one JSON list (key, label, group, aliases, young "
                                                          "aliases, mass range, usual ranges) for scripts")
    p_parts = sub.add_parser("parts", help="list the apparatus catalogue")
    p_parts.add_argument("--json", action="store_true")
    p_gui = sub.add_parser("gui", help="open the desktop window (with a case file: open that case)")
    p_gui.add_argument("file", nargs="?", metavar="CASE", help="a case file (.ventcase) to open")
    parser.set_defaults(_handlers={})
    handlers: dict = {}
    for name in EXTENSIONS:
        mod = importlib.import_module(name)
        handlers.update(mod.register(sub, add_request_options))
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


def _species_json(s) -> dict:
    return {"key": s.key, "label": s.label, "group": s.group.key, "group_label": s.group.label,
            "mass_kg": [s.mass_kg.min, s.mass_kg.max], "aliases": list(s.aliases),
            "young_aliases": list(s.young_aliases),
            "tidal_volume_ml_kg": [s.tidal_volume_ml_kg.min, s.tidal_volume_ml_kg.max],
            "rate_per_min": [s.rate_per_min.min, s.rate_per_min.max], "body_temperature_c": s.body_temperature_c.start}


def _table(rows: Sequence[tuple[str, ...]], head: tuple[str, ...]) -> None:
    widths = [max(len(r[i]) for r in (head, *rows)) for i in range(len(head))]
    for r in (head, *rows):
        print("  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)).rstrip())


def _cmd_species(ns: argparse.Namespace) -> int:
    """List the species library: key, label, metabolic group, usual VT and rate, mass range (or JSON); with a NAME,
    only the entries whose key, label or an alias contains it, with their aliases."""
    from ventset.library import load_library

    lib = load_library()
    found = [s for s in lib.species.values() if not ns.search.strip() or s.matches(ns.search)]
    if not found:
        raise InputError("species", ns.search, "matches no species, label or alias; for a species not listed, plan "
                                               "it by its metabolic group (ventset plan --taxon GROUP)")
    if ns.json:
        print_json([_species_json(s) for s in found])
        return 0

    def cut(text: str, width: int = 40) -> str:
        return text if len(text) <= width else text[: width - 1] + "…"

    rows = [(s.key, cut(s.label), s.group.key, f"{s.tidal_volume_ml_kg.min:g}-{s.tidal_volume_ml_kg.max:g}",
             f"{s.rate_per_min.min:g}-{s.rate_per_min.max:g}", f"{s.mass_kg.min:g}-{s.mass_kg.max:g}") for s in found]
    _table(rows, ("key", "species", "group", "VT mL/kg", "rate /min", "mass kg"))
    if ns.search.strip():
        for s in found:
            names = ", ".join((*s.aliases, *s.young_aliases)) or "none"
            print(f"  {s.key}: {one_line(names)}")
        return 0
    print(f"{len(rows)} species in {len({s.group.key for s in found})} metabolic groups; rate ranges are for a "
          "typical adult and scale with mass where the entry says so.")
    print("\nNot listed? Plan by metabolic group alone (ventset plan --taxon GROUP --mass ... --temperature ...):")
    _table([(g, cut(tx.label, 60), f"{tx.mass_kg.min:g}-{tx.mass_kg.max:g}") for g, tx in lib.taxa.items()],
           ("GROUP", "entry", "mass kg"))
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
    from ventset.demo import run_demo as print_demo

    return print_demo()


def _cmd_gui(ns: argparse.Namespace) -> int:
    from pathlib import Path

    path = getattr(ns, "file", None)
    if path is not None and not Path(path).is_file():
        say(f"no such case file: {visible_path(path)}")
        return 2
    try:
        from ventset.gui.app import run
    except ImportError as exc:
        if path is not None:
            print(f"ventset: the desktop window is not available ({exc}); printing the case's plan instead.")
            from ventset.cli_cases import print_case

            return print_case(path)
        print(f"ventset: the desktop window is not available ({exc}); printing the demo plan instead.")
        return run_demo()
    return run(case_path=path)


def _commands(parser: argparse.ArgumentParser) -> set[str]:
    for action in parser._subparsers._group_actions if parser._subparsers else ():
        return set(getattr(action, "choices", None) or {})
    return set()


def file_args(args: list[str], parser: argparse.ArgumentParser) -> list[str]:
    """``ventset CASE.ventcase`` is ``ventset gui CASE.ventcase`` (how a desktop or file manager starts it)."""
    if args and not args[0].startswith("-") and args[0] not in _commands(parser):
        from ventset.cases import SUFFIX

        if args[0].endswith((SUFFIX, ".json")) or os.path.isfile(args[0]):
            return ["gui", *args]
    return args


def _safe_streams() -> None:
    """A terminal that cannot show a character (PYTHONIOENCODING=ascii:strict) gets an escape, not a crash."""
    for stream in (sys.stdout, sys.stderr):
        try:
            # sys.stdout is typed TextIO, which has no reconfigure; the real TextIOWrapper has (else AttributeError)
            stream.reconfigure(errors="backslashreplace")  # type: ignore[union-attr]
        except (AttributeError, ValueError, OSError):
            pass


def _options(parser: argparse.ArgumentParser, command: str | None) -> set[str]:
    """The option strings of ``command``'s parser (to name an input error by the option typed)."""
    for action in parser._subparsers._group_actions if parser._subparsers else ():
        chosen = getattr(action, "choices", None) or {}
        if command in chosen:
            return set(chosen[command]._option_string_actions)
    return set()


def shown_error(err: InputError, options: set[str]) -> InputError:
    """``err`` as the command line shows it: '--mass (Body mass): ...' when the key is an option here."""
    if err.label.startswith("--"):
        return err
    option = f"--{err.key}"
    return option_error(err, option) if option in options else err


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status (2 for bad input, naming the field)."""
    _safe_streams()
    args = list(sys.argv[1:] if argv is None else argv)
    if not args:  # the window: no parser to build (it imports every command's module, a tenth of the start-up)
        return _run_window(argparse.Namespace(command=None), None)
    gc.enable()  # (``python -m ventset`` starts without it: see __main__)
    parser = build_parser()
    ns = parser.parse_args(file_args(args, parser))
    handlers = {"plan": _cmd_plan, "species": _cmd_species, "parts": _cmd_parts, "gui": _cmd_gui,
                "demo": lambda _ns: run_demo(), None: _cmd_gui, **ns._handlers}
    if handlers[ns.command] is _cmd_gui:
        return _run_window(ns, parser)
    return _run(handlers[ns.command], ns, parser)


def _run_window(ns: argparse.Namespace, parser: argparse.ArgumentParser | None) -> int:
    """The window, started with the cyclic garbage collector off (ventset.gui.app.after_first_frame turns it
    on once the first frame is drawn); on again whatever happens."""
    gc.disable()
    try:
        return _run(_cmd_gui, ns, parser)
    finally:
        gc.enable()


def _run(handler, ns: argparse.Namespace, parser: argparse.ArgumentParser | None) -> int:
    """Run one command; bad input is one line naming the field (exit 2), never a traceback."""
    try:
        return handler(ns)
    except InputError as err:
        say(str(shown_error(err, _options(parser, ns.command) if parser is not None else set())))
        return 2
    except DataError as err:
        say(f"data file problem: {err}")
        return 2
    except VentsetError as err:
        say(str(err))
        return 2
    except BrokenPipeError:  # output piped into `head` and closed early
        sys.stderr.close()
        return 0


if __name__ == "__main__":
    sys.exit(main())
