"""Each user input declared once: label, unit, hard limits, help. Drives CLI, validation and GUI.

Hard limits reject nonsense (a negative mass, FiO2 of 3); what is merely unusual for a species
is left to the cautions. No Qt here: the GUI picks widgets from ``kind``.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

from ventset.errors import InputError, register_labels
from ventset.model import ApparatusPart, Request, request_from_dict
from ventset.textpolicy import MAX_PARTS, check_count, check_text
from ventset.units import check_range, parse_quantity


@dataclass(frozen=True)
class FieldSpec:
    """One input. ``unit`` is the internal unit; ``units`` the choices offered for entry."""

    key: str
    label: str
    path: str
    unit: str
    units: tuple[str, ...]
    lo: float | None
    hi: float | None
    help: str
    lo_open: bool = True
    group: str = "patient"

    def within(self, x: float) -> bool:
        """True if ``x`` (in the internal unit) is inside the hard limits (lo excluded when ``lo_open``)."""
        lo_ok = self.lo is None or (x > self.lo if self.lo_open else x >= self.lo)
        return lo_ok and (self.hi is None or x <= self.hi)


FIELDS: dict[str, FieldSpec] = {f.key: f for f in (
    FieldSpec("mass", "Body mass", "patient.mass_kg", "kg", ("kg", "g", "lb"), 0.001, 10000,
              "Body mass as weighed. Any mass unit: '20 kg', '44 lb', '300 g'."),
    FieldSpec("lean-mass", "Lean (ideal) mass", "patient.lean_mass_kg", "kg", ("kg", "g", "lb"), 0.001, 10000,
              "Lean or ideal body mass for an obese patient; tidal volume, lung size and metabolism follow it "
              "(common practice). Default: the body mass."),
    FieldSpec("body-temperature", "Body temperature", "patient.body_temp_c", "degC", ("degC", "degF"), 0.0, 45.0,
              "Core body temperature; corrects metabolic rate (Q10) and water vapour pressure. Fahrenheit only as "
              "'degF' or '°F' (a bare F or C is refused as ambiguous). "
              "Default: the species' normal value (reptiles: middle of the preferred temperature zone).",
              lo_open=False),
    FieldSpec("metabolic-rate", "Metabolic rate", "patient.metabolic_rate_w", "W", ("W", "kcal/day", "kJ/h"),
              1e-4, 1e5, "Measured or estimated metabolic rate ('60 W', '1200 kcal/day', '250 kJ/h'). "
              "Default: allometric estimate for the species' metabolic group."),
    FieldSpec("rq", "Respiratory quotient", "patient.rq", "", ("",), 0.6, 1.3,
              "VCO2/VO2. Default 0.8 for a fasted patient (common practice).", lo_open=False),
    FieldSpec("alveolar-dead-space", "Alveolar dead-space fraction", "patient.alveolar_dead_space_fraction", "",
              ("",), 0.0, 0.8, "Fraction of each breath reaching unperfused alveoli. Default: species value.",
              lo_open=False),
    FieldSpec("compliance", "Respiratory-system compliance", "patient.compliance_ml_cmh2o", "mL/cmH2O",
              ("mL/cmH2O", "L/cmH2O"), 0.005, 1e5, "Measured static compliance of the whole respiratory system. "
              "Default: species value per kg lean mass."),
    FieldSpec("resistance", "Airway resistance", "patient.resistance_cmh2o_l_s", "cmH2O*s/L", ("cmH2O*s/L",),
              0.05, 5000.0, "Inspiratory resistance including the tube, cmH2O/(L/s). Default: species value scaled "
              "by mass."),
    FieldSpec("tube-id", "Tube internal diameter", "circuit.tube_id_mm", "mm", ("mm",), 0.5, 60.0,
              "Endotracheal tube internal diameter.", group="circuit"),
    FieldSpec("tube-length", "Tube beyond incisors", "circuit.tube_length_cm", "cm", ("cm", "mm"), 0.0, 100.0,
              "Length of tube (and connector) from the incisors to the circuit; its volume is dead space.",
              lo_open=False, group="circuit"),
    FieldSpec("compressible-volume", "Circuit compressible volume", "circuit.compressible_ml_cmh2o", "mL/cmH2O",
              ("mL/cmH2O",), 0.0, 500.0, "Volume the circuit absorbs per cmH2O (from the machine's leak/"
              "compliance test). Default: typical for the circuit type.", lo_open=False, group="circuit"),
    FieldSpec("sampling-flow", "Gas sampling flow", "circuit.sampling_ml_min", "mL/min", ("mL/min", "L/min"),
              0.0, 2000.0, "Sidestream analyser flow not returned to the circuit; adds to the minimum oxygen flow.",
              lo_open=False, group="circuit"),
    FieldSpec("target-paco2", "Target PaCO2", "targets.paco2_mmhg", "mmHg", ("mmHg", "kPa"), 10.0, 120.0,
              "Arterial CO2 to aim for. Default: species start value.", group="targets"),
    FieldSpec("target-etco2", "Target EtCO2", "targets.etco2_mmhg", "mmHg", ("mmHg", "kPa"), 5.0, 120.0,
              "End-tidal CO2 to aim for; PaCO2 = EtCO2 + gradient.", group="targets"),
    FieldSpec("gradient", "PaCO2 − EtCO2 gradient", "targets.gradient_mmhg", "mmHg", ("mmHg", "kPa"), -30.0, 60.0,
              "Arterial minus end-tidal CO2. Default: species value.", lo_open=False, group="targets"),
    FieldSpec("peep", "PEEP", "targets.peep_cmh2o", "cmH2O", ("cmH2O", "mbar", "hPa"), 0.0, 30.0,
              "Positive end-expiratory pressure. Default: species value.", lo_open=False, group="targets"),
    FieldSpec("ie", "I:E (expiratory part)", "targets.ie_expiratory_part", "", ("",), 0.25, 20.0,
              "E in I:E = 1:E (2 means 1:2). Default: species value.", lo_open=False, group="targets"),
    FieldSpec("ti", "Inspiratory time", "targets.ti_s", "s", ("s",), 0.05, 10.0,
              "Inspiratory time to use; overrides I:E. Default: about 1 s at 20 kg, scaling with M^0.26 "
              "(Stahl 1967), never longer than the species' I:E allows.", group="targets"),
    FieldSpec("inspiratory-pause", "Inspiratory pause", "targets.inspiratory_pause_s", "s", ("s",), 0.0, 30.0,
              "Breath held at the end of inspiration with no flow (plateau time), part of Ti: with Ti or I:E "
              "entered it comes out of that Ti; otherwise it is added to the usual inspiratory flow time, so Te "
              "is shorter by the pause. Default: the species value, else none (0 s).", lo_open=False,
              group="targets"),
    FieldSpec("pressure-limit", "Pressure limit", "targets.pressure_limit_cmh2o", "cmH2O", ("cmH2O", "mbar", "hPa"),
              1.0, 80.0, "Highest airway pressure the plan may use. Default: species value.", lo_open=False,
              group="targets"),
    FieldSpec("fio2", "FiO2", "targets.fio2", "", ("", "percent"), 0.21, 1.0,
              "Inspired O2 fraction, 0.21-1 (or '50 %'). Default 1.0 under inhalant anaesthesia (common practice).",
              lo_open=False, group="targets"),
    FieldSpec("altitude", "Altitude", "targets.altitude_m", "m", ("m", "ft"), -500.0, 6000.0,
              "Clinic altitude; gives barometric pressure by the ISA standard atmosphere.", lo_open=False,
              group="targets"),
    FieldSpec("barometric-pressure", "Barometric pressure", "targets.barometric_mmhg", "mmHg", ("mmHg", "kPa"),
              300.0, 800.0, "Measured barometric pressure; overrides altitude.", lo_open=False, group="targets"),
    FieldSpec("vt-per-kg", "Tidal volume per kg", "strategy.vt_ml_kg", "mL/kg", ("mL/kg",), 0.5, 60.0,
              "Tidal volume per kg lean mass to start from. Default: species start value.", group="strategy"),
    FieldSpec("rate", "Rate", "strategy.rate_per_min", "1/min", ("1/min",), 0.5, 300.0,
              "Breath rate to hold; tidal volume then follows from the target.", group="strategy"),
    FieldSpec("oxygen-supply", "Oxygen left in the supply", "circuit.oxygen_supply_l", "L", ("L",), 0.0, 1e6,
              "Free oxygen (litres at room pressure) left for fresh gas and a ventilator's driving gas: a full "
              "cylinder's content × gauge pressure ÷ full pressure. Default: a full cylinder of the size usual for "
              "the ventilator class.", group="circuit"),
    FieldSpec("duration", "Planned duration", "targets.duration_min", "min", ("min", "h"), 0.0, 2880.0,
              "How long the anaesthetic is planned to last; the oxygen supply is checked against it. Default 2 h.",
              group="targets"),
)}

# The inputs that are not numbers, by key: where each goes in a Request, and its text rule (ventset.textpolicy).
TEXT_INPUTS: dict[str, str] = {"species": "patient.species", "name": "patient.name",
                               "custom-species": "patient.custom_species", "mode": "circuit.mode",
                               "circuit": "circuit.circuit_type", "strategy": "strategy.name",
                               "age": "patient.age", "state": "patient.state", "machine": "circuit.machine",
                               "taxon": "patient.taxon"}
TEXT_POLICY = {"species": "species-text", "name": "name", "custom-species": "custom-species", "mode": "choice",
               "circuit": "choice", "strategy": "choice", "age": "choice", "state": "choice", "machine": "choice",
               "taxon": "choice"}
INPUT_LABELS = {"species": "Species", "name": "Patient name", "custom-species": "Custom species", "mode": "Mode",
                "circuit": "Circuit type", "strategy": "Strategy", "apparatus": "Apparatus", "age": "Age",
                "state": "Physiological state", "situation": "Situation", "machine": "Ventilator class",
                "taxon": "Metabolic group (species not listed)"}
PARTS_PATH = "circuit.parts"
# The situations (a list of keys, checked against resources/situations.toml by the planner).
SITUATIONS_KEY, SITUATIONS_PATH = "situations", "patient.situations"
register_labels({"name": "Patient name", "custom-species": "Custom species", "situation": "Situation",
                 **{k: f.label for k, f in FIELDS.items()}})



def parse_field(field: FieldSpec | str, text: object) -> float:
    """Parse and range-check one input (a FieldSpec, or a key of FIELDS); raises InputError naming it.

    Works for any FieldSpec (the plan's inputs here, the titration's measured values): a bare number is read in
    the spec's internal unit; ``units == ("", "percent")`` means a fraction that may be typed as '50 %'.
    """
    spec = FIELDS[field] if isinstance(field, str) else field
    if spec.unit == "" and "percent" in spec.units and not _plain(text):
        value = parse_quantity(text, "percent", spec) / 100
    else:
        value = parse_quantity(text, spec.unit, spec)
    return check_range(value, spec.lo, spec.hi, spec, spec.unit, lo_open=spec.lo_open)


def _plain(text: object) -> bool:
    return isinstance(text, int | float) or str(text).strip().replace(".", "", 1).lstrip("+-").isdigit()


def get_path(request: object, path: str) -> object:
    """Read ``a.b`` from nested dataclasses."""
    obj = request
    for part in path.split("."):
        obj = getattr(obj, part)
    return obj


def check_value(spec: FieldSpec, value: object) -> None:
    """Check one stored number (None = not given) against its field's hard limits; InputError naming it."""
    if value is None:
        return
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(spec, value, "must be a number")
    check_range(float(value), spec.lo, spec.hi, spec, spec.unit, lo_open=spec.lo_open)


def validate_request(request: object) -> None:
    """Check a Request against every field's hard limits and the text policy; raises InputError naming the field."""
    for spec in FIELDS.values():
        check_value(spec, get_path(request, spec.path))
    for key, path in TEXT_INPUTS.items():
        value = get_path(request, path)
        if value is not None:
            check_text(TEXT_POLICY[key], value, label=INPUT_LABELS[key])
    _check_parts(get_path(request, "circuit.parts"))
    _check_situations(get_path(request, SITUATIONS_PATH))


def _check_situations(keys: object) -> tuple[str, ...]:
    """A list of situation keys: text by the text policy, at most MAX_SITUATIONS (known keys: the planner)."""
    from ventset.situations import MAX_SITUATIONS

    if isinstance(keys, str) or not isinstance(keys, tuple | list):
        raise InputError("situation", type(keys).__name__, "must be a list of situations")
    check_count("situation", len(keys), MAX_SITUATIONS, "situations")
    for k in keys:
        try:
            check_text("choice", k, label="Situation")
        except InputError as err:
            raise InputError("situation", err.value, err.reason) from None
    return tuple(keys)


def _check_parts(parts: object) -> None:
    if not isinstance(parts, tuple | list):
        raise InputError("apparatus", type(parts).__name__, "must be a list of parts")
    check_count("apparatus", len(parts), MAX_PARTS)
    for part in parts:
        check_text("part-name", getattr(part, "name", None))
        check_text("part-source", getattr(part, "source", None))


def request_from_inputs(values: Mapping[str, object], parts: Sequence[ApparatusPart] = (), *, library=None,
                        check_ranges: bool = True) -> tuple[Request | None, list[InputError]]:
    """The one request builder: each input, by key, goes where its spec's path says.

    ``values`` maps FIELDS keys to typed text or numbers (parsed and range-checked with :func:`parse_field`;
    with ``check_ranges=False`` numbers are placed as they are, as a case file stores them) and TEXT_INPUTS keys
    to text (checked by the text policy; with a ``library`` the species must be in it and is stored by its key).
    None means "not entered". Returns (request, []) or (None, every error found, field by field).
    """
    errors: list[InputError] = []
    data: dict[str, dict[str, object]] = {"patient": {}, "circuit": {}, "targets": {}, "strategy": {}}

    def put(path: str, value: object) -> None:
        section, attr = path.split(".", 1)
        data[section][attr] = value

    for key, spec in FIELDS.items():
        raw = values.get(key)
        if raw is None:
            continue
        try:
            put(spec.path, parse_field(spec, raw) if check_ranges else raw)
        except InputError as err:
            errors.append(err)
    if values.get("mass") is None and "mass" not in {e.key for e in errors}:
        errors.append(InputError("mass", "", "is needed: enter the weighed body mass (e.g. '20 kg')"))
    by_group = isinstance(values.get("taxon"), str) and bool(str(values.get("taxon")).strip())
    for key, path in TEXT_INPUTS.items():
        try:
            text = _text_input(key, values.get(key), library, by_group)
        except InputError as err:
            errors.append(err)
            continue
        if text is not None:
            put(path, text)
    try:
        _check_parts(tuple(parts))
    except InputError as err:
        errors.append(err)
    put(PARTS_PATH, [{"name": p.name, "volume_ml": p.volume_ml, "source": p.source} for p in parts])
    try:
        put(SITUATIONS_PATH, _situation_keys(values.get(SITUATIONS_KEY), library))
    except InputError as err:
        errors.append(err)
    if errors:
        return None, errors
    request = request_from_dict(data)
    young = _age_named(values, request.patient.mass_kg, library)
    return (replace(request, patient=replace(request.patient, age=young)) if young else request), []


def _age_named(values: Mapping[str, object], mass_kg: float, library) -> str | None:
    """The age a young alias typed as the species chooses (puppy → juvenile) when no age is entered."""
    typed, age = values.get("species"), values.get("age")
    if library is None or not isinstance(typed, str) or (isinstance(age, str) and age.strip()):
        return None
    sp = library.find_species(typed) if typed.strip() else None
    return sp.age_named(typed, mass_kg) if sp is not None else None


def _situation_keys(value: object, library) -> tuple[str, ...]:
    """The situations as keys (typed 'Raised_ICP' → 'raised-icp'); with a library each must be in it."""
    from ventset.situations import normal_key

    if value is None:
        return ()
    keys = tuple(normal_key(k) for k in _check_situations(value) if k.strip())
    if library is not None:
        for key in keys:
            if key not in library.situations:
                raise InputError("situation", key, "is not a known situation; run 'ventset situations' for the list")
    return tuple(dict.fromkeys(keys))


def _text_input(key: str, value: object, library, by_group: bool = False) -> str | None:
    if key == "species" and by_group:
        return _species_beside_taxon(value)
    if value is None and key == "species" and library is not None:
        value = ""  # not entered: said below, with what to do
    if value is None:
        return "volume_first" if key == "strategy" else None
    text = check_text(TEXT_POLICY[key], value, label=INPUT_LABELS[key])
    if key == "taxon":
        return _taxon_input(text, library)
    if key in ("mode", "circuit", "machine") and not text:
        return None
    if key == "strategy" and not text:
        return "volume_first"
    if key == "age" and not text:
        return None
    if key == "state" and not text:
        return "fasted"
    if key == "species" and library is not None:
        if not text.strip():
            raise InputError("species", text, "is needed: type a name and pick from the list, or plan a species "
                                              "not listed by its metabolic group (--taxon)")
        sp = library.find_species(text)
        if sp is None:
            raise InputError("species", text, "is not in the library; type part of a name and pick from the list "
                                              "(all species: 'ventset species')")
        return sp.key
    return text


def _species_beside_taxon(value: object) -> str:
    """A taxon-only patient has no species: refuse one typed as well (which would the plan follow?)."""
    if isinstance(value, str) and value.strip():
        raise InputError("species", value, "give a listed species or a metabolic group for one not listed (taxon), "
                                           "not both")
    return ""


def _taxon_input(text: str, library) -> str | None:
    """The metabolic group key of a taxon-only patient ('' or None: none chosen)."""
    if not text.strip():
        return None
    if library is None:
        return text.strip()
    tx = library.find_taxon(text)
    if tx is None:
        raise InputError("taxon", text, f"is not a metabolic group with values for a species not listed; "
                                        f"one of {', '.join(library.taxa)}")
    return tx.group.key


def inputs_from_request(request: Request) -> tuple[dict[str, object], tuple[ApparatusPart, ...]]:
    """The inverse of :func:`request_from_inputs`: every input of ``request`` by key (None when not entered)."""
    values: dict[str, object] = {spec.key: get_path(request, spec.path) for spec in FIELDS.values()}
    values.update({key: get_path(request, path) for key, path in TEXT_INPUTS.items()})
    values[SITUATIONS_KEY] = tuple(get_path(request, SITUATIONS_PATH))  # type: ignore[arg-type]
    return values, tuple(request.circuit.parts)
