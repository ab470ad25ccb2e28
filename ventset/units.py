"""Units at the edges: a number and one unit name from a fixed table, parsed (never evaluated) and converted.

Inside the core every quantity is a plain float with its unit in the name (``mass_kg``, ``paco2_mmhg``).
What a person types is read here: a decimal number, optionally followed by one unit name from :data:`UNITS`
(or one of the spellings in :data:`_ALIASES`). Nothing else is accepted, so an input like ``1 9**99999999``
is refused at once instead of being handed to an expression evaluator. Conversion factors are exact
constants (the definitions cited beside each); the tests check every one against pint, the reference.

Temperatures: a body temperature in Fahrenheit is accepted only as ``degF`` or ``°F``; a bare ``F`` or ``C``
is refused as ambiguous with a message saying what to type (``38.5 F`` was once read as °F and planned at
3.6 °C).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from ventset.errors import InputError, visible
from ventset.present.quantities import fmt  # the one number format (significant figures by magnitude)
from ventset.textpolicy import bad_character

MMHG_PER_KPA = 7.500615758  # 1 kPa = 1000 Pa / 133.322387415 Pa (conventional mmHg)
PA_PER_MMHG = 133.322387415  # conventional millimetre of mercury (BIPM SI brochure, non-SI units table)
PA_PER_CMH2O = 98.0665  # 1 cmH2O = 0.01 m × 1000 kg/m3 × 9.80665 m/s2 (standard gravity)
PA_PER_TORR = 101325 / 760  # torr: 1/760 of a standard atmosphere (101325 Pa)
KG_PER_LB = 0.45359237  # international avoirdupois pound (1959 agreement), exact
M_PER_FT = 0.3048  # international foot (1959 agreement), exact
J_PER_KCAL = 4184.0  # thermochemical kilocalorie, exact
MAX_TEXT = 64  # longer entries are refused before any parsing


@dataclass(frozen=True)
class Unit:
    """A unit: its kind, and ``value_in_base = value * factor + offset`` (base: kg, K, Pa, mL, ...)."""

    name: str
    kind: str
    factor: float
    offset: float = 0.0
    shown: str = ""

    @property
    def display(self) -> str:
        return self.shown or self.name


_ML_PER_CMH2O_BASE = 1.0 / PA_PER_CMH2O  # compliance base: mL/Pa
_RES_BASE = PA_PER_CMH2O / 1000.0  # resistance base: Pa·s/mL; 1 cmH2O/(L/s) = 98.0665 Pa / 1000 mL/s

UNITS: dict[str, Unit] = {u.name: u for u in (
    Unit("kg", "mass", 1.0), Unit("g", "mass", 1e-3), Unit("lb", "mass", KG_PER_LB),
    Unit("metric_ton", "mass", 1000.0, shown="t"),
    Unit("degC", "temperature", 1.0, 273.15, "°C"), Unit("degF", "temperature", 5 / 9, 459.67 * 5 / 9, "°F"),
    Unit("mmHg", "pressure", PA_PER_MMHG), Unit("kPa", "pressure", 1000.0), Unit("torr", "pressure", PA_PER_TORR),
    Unit("cmH2O", "pressure", PA_PER_CMH2O), Unit("mbar", "pressure", 100.0), Unit("hPa", "pressure", 100.0),
    Unit("mL", "volume", 1.0), Unit("L", "volume", 1000.0), Unit("uL", "volume", 1e-3, shown="µL"),
    Unit("mL/min", "flow", 1 / 60), Unit("L/min", "flow", 1000 / 60),
    Unit("mL/kg", "volume per mass", 1.0),
    Unit("mL/cmH2O", "compliance", _ML_PER_CMH2O_BASE), Unit("L/cmH2O", "compliance", 1000 * _ML_PER_CMH2O_BASE),
    Unit("cmH2O*s/L", "resistance", _RES_BASE, shown="cmH2O/(L/s)"),
    Unit("1/min", "rate", 1 / 60, shown="/min"),
    Unit("W", "power", 1.0), Unit("kcal/day", "power", J_PER_KCAL / 86400), Unit("kJ/h", "power", 1000 / 3600),
    Unit("kJ/day", "power", 1000 / 86400),
    Unit("m", "length", 1.0), Unit("ft", "length", M_PER_FT), Unit("km", "length", 1000.0),
    Unit("mm", "length", 1e-3), Unit("cm", "length", 1e-2),
    Unit("percent", "fraction", 0.01, shown="%"),
    Unit("s", "time", 1.0), Unit("ms", "time", 1e-3), Unit("min", "time", 60.0), Unit("h", "time", 3600.0),
    Unit("g/kg", "salinity", 1.0),
    Unit("mg/L", "concentration", 1.0),
    Unit("mg/kg/h", "oxygen use per mass", 1.0), Unit("mL/kg/h", "oxygen use per mass (volume)", 1.0),
)}

# Spellings people type (compared without case and spaces), mapped to the names above.
_ALIASES = {
    "mmhg": "mmHg", "torr": "torr", "kpa": "kPa", "cmh2o": "cmH2O", "mbar": "mbar", "hpa": "hPa",
    "ml": "mL", "cc": "mL", "l": "L", "ul": "uL", "µl": "uL", "μl": "uL",
    "ml/min": "mL/min", "l/min": "L/min", "ml/kg": "mL/kg", "g/kg": "g/kg", "mg/l": "mg/L",
    "mg/kg/h": "mg/kg/h", "ml/kg/h": "mL/kg/h",
    "ml/cmh2o": "mL/cmH2O", "l/cmh2o": "L/cmH2O", "cmh2o/l/s": "cmH2O*s/L", "cmh2o/(l/s)": "cmH2O*s/L",
    "cmh2o*s/l": "cmH2O*s/L", "cmh2o·s/l": "cmH2O*s/L",
    "/min": "1/min", "1/min": "1/min", "bpm": "1/min", "breaths/min": "1/min", "permin": "1/min",
    "kcal/d": "kcal/day", "kcal/day": "kcal/day", "kj/h": "kJ/h", "kj/day": "kJ/day", "w": "W",
    "lb": "lb", "lbs": "lb", "kg": "kg", "g": "g", "t": "metric_ton", "tonne": "metric_ton",
    "°c": "degC", "degc": "degC", "℃": "degC", "°f": "degF", "degf": "degF", "℉": "degF",
    "m": "m", "ft": "ft", "km": "km", "mm": "mm", "cm": "cm", "%": "percent", "percent": "percent",
    "s": "s", "ms": "ms", "min": "min", "h": "h",
}
_AMBIGUOUS = {"f": "write °F or degF for Fahrenheit (e.g. '101.3 degF'), or °C / degC",
              "c": "write °C or degC (e.g. '38.5 degC'), or °F / degF for Fahrenheit"}

_NUMBER = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")


def shown_unit(name: str) -> str:
    """How a unit name is written for a person ('/min', '°C', 'cmH2O/(L/s)', '%')."""
    unit = UNITS.get(name)
    return unit.display if unit is not None else name


def find_unit(text: str) -> Unit | None:
    """The unit that ``text`` names (a name in UNITS or a spelling in _ALIASES), or None."""
    if text in UNITS:
        return UNITS[text]
    key = "".join(text.split()).lower()
    name = _ALIASES.get(key)
    return UNITS[name] if name is not None else None


def _unit(name: str) -> Unit:
    unit = find_unit(name)
    if unit is None:
        raise ValueError(f"unknown unit {name!r}")
    return unit


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """Convert a plain float between two unit names of the same kind (offset units allowed)."""
    if from_unit == to_unit:
        return value
    a, b = _unit(from_unit), _unit(to_unit)
    if a.kind != b.kind:
        raise ValueError(f"cannot convert {a.display} ({a.kind}) to {b.display} ({b.kind})")
    return ((value * a.factor + a.offset) - b.offset) / b.factor


def _split(text: object, unit: str, field: object) -> tuple[float, str]:
    """The number and the unit text of an entry; raises InputError for anything that is not 'number [unit]'."""
    if isinstance(text, int | float) and not isinstance(text, bool):
        try:
            return float(text), ""
        except OverflowError:
            raise InputError(field, visible(text, 20), "is too large a number") from None
    raw = "" if text is None else str(text)
    if not raw.strip():
        raise InputError(field, raw, "is empty; enter a number" + (f" in {shown_unit(unit)}" if unit else ""))
    if len(raw) > MAX_TEXT:
        raise InputError(field, raw, f"is {len(raw)} characters long; enter a number and a unit "
                                     f"(at most {MAX_TEXT} characters)")
    bad = bad_character(raw)
    if bad is not None:
        raise InputError(field, raw, f"holds a control character or line break (U+{ord(bad):04X}); type the number "
                                     "and unit on one line")
    if any(ch.isdigit() and not ch.isascii() for ch in raw):
        raise InputError(field, raw, "use plain digits 0-9 and a decimal point")
    if re.match(r"^\s*[+-]?\d+,\d+", raw):
        raise InputError(field, raw, "use a decimal point, not a comma (e.g. 2.5)")
    if raw.strip().lower().lstrip("+-") in {"nan", "inf", "infinity"}:
        raise InputError(field, raw, "is not a finite number")
    m = _NUMBER.match(raw)
    if not m:
        example = f" (expected e.g. '5 {shown_unit(unit)}')" if unit else ""
        raise InputError(field, raw, "is not a number" + example)
    return float(m.group(1)), m.group(2)


def parse_quantity(text: object, unit: str, field: object, *, default_unit: str | None = None) -> float:
    """Parse ``text`` such as "44 lb" or "5.3 kPa" and return its magnitude in ``unit``.

    A bare number is read in ``default_unit`` (or ``unit``). Raises InputError naming ``field`` (a key, a
    label or a FieldSpec) for empty, non-numeric, non-finite, unknown-unit or wrong-kind input. No range check.
    """
    number, unit_text = _split(text, unit, field)
    if not math.isfinite(number):
        raise InputError(field, text, "is not a finite number")
    if not unit:
        if unit_text:
            raise InputError(field, text, "takes a plain number without a unit")
        return number
    target = _unit(unit)
    if not unit_text:
        source = _unit(default_unit) if default_unit else target
    else:
        found = find_unit(unit_text)
        ambiguous = _AMBIGUOUS.get(unit_text.strip().lower())
        if found is None and ambiguous and target.kind == "temperature":
            raise InputError(field, text, f"'{unit_text.strip()}' alone is ambiguous: {ambiguous}")
        if found is None:
            raise InputError(field, text, f"unknown unit '{visible(unit_text, 24)}' (expected something like "
                                          f"{target.display})")
        if found.kind != target.kind:
            raise InputError(field, text, f"'{visible(unit_text, 24)}' is not a unit of this kind (expected "
                                          f"something like {target.display})")
        source = found
    value = convert(number, source.name, target.name)
    if not math.isfinite(value):
        raise InputError(field, text, "is not a finite number")
    return value


def check_range(value: float, lo: float | None, hi: float | None, field: object, unit: str,
                *, lo_open: bool = False, label: str | None = None) -> float:
    """Return ``value`` if inside [lo, hi] (lo exclusive when lo_open), else raise InputError naming ``field``
    (a key, a label or a FieldSpec; ``label`` overrides how it is named)."""
    unit = shown_unit(unit)
    if not math.isfinite(value):
        raise InputError(field, value, "is not a finite number", unit, label=label)
    u = f" {unit}" if unit else ""
    bad_lo = lo is not None and (value <= lo if lo_open else value < lo)
    bad_hi = hi is not None and value > hi
    if bad_lo or bad_hi:
        if lo is not None and hi is not None:
            rng = f"between {fmt(lo)} and {fmt(hi)}{u}"
        elif lo is not None:
            rng = f"{'above' if lo_open else 'at least'} {fmt(lo)}{u}"
        else:
            rng = f"at most {fmt(hi)}{u}"
        raise InputError(field, f"{fmt(value)}{u}", f"must be {rng}", unit, label=label)
    return value




def mmhg_to_kpa(mmhg: float) -> float:
    """Convert mmHg to kPa (conventional mmHg, 133.322387415 Pa)."""
    return mmhg / MMHG_PER_KPA


def kpa_to_mmhg(kpa: float) -> float:
    """Convert kPa to mmHg (conventional mmHg, 133.322387415 Pa)."""
    return kpa * MMHG_PER_KPA


def gas_pressure(mmhg: float, unit: str) -> str:
    """Format a gas partial pressure held in mmHg in the user's unit ('mmHg' or 'kPa')."""
    if unit == "kPa":
        return f"{fmt(mmhg_to_kpa(mmhg), 3)} kPa"
    return f"{fmt(mmhg, 3)} mmHg"


_MMHG_SPAN = re.compile(r"(?<![\w.])(-?\d+(?:\.\d+)?)(\s*(?:–|-|to)\s*)(-?\d+(?:\.\d+)?)\s*mmHg\b")
_MMHG_ONE = re.compile(r"(?<![\w.])(-?\d+(?:\.\d+)?)\s*mmHg\b")


def gas_units_in_text(text: str, unit: str) -> str:
    """Rewrite gas pressures written as "N mmHg" (or "A–B mmHg") in ``unit``; unchanged for mmHg.

    Core messages carry gas pressures in mmHg; this converts them at the edge for a reader who chose kPa.
    """
    if unit != "kPa" or "mmHg" not in text:
        return text

    def kpa(number: str) -> str:
        return fmt(mmhg_to_kpa(float(number)), 2)

    text = _MMHG_SPAN.sub(lambda m: f"{kpa(m.group(1))}{m.group(2)}{kpa(m.group(3))} kPa", text)
    return _MMHG_ONE.sub(lambda m: f"{kpa(m.group(1))} kPa", text)
