"""Command line: ``ventset irrigate`` — gill irrigation for an anaesthetised fish or aquatic amphibian."""

from __future__ import annotations

import argparse
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from ventset.aquatic.inputs import AQUATIC_FIELDS, key_of_label
from ventset.errors import InputError

if TYPE_CHECKING:
    from ventset.aquatic.irrigation import IrrigationRequest

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
    return {"irrigate": _cmd_irrigate}


def _flag_error(err: InputError) -> InputError:
    key = key_of_label(err.field)
    if key is None and err.field == "Species":
        key = "species"
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
    from ventset.cli import print_json

    if ns.list:
        return _list()
    try:
        plan = plan_irrigation(request_from_args(ns))
    except InputError as err:
        raise _flag_error(err) from None
    if ns.json:
        print_json(irrigation_to_dict(plan))
    else:
        print(irrigation_to_text(plan))
    return 0
