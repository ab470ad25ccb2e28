"""The form's state as plain data, and its translation to and from a Request. No widgets here.

The state is a flat dict so that one undo command can restore any part of it:

* ``text:<field>`` what is typed in the field, ``unit:<field>`` the unit chosen beside it,
  ``exact:<field>`` an exact value behind a rounded text (after a unit switch or a loaded case), so
  switching kg → lb → kg or loading a case changes no underlying number;
* ``choice:target`` / ``choice:timing`` which member of an either-or pair is used;
* ``species`` (a species key, or ``taxon:<group>`` for a species not listed, planned by its group),
  ``custom_species``, ``name``, ``mode``, ``circuit``, ``machine``, ``strategy``, ``parts``
  (a tuple of (name, volume text, source)), ``situations`` (a tuple of situation keys).

Fields come from ventset.fields.FIELDS; nothing about a field is declared here a second time.
"""

from __future__ import annotations

import dataclasses
import re

from ventset.errors import InputError
from ventset.fields import FIELDS, SITUATIONS_KEY, TEXT_INPUTS, get_path, parse_field, request_from_inputs
from ventset.library import TAXON_PREFIX, Library
from ventset.model import ApparatusPart, Patient, Request
from ventset.part_text import part_volume_ml
from ventset.units import check_range, convert, find_unit, fmt, parse_quantity

TEXT, UNIT, EXACT, CHOICE = "text:", "unit:", "exact:", "choice:"

# Either-or pairs: only the chosen member is sent to the planner (it rejects both at once).
PAIRS: dict[str, tuple[str, str]] = {"target": ("target-paco2", "target-etco2"), "timing": ("ie", "ti")}
GAS_FIELDS = tuple(k for k, s in FIELDS.items() if s.unit == "mmHg")

# Fields shown in one unit together: choosing (or typing) a unit in one moves the others (gas pressures always
# move together, see GAS_FIELDS; body and lean mass; PEEP and the pressure limit).
RELATED: dict[str, tuple[str, ...]] = {"mass": ("lean-mass",), "lean-mass": ("mass",), "peep": ("pressure-limit",),
                                       "pressure-limit": ("peep",)}
_TYPED = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(\S.*?)\s*$")

_SHOWN = {"degC": "°C", "degF": "°F", "1/min": "/min", "cmH2O*s/L": "cmH2O/(L/s)", "percent": "%"}
_PLAIN_NUMBER = re.compile(r"^\s*[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\s*$")


def shown_unit(unit: str, key: str = "") -> str:
    """How a unit name is written on screen."""
    if key == "fio2" and unit == "":
        return "fraction"
    return _SHOWN.get(unit, unit)


def pair_of(key: str) -> str | None:
    for name, members in PAIRS.items():
        if key in members:
            return name
    return None


def is_active(state: dict, key: str) -> bool:
    """False for the member of an either-or pair that is not chosen."""
    pair = pair_of(key)
    return pair is None or state.get(CHOICE + pair, PAIRS[pair][0]) == key


def to_unit(value: float, key: str, unit: str) -> float:
    """An internal value of field ``key`` expressed in ``unit``."""
    spec = FIELDS[key]
    if unit == spec.unit:
        return value
    if key == "fio2" and unit == "percent":
        return value * 100.0
    return convert(value, spec.unit, unit)


def edit_text(value: float) -> str:
    """A number as it is put into an entry field (4 significant figures, no trailing zeros)."""
    return fmt(value, 4)


def related(key: str) -> tuple[str, ...]:
    """The fields that show their values in the same unit as ``key`` (itself not included)."""
    if key in GAS_FIELDS:
        return tuple(k for k in GAS_FIELDS if k != key)
    return RELATED.get(key, ())


def typed_unit(key: str, text: str) -> tuple[str, str] | None:
    """(number, unit) when ``text`` is a number followed by one of the units offered beside field ``key``
    ('35 g' in body mass gives ('35', 'g')), else None."""
    m = _TYPED.match(text or "")
    if not m or len(FIELDS[key].units) < 2:
        return None
    unit = find_unit(m.group(2))
    if unit is None or unit.name not in FIELDS[key].units:
        return None
    return m.group(1), unit.name


def parse_text(key: str, text: str, unit: str) -> float:
    """Parse what is typed in field ``key``: a bare number is read in the unit chosen beside it. A value out of
    range is reported in the unit it was typed in ('−3 lb' says lb, not kg)."""
    t = text.strip()
    if unit and _PLAIN_NUMBER.match(t):
        t = f"{t} {unit}"
    spec = FIELDS[key]
    typed = typed_unit(key, t)
    shown = typed[1] if typed else unit
    if shown and shown != spec.unit:
        # unit and number errors first, as parse_field gives them; then the range in the unit shown
        value = parse_quantity(t, "percent", spec) / 100 if shown == "percent" else parse_quantity(t, spec.unit, spec)
        lo = None if spec.lo is None else to_unit(spec.lo, key, shown)
        hi = None if spec.hi is None else to_unit(spec.hi, key, shown)
        check_range(to_unit(value, key, shown), lo, hi, spec, shown, lo_open=spec.lo_open)
    return parse_field(key, t)


def field_value(state: dict, key: str) -> float | None:
    """The internal value of a field, None when empty; raises InputError for bad input."""
    text = state.get(TEXT + key, "")
    if not text.strip():
        return None
    unit = state.get(UNIT + key, FIELDS[key].units[0])
    exact = state.get(EXACT + key)
    if exact is not None and exact[0] == text and exact[1] == unit:
        return exact[2]
    return parse_text(key, text, unit)


def convert_field(state: dict, key: str, new_unit: str) -> dict:
    """State changes that show field ``key`` in ``new_unit`` without changing its value."""
    changes: dict = {UNIT + key: new_unit}
    try:
        value = field_value(state, key)
    except InputError:
        return changes  # keep the text as typed; it is marked invalid anyway
    if value is None:
        changes[EXACT + key] = None
        return changes
    text = edit_text(to_unit(value, key, new_unit))
    changes[TEXT + key] = text
    changes[EXACT + key] = (text, new_unit, value)
    return changes


def blank_state(units: dict[str, str] | None = None) -> dict:
    """Every key present, every field empty, units from ``units`` (else the first choice)."""
    units = units or {}
    state: dict = {"species": "", "custom_species": "", "name": "", "mode": "", "circuit": "",
                   "strategy": "volume_first", "parts": (), "situations": (), "machine": "", "notice": "",
                   "age": "", "state": "fasted"}
    for key, spec in FIELDS.items():
        state[TEXT + key] = ""
        state[UNIT + key] = units.get(key, spec.units[0])
        state[EXACT + key] = None
    for name, members in PAIRS.items():
        state[CHOICE + name] = members[0]
    return state


# What belongs to one patient rather than to the clinician's aims: a new species starts these afresh from its own
# defaults (the name, body mass, targets, mode and method stay). Values by mass or by species: the tube, the
# breathing system and its parts, temperature, lean mass, the patient's own measurements, Ti, VT per kg and rate.
PATIENT_FIELDS = ("lean-mass", "body-temperature", "metabolic-rate", "rq", "alveolar-dead-space", "compliance",
                  "resistance", "tube-id", "tube-length", "compressible-volume", "gradient", "ti", "vt-per-kg",
                  "rate")


def species_change(state: dict, species: str, species_label: str) -> dict:
    """The state changes that make ``species`` the patient's species and reset what belonged to the previous
    patient (PATIENT_FIELDS, the apparatus parts and the breathing system), with a one-line ``notice`` saying
    what was reset. The species alone when it was not set before or is unchanged."""
    changes: dict = {"species": species}
    if not state.get("species") or state.get("species") == species:
        return changes
    reset = []
    for key in PATIENT_FIELDS:
        if key in FIELDS and state.get(TEXT + key, "").strip():
            changes[TEXT + key] = ""
            changes[EXACT + key] = None
            reset.append(FIELDS[key].label)
    if state.get("parts"):
        n = len(state["parts"])
        changes["parts"] = ()
        reset.append(f"apparatus ({n} part{'s' if n != 1 else ''})")
    if state.get("circuit"):
        changes["circuit"] = ""
        reset.append("breathing system")
    if state.get("situations"):
        changes["situations"] = ()
        reset.append("situations")
    if state.get("age") or state.get("state", "fasted") != "fasted":
        changes["age"], changes["state"] = "", "fasted"
        reset.append("age and state")
    changes["notice"] = (f"New species {species_label}: reset to its defaults: {', '.join(reset)}." if reset
                         else "")
    return changes


def state_from_request(request: Request, units: dict[str, str], library: Library) -> dict:
    """The form state that shows ``request`` in the user's units (exact values kept)."""
    state = blank_state(units)
    p, c, s = request.patient, request.circuit, request.strategy
    sp = library.find_species(p.species) if p.species.strip() else None
    shown = TAXON_PREFIX + p.taxon if p.taxon.strip() else sp.key if sp else p.species
    state.update(species=shown, name=p.name, mode=c.mode or "",
                 circuit=c.circuit_type or "", strategy=s.name, machine=c.machine or "",
                 custom_species=getattr(p, "custom_species", "") or "",
                 parts=tuple((x.name, edit_text(x.volume_ml), x.source, x.volume_ml) for x in c.parts),
                 situations=tuple(p.situations), age=p.age or "", state=p.state)
    defaults = _dataclass_defaults()
    for key, spec in FIELDS.items():
        try:
            value = get_path(request, spec.path)
        except AttributeError:
            continue
        if value is None or (spec.path in defaults and value == defaults[spec.path]):
            continue
        unit = state[UNIT + key]
        text = edit_text(to_unit(float(value), key, unit))
        state[TEXT + key] = text
        state[EXACT + key] = (text, unit, float(value))
    for name, (first, second) in PAIRS.items():
        if state[TEXT + second] and not state[TEXT + first]:
            state[CHOICE + name] = second
    return state


def _dataclass_defaults() -> dict[str, object]:
    """Non-None dataclass defaults by path (altitude 0 m, sampling 0 mL/min): shown as empty fields."""
    from ventset.model import Circuit, Strategy, Targets

    out = {}
    for section, cls in (("patient", Patient), ("circuit", Circuit), ("targets", Targets), ("strategy", Strategy)):
        for f in dataclasses.fields(cls):
            if f.default is not dataclasses.MISSING and f.default is not None and isinstance(f.default, float):
                out[f"{section}.{f.name}"] = f.default
    return out


def part_volume(part: tuple) -> float:
    """Volume (mL) of a parts entry (name, text, source[, exact])."""
    name, text = part[0], part[1]
    if len(part) > 3 and part[3] is not None and edit_text(part[3]) == text:
        return float(part[3])
    return part_volume_ml(text, f"Apparatus '{name}'")


def request_from_state(state: dict, library: Library) -> tuple[Request | None, list[InputError]]:
    """Build the Request the form describes through the one request builder (ventset.fields), or return every
    input error found (field by field)."""
    errors: list[InputError] = []
    species = state.get("species", "")
    taxon = species.removeprefix(TAXON_PREFIX) if species.startswith(TAXON_PREFIX) else ""
    values: dict[str, object] = {"species": "" if taxon else species, "taxon": taxon, "name": state.get("name", ""),
                                 "custom-species": state.get("custom_species", "").strip(),
                                 "mode": state.get("mode") or None, "circuit": state.get("circuit") or None,
                                 "machine": state.get("machine") or None,
                                 "age": state.get("age") or None, "state": state.get("state") or "fasted",
                                 "strategy": state.get("strategy") or "volume_first",
                                 SITUATIONS_KEY: list(state.get("situations", ()))}
    for key in FIELDS:
        if not is_active(state, key):
            continue
        try:
            values[key] = field_value(state, key)
        except InputError as err:
            errors.append(err)
            values[key] = None
    parts = []
    for part in state.get("parts", ()):
        try:
            parts.append(ApparatusPart(part[0], part_volume(part), part[2]))
        except InputError as err:
            errors.append(err)
    request, more = request_from_inputs(values, parts, library=library)
    errors += [e for e in more if not (e.key == "mass" and any(x.key == "mass" for x in errors))]
    if errors or request is None:
        return None, errors
    return request, []


# Keys of form elements that are not FIELDS: where an InputError with such a key is marked.
OTHER_KEYS = frozenset({*TEXT_INPUTS, "apparatus"})


def error_key(err: InputError) -> str | None:
    """Which form element an InputError belongs to: its key when the form has such an element, else None."""
    if err.key in ("apparatus", "part-name", "part-source"):
        return "parts"  # the parts editor
    if err.key == "situation":
        return "situations"  # the situations chooser
    if err.key in FIELDS or err.key in OTHER_KEYS:
        return err.key
    return None
