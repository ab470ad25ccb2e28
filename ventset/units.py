"""The one pint unit registry, and parsing/formatting at the edges.

Inside the core every quantity is a plain float with its unit in the name
(``mass_kg``, ``paco2_mmhg``); pint is used only here, to read what a person typed
and to convert between the units they chose.
"""

from __future__ import annotations

import math
import re
from functools import lru_cache

from ventset.errors import InputError

MMHG_PER_KPA = 7.500615758  # 1 kPa = 1000 Pa / 133.322387415 Pa (conventional mmHg)
PA_PER_MMHG = 133.322387415
PA_PER_CMH2O = 98.0665
KG_PER_LB = 0.45359237

_NUMBER = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")

# Spellings people type that pint does not know, mapped to pint names.
_ALIASES = {
    "mmhg": "mmHg", "mm hg": "mmHg", "torr": "torr", "kpa": "kPa", "cmh2o": "cmH2O",
    "cm h2o": "cmH2O", "mbar": "mbar", "hpa": "hPa",
    "ml": "mL", "cc": "mL", "l": "L", "ul": "uL", "µl": "uL",
    "ml/min": "mL/min", "l/min": "L/min", "ml/kg": "mL/kg",
    "ml/cmh2o": "mL/cmH2O", "l/cmh2o": "L/cmH2O", "cmh2o/l/s": "cmH2O*s/L", "cmh2o/(l/s)": "cmH2O*s/L",
    "/min": "1/min", "bpm": "1/min", "breaths/min": "1/min", "per min": "1/min",
    "kcal/d": "kcal/day", "kcal/day": "kcal/day", "kj/h": "kJ/h", "kj/day": "kJ/day",
    "lb": "lb", "lbs": "lb", "kg": "kg", "g": "g", "t": "metric_ton", "tonne": "metric_ton",
    "°c": "degC", "c": "degC", "degc": "degC", "°f": "degF", "f": "degF", "degf": "degF",
    "m": "m", "ft": "ft", "km": "km", "%": "percent", "s": "s", "ms": "ms",
}


@lru_cache(maxsize=1)
def registry():  # -> pint.UnitRegistry
    """Return the one application unit registry (built once, cached on disk by pint)."""
    import pint

    try:
        ureg = pint.UnitRegistry(cache_folder=":auto:")
    except Exception:  # pragma: no cover - an unwritable cache folder must not stop the app
        ureg = pint.UnitRegistry()
    pint.set_application_registry(ureg)
    return ureg


def _pint_unit(unit_text: str) -> str:
    key = unit_text.strip()
    return _ALIASES.get(key.lower(), key)


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """Convert a plain float between two pint unit names (offset units allowed)."""
    if from_unit == to_unit:
        return value
    ureg = registry()
    return float(ureg.Quantity(value, _pint_unit(from_unit)).m_as(_pint_unit(to_unit)))


def parse_quantity(text: object, unit: str, field: str, *, default_unit: str | None = None) -> float:
    """Parse ``text`` such as "44 lb" or "5.3 kPa" and return its magnitude in ``unit``.

    A bare number is read in ``default_unit`` (or ``unit``). Raises InputError naming
    ``field`` for empty, non-numeric, non-finite or wrong-dimension input. No range check.
    """
    if isinstance(text, int | float) and not isinstance(text, bool):
        number, unit_text = float(text), ""
    else:
        raw = "" if text is None else str(text)
        if not raw.strip():
            raise InputError(field, raw, "is empty; enter a number" + (f" in {unit}" if unit else ""))
        if any(ch.isdigit() and not ch.isascii() for ch in raw):
            raise InputError(field, raw, "use plain digits 0-9 and a decimal point")
        if re.match(r"^\s*[+-]?\d+,\d+", raw):
            raise InputError(field, raw, "use a decimal point, not a comma (e.g. 2.5)")
        low = raw.strip().lower()
        if low.lstrip("+-") in {"nan", "inf", "infinity"}:
            raise InputError(field, raw, "is not a finite number")
        m = _NUMBER.match(raw)
        if not m:
            raise InputError(field, raw, "is not a number" + (f" (expected e.g. '5 {unit}')" if unit else ""))
        number, unit_text = float(m.group(1)), m.group(2)
    if not math.isfinite(number):
        raise InputError(field, text, "is not a finite number")
    src = _pint_unit(unit_text) if unit_text else (default_unit or unit)
    if not unit:
        if unit_text:
            raise InputError(field, text, "takes a plain number without a unit")
        return number
    try:
        value = convert(number, src, unit)
    except Exception as exc:  # pint raises several types for bad or mismatched units
        name = type(exc).__name__
        shown = {"percent": "%", "degC": "°C", "1/min": "/min", "cmH2O*s/L": "cmH2O/(L/s)"}.get(unit, unit)
        unit = shown
        if "Dimensionality" in name:
            reason = f"'{unit_text}' is not a unit of this kind (expected something like {unit})"
        else:
            reason = f"unknown unit '{unit_text}' (expected something like {unit})"
        raise InputError(field, text, reason) from None
    if not math.isfinite(value):
        raise InputError(field, text, "is not a finite number")
    return value


def check_range(value: float, lo: float | None, hi: float | None, field: str, unit: str,
                *, lo_open: bool = False) -> float:
    """Return ``value`` if inside [lo, hi] (lo exclusive when lo_open), else raise InputError."""
    if not math.isfinite(value):
        raise InputError(field, value, "is not a finite number", unit)
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
        raise InputError(field, f"{fmt(value)}{u}", f"must be {rng}", unit)
    return value


def fmt(value: float, sig: int = 3) -> str:
    """Format a number for a clinician: ``sig`` significant figures, a leading zero, no trailing zero."""
    if value is None or not math.isfinite(value):
        return "—"
    if value == 0:
        return "0"
    mag = math.floor(math.log10(abs(value)))
    decimals = max(0, sig - 1 - mag)
    text = f"{round(value, decimals):.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in {"-0", ""} else text


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
