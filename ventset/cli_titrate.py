"""Command line: ``ventset adjust`` (next settings from a measurement) and ``ventset deadspace``."""

from __future__ import annotations

import argparse

from ventset.cli_support import option_error, print_json, request_from_args
from ventset.errors import InputError
from ventset.fields import FIELDS

# The option a user of each command typed for each input key (keys, as InputError carries them).
_ADJUST_OPTIONS = {
    **{key: f"--{key}" for key in FIELDS}, "tidal-volume": "--tidal-volume", "rate": "--rate",
    "paco2": "--measured-paco2", "etco2": "--measured-etco2", "pao2": "--measured-pao2", "spo2": "--measured-spo2",
}
_DEADSPACE_OPTIONS = {
    "paco2": "--paco2", "etco2": "--etco2", "mixed-expired-co2": "--mixed-expired-co2",
    "alveolar-co2": "--alveolar-co2", "tidal-volume": "--tidal-volume", "apparatus-volume": "--apparatus-volume",
    "mass": "--mass", "lean-mass": "--lean-mass", "species": "--species",
}


def register(sub, add_request_options) -> dict:
    """Add ``adjust`` and ``deadspace`` to the ``ventset`` command line."""
    p = sub.add_parser("adjust", help="next settings from a measured PaCO2 or EtCO2 (during the anaesthetic)",
                       description="Read a measured PaCO2 (or EtCO2 + gradient) at the settings in use through the "
                                   "model of this patient and circuit, and propose the next tidal volume and rate.")
    add_request_options(p)
    for action in p._actions:  # `plan`'s --rate holds a rate; here it is the rate in use
        if action.dest == "rate":
            action.help = "rate in use now [/min] (required)"
        if action.dest == "vt_per_kg":
            action.help = "tidal volume in use per kg lean mass, instead of --tidal-volume [mL/kg]"
    p.add_argument("--tidal-volume", metavar="VALUE",
                   help="tidal volume the patient receives now: exhaled volume by spirometry, or the set volume "
                        "less what the circuit absorbs [mL]")
    p.add_argument("--measured-paco2", metavar="VALUE", help="arterial PCO2 from a blood gas ('52 mmHg', '6.9 kPa')")
    p.add_argument("--measured-etco2", metavar="VALUE",
                   help="end-tidal CO2; used with the gradient when no PaCO2 is given, else to measure the gradient")
    p.add_argument("--measured-pao2", metavar="VALUE", help="arterial PO2, for the oxygenation check")
    p.add_argument("--measured-spo2", metavar="VALUE", help="pulse-oximeter saturation [%%]")
    p.add_argument("--dial", action="append", default=[], metavar="CONTROL=VALUE",
                   help="with --machine: a setting in use read on the machine's control, in the unit 'ventset "
                        "machines' shows (e.g. 'tidal_volume=250'); repeat for each control, instead of "
                        "--tidal-volume and --rate. The proposal is always given as the machine's controls")
    p.add_argument("--prefer", choices=("rate", "tidal-volume", "both"), default="rate",
                   help="what to change: rate (default; keeps VT), tidal-volume (keeps the rate), or both")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--gas-unit", choices=("mmHg", "kPa"), default="mmHg", help="unit for gas pressures")

    d = sub.add_parser("deadspace", help="dead-space fraction from measured CO2 (Bohr, Enghoff)",
                       description="Bohr and Enghoff VD/VT from mixed-expired PCO2, and the split into apparatus, "
                                   "anatomical and alveolar dead space where the inputs allow.")
    d.add_argument("--paco2", metavar="VALUE", help="arterial PCO2 (required)")
    d.add_argument("--mixed-expired-co2", metavar="VALUE", help="mean PCO2 of the expired gas (required)")
    d.add_argument("--alveolar-co2", metavar="VALUE", help="mean alveolar PCO2 from volumetric capnography (Bohr)")
    d.add_argument("--etco2", metavar="VALUE", help="end-tidal CO2 (alveolar dead space from the gradient)")
    d.add_argument("--tidal-volume", metavar="VALUE", help="tidal volume, for volumes in mL")
    d.add_argument("--apparatus-volume", metavar="VALUE",
                   help="apparatus between Y-piece and incisors plus the tube beyond the incisors [mL]")
    d.add_argument("--species", help="species, with --mass, for the anatomical dead-space estimate")
    d.add_argument("--mass", metavar="VALUE", help="body mass, with --species")
    d.add_argument("--lean-mass", metavar="VALUE", help="lean (ideal) mass, if different")
    d.add_argument("--json", action="store_true", help="print one JSON object")
    return {"adjust": _cmd_adjust, "deadspace": _cmd_deadspace}


def _value(key: str, raw: str | None, option: str) -> float | None:
    from ventset.titrate import parse_measured

    if raw is None:
        return None
    try:
        return parse_measured(key, raw)
    except InputError as err:
        raise option_error(err, option) from None


def _renamed(err: InputError, options: dict[str, str]) -> InputError:
    option = options.get(err.key)
    return option_error(err, option) if option else err


def _cmd_adjust(ns: argparse.Namespace) -> int:
    from ventset.library import load_library
    from ventset.titrate import Measurement

    lib = load_library()
    request = request_from_args(ns, lib)
    if ns.dial:
        return _adjust_from_dials(ns, request, lib)
    rate = request.strategy.rate_per_min
    if rate is None:
        raise InputError("--rate", "", "is required: the rate in use (e.g. '--rate 12')")
    vt = _value("tidal-volume", ns.tidal_volume, "--tidal-volume")
    if vt is None:
        if request.strategy.vt_ml_kg is None:
            raise InputError("--tidal-volume", "", "is required: the tidal volume in use (e.g. '--tidal-volume 200')")
        lean = request.patient.lean_mass_kg or request.patient.mass_kg
        vt = request.strategy.vt_ml_kg * lean
    elif request.strategy.vt_ml_kg is not None:
        raise InputError("--vt-per-kg", ns.vt_per_kg, "give the tidal volume in use once: --tidal-volume or "
                                                      "--vt-per-kg, not both")
    paco2 = _value("paco2", ns.measured_paco2, "--measured-paco2")
    etco2 = _value("etco2", ns.measured_etco2, "--measured-etco2")
    if paco2 is None and etco2 is None:
        raise InputError("--measured-paco2", "", "is required (or give --measured-etco2)")
    m = Measurement(0.0, vt, rate, paco2, etco2, _value("pao2", ns.measured_pao2, "--measured-pao2"),
                    _value("spo2", ns.measured_spo2, "--measured-spo2"), request.targets.fio2)
    return _run_adjust(ns, request, m, lib)


def _adjust_from_dials(ns: argparse.Namespace, request, lib) -> int:
    """The settings in use as the machine's controls (``--dial``): the breath they deliver is what is read."""
    from ventset.machines.stage import find_machine
    from ventset.titrate import Measurement
    from ventset.titrate.dials import settings_from_dials

    if not request.circuit.machine:
        raise InputError("--dial", ns.dial[0], "needs --machine: the machine whose controls these are")
    for option, given in (("--tidal-volume", ns.tidal_volume), ("--rate", request.strategy.rate_per_min),
                          ("--vt-per-kg", request.strategy.vt_ml_kg)):
        if given is not None:
            raise InputError(option, given, "give the settings in use once: as --dial on the machine's controls, "
                                            "or as --tidal-volume and --rate, not both")
    pairs = []
    for item in ns.dial:
        control, sep, value = item.partition("=")
        if not sep or not control.strip():
            raise InputError("--dial", item, "needs CONTROL=VALUE, e.g. 'tidal_volume=250'")
        pairs.append((control.strip(), value))
    dials = settings_from_dials(request, find_machine(request.circuit.machine), pairs, lib)
    assert dials.tidal_volume_ml is not None and dials.rate_per_min is not None
    paco2 = _value("paco2", ns.measured_paco2, "--measured-paco2")
    etco2 = _value("etco2", ns.measured_etco2, "--measured-etco2")
    if paco2 is None and etco2 is None:
        raise InputError("--measured-paco2", "", "is required (or give --measured-etco2)")
    m = Measurement(0.0, dials.tidal_volume_ml, dials.rate_per_min, paco2, etco2,
                    _value("pao2", ns.measured_pao2, "--measured-pao2"),
                    _value("spo2", ns.measured_spo2, "--measured-spo2"), request.targets.fio2, dials=dials)
    return _run_adjust(ns, request, m, lib)


def _run_adjust(ns: argparse.Namespace, request, m, lib) -> int:
    from ventset.titrate import adjust, adjustment_to_dict, adjustment_to_text

    try:
        result = adjust(request, m, ns.prefer.replace("-", "_"), lib)
    except InputError as err:
        raise _renamed(err, _ADJUST_OPTIONS) from None
    if ns.json:
        print_json(adjustment_to_dict(result))
    else:
        print(adjustment_to_text(result, ns.gas_unit))
    return 0


def _cmd_deadspace(ns: argparse.Namespace) -> int:
    from ventset.fields import parse_field
    from ventset.library import load_library
    from ventset.model import Patient, Request
    from ventset.titrate import anatomical_estimate_ml, dead_space_to_dict, dead_space_to_text, measured_dead_space

    paco2 = _value("paco2", ns.paco2, "--paco2")
    if paco2 is None:
        raise InputError("--paco2", "", "is required (arterial PCO2, e.g. '--paco2 45')")
    pe = _value("mixed-expired-co2", ns.mixed_expired_co2, "--mixed-expired-co2")
    if pe is None:
        raise InputError("--mixed-expired-co2", "", "is required (mean expired PCO2, e.g. '--mixed-expired-co2 28')")
    anat, source = None, ""
    if (ns.species is None) != (ns.mass is None):
        raise InputError("--mass" if ns.mass is None else "--species", "",
                         "give --species and --mass together for the anatomical estimate")
    if ns.species is not None:
        lib = load_library()
        if lib.find_species(ns.species) is None:
            raise InputError("--species", ns.species, "unknown species; run 'ventset species' for the list")
        try:
            mass = parse_field("mass", ns.mass)
            lean = None if ns.lean_mass is None else parse_field("lean-mass", ns.lean_mass)
            anat, source = anatomical_estimate_ml(Request(Patient(ns.species, mass, lean)), lib)
        except InputError as err:
            raise _renamed(err, _DEADSPACE_OPTIONS) from None
    try:
        result = measured_dead_space(paco2, pe, _value("alveolar-co2", ns.alveolar_co2, "--alveolar-co2"),
                                     _value("etco2", ns.etco2, "--etco2"),
                                     _value("tidal-volume", ns.tidal_volume, "--tidal-volume"),
                                     _value("apparatus-volume", ns.apparatus_volume, "--apparatus-volume"),
                                     anat, source)
    except InputError as err:
        raise _renamed(err, _DEADSPACE_OPTIONS) from None
    if ns.json:
        print_json(dead_space_to_dict(result))
    else:
        print(dead_space_to_text(result))
    return 0
