"""What every ventset command shares: the request options, building a Request from them, JSON output, and
naming an input error by the option the user typed. (Its own module so that ventset.cli and the command
modules it loads import it, not each other.)
"""

from __future__ import annotations

import argparse
import json
import sys

from ventset.errors import InputError, one_line
from ventset.fields import FIELDS, SITUATIONS_KEY, request_from_inputs
from ventset.model import AGES, MODES, STATES, STRATEGIES, Request

# The options that fill the request's text inputs: input key → argparse destination.
TEXT_OPTIONS = {"species": "species", "name": "name", "custom-species": "custom_species", "mode": "mode",
                "circuit": "circuit", "strategy": "strategy", "age": "age", "state": "state", "machine": "machine",
                "taxon": "taxon"}
# Other spellings an input's option accepts (the first is the input's key).
OPTION_ALIASES = {"body-temperature": ("--temperature",)}


def say(message: str) -> None:
    """One line on stderr, prefixed 'ventset: ', made safe (no raw line breaks or escapes)."""
    print(f"ventset: {one_line(message)}", file=sys.stderr)


def print_json(obj: object) -> None:
    """Print a result as strict JSON (no NaN/Infinity; non-ASCII kept) on stdout."""
    print(json.dumps(obj, indent=2, ensure_ascii=False, allow_nan=False))


def dest(key: str) -> str:
    """The argparse destination of input ``key`` ('tube-id' → 'tube_id')."""
    return key.replace("-", "_")


def add_request_options(p: argparse.ArgumentParser) -> None:
    """The options of one patient's request (species, name, parts, every FieldSpec)."""
    p.add_argument("--species", help="species key, name or alias (see 'ventset species'); or --taxon")
    p.add_argument("--taxon", metavar="GROUP",
                   help="a species not listed, planned by its metabolic group alone from group allometry (no base "
                        "species; a caution says so): placental, marsupial, monotreme, passerine, non_passerine, "
                        "reptile, reptile_boid, reptile_chelonian, reptile_lizard, reptile_crocodilian. Enter the "
                        "mass and the measured body temperature")
    p.add_argument("--name", default="", help="patient name for the printout (one line, at most 500 characters)")
    p.add_argument("--custom-species", default="", metavar="NAME",
                   help="a species not in the library, planned with the values of --species (its base) unless "
                        "entered; a caution says so")
    p.add_argument("--apparatus", action="append", default=[], metavar="NAME[=VOLUME]",
                   help="a part between Y-piece and incisors: a catalogue key (see 'ventset parts'), "
                        "or NAME=VOLUME such as 'hme=12 mL'; repeat for each part (at most 100)")
    p.add_argument("--mode", choices=MODES, help="volume or pressure (default: species)")
    p.add_argument("--strategy", choices=STRATEGIES, default="volume_first",
                   help="volume_first: tidal volume per kg, then rate; least_work: Otis rate, then tidal volume")
    p.add_argument("--circuit", help="non_rebreathing, rebreathing_small_animal, ... (default: by mass)")
    p.add_argument("--age", choices=AGES,
                   help="neonate, juvenile or adult: growing animals have their own metabolic level (default: by "
                        "body mass where the species gives the masses, else adult)")
    p.add_argument("--state", choices=STATES, default="fasted",
                   help="ectotherms (reptiles): fasted, fed (recently eaten) or gravid (default fasted)")
    p.add_argument("--situation", action="append", default=[], metavar="KEY",
                   help="the patient's situation (surgery, disease, physiology) such as laparoscopy or raised-icp; "
                        "repeat for several; 'ventset situations' lists them with their effects")
    p.add_argument("--machine", metavar="KEY_OR_NAME",
                   help="a ventilator class or one of the clinic's machines (see 'ventset machines'): the plan is "
                        "also dialled on its controls")
    for spec in FIELDS.values():
        p.add_argument(f"--{spec.key}", *OPTION_ALIASES.get(spec.key, ()), dest=dest(spec.key), metavar="VALUE",
                       help=f"{spec.help} [{_unit_help(spec.unit)}]".replace("%", "%%"))


def _unit_help(unit: str) -> str:
    from ventset.units import shown_unit

    return shown_unit(unit) if unit else "number"


def request_from_args(ns: argparse.Namespace, library) -> Request:
    """Build a Request from parsed options through the one request builder; raises the first InputError."""
    from ventset.partslib import clinic_part, part_from_text

    values: dict[str, object] = {key: getattr(ns, dest(key)) for key in FIELDS}
    values.update({key: getattr(ns, name) for key, name in TEXT_OPTIONS.items()})
    values[SITUATIONS_KEY] = list(getattr(ns, "situation", None) or [])
    errors: list[InputError] = []
    if values.get("machine"):
        values["machine"] = _machine_key(str(values["machine"]), errors)
    parts = []
    for item in ns.apparatus:
        try:
            parts.append(part_from_text(item, library, clinic_part))
        except InputError as err:
            errors.append(err)
    request, more = request_from_inputs(values, parts, library=library)
    errors = more + errors
    if request is None or errors:
        raise errors[0]
    return request


def _machine_key(text: str, errors: list[InputError]) -> str:
    """The class key, or the clinic machine's name, for what was typed after --machine (a key, a label, a name or
    a unique part of one)."""
    from ventset.machines.stage import find_machine

    try:
        return find_machine(text).key
    except InputError as err:
        errors.append(err)
        return text


def option_error(err: InputError, option: str) -> InputError:
    """``err`` named by the option typed: '--mass (Body mass)', or just '--species' when the label adds nothing."""
    plain = err.label.lower().replace(" ", "-")
    same = plain in (option.lstrip("-"), err.key) or err.label.startswith("--")
    return err.named(option if same else f"{option} ({err.label})")
