"""Numbers with their units, formatted once for every view.

Significant figures: three for every quantity (two for percentages), a leading zero, no trailing zero
(clinical-calculator practice: "0.5", "5", never "5.0" or ".5"). Volumes and flows switch to litres at
1000 mL. A quantity's kind is read from the unit at the end of its name (``vt_ml``, ``paco2_mmhg``,
``rate_per_min``), the same convention the core uses for its floats.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

MMHG_PER_KPA = 7.500615758  # 1 kPa = 1000 Pa / 133.322387415 Pa (conventional mmHg)
LB_PER_KG = 1 / 0.45359237
LITRES_FROM_ML = 1000.0  # show volumes and flows in litres from this many mL (common practice)


@dataclass(frozen=True)
class Units:
    """The units a reader chose: gas pressures 'mmHg'/'kPa', masses 'kg'/'g'/'lb'."""

    gas: str = "mmHg"
    mass: str = "kg"


MMHG = Units()


def fmt(value: float | None, sig: int = 3) -> str:
    """A number with ``sig`` significant figures, a leading zero and no trailing zero; '—' if not finite."""
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


# Unit suffix of a quantity's name → its kind. Longest suffix first.
_SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_cmh2o_l_s", "resistance"), ("_ml_cmh2o", "compliance"), ("_ml_min", "flow_ml"), ("_l_min", "flow_l"),
    ("_ml_kg", "ml_kg"), ("_per_min", "rate"), ("_mmhg", "gas"), ("_cmh2o", "cmh2o"), ("_percent", "percent"),
    ("_ml", "volume"), ("_l", "litre"), ("_kg", "mass"), ("_min", "minutes"), ("_s", "seconds"),
    ("_c", "temperature"), ("_w", "watt"), ("_m", "metre"), ("_mm", "mm"), ("_cm", "cm"),
)
_PLAIN_UNITS = {"resistance": "cmH2O/(L/s)", "compliance": "mL/cmH2O", "flow_l": "L/min", "ml_kg": "mL/kg",
                "rate": "/min", "cmh2o": "cmH2O", "percent": "%", "litre": "L", "minutes": "min", "seconds": "s",
                "temperature": "°C", "watt": "W", "metre": "m", "mm": "mm", "cm": "cm", "plain": ""}


def kind_of(name: str) -> str:
    """The kind of quantity a name holds, from its unit suffix ('plain' when it has none)."""
    for suffix, kind in _SUFFIXES:
        if name.endswith(suffix):
            return kind
    return "plain"


def split(value: float, kind: str, units: Units = MMHG) -> tuple[str, str]:
    """(number text, unit text) for a value held in the core's unit of ``kind``, in the reader's units."""
    if kind == "gas":
        return (fmt(value / MMHG_PER_KPA), "kPa") if units.gas == "kPa" else (fmt(value), "mmHg")
    if kind == "volume":
        return (fmt(value / 1000), "L") if math.isfinite(value) and abs(value) >= LITRES_FROM_ML else (fmt(value), "mL")
    if kind == "flow_ml":
        big = math.isfinite(value) and abs(value) >= LITRES_FROM_ML
        return (fmt(value / 1000), "L/min") if big else (fmt(value), "mL/min")
    if kind == "mass":
        if units.mass == "lb":
            return fmt(value * LB_PER_KG), "lb"
        if units.mass == "g" or (math.isfinite(value) and abs(value) < 1 and units.mass == "auto"):
            return fmt(value * 1000), "g"
        return fmt(value), "kg"
    return fmt(value, 2 if kind == "percent" else 3), _PLAIN_UNITS.get(kind, "")


def show(value: float, kind: str, units: Units = MMHG) -> str:
    """A value with its unit, e.g. '58.1 mL', '5.33 kPa', '17/min'."""
    number, unit = split(value, kind, units)
    if not unit:
        return number
    return f"{number}{unit}" if unit == "/min" else f"{number} {unit}"


def show_named(name: str, value: float, units: Units = MMHG) -> str:
    """``show`` with the kind read from the quantity's name."""
    return show(value, kind_of(name), units)


def gas(mmhg: float, units: Units = MMHG) -> str:
    """A gas partial pressure held in mmHg, in the reader's unit ('40 mmHg', '5.33 kPa')."""
    return show(mmhg, "gas", units)
