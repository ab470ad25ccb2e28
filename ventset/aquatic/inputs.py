"""Each aquatic input declared once (label, internal unit, hard limits, help), and its parsing.

Hard limits refuse nonsense (salinity 60, water at 45 °C, a negative saturation) with one line naming the field;
what is merely unusual for a group is left to the cautions. Uses the project's ``FieldSpec``,
``parse_quantity`` and ``check_range``; salinity spellings (ppt, psu, ‰) and the supply's oxygen as % or mg/L
are read here because the shared unit parser does not know them.
"""

from __future__ import annotations

import re

from ventset.aquatic.water import MG_PER_ML_O2
from ventset.errors import InputError
from ventset.fields import FieldSpec
from ventset.units import check_range, parse_quantity

AQUATIC_FIELDS: dict[str, FieldSpec] = {f.key: f for f in (
    FieldSpec("mass", "Body mass", "mass_kg", "kg", ("kg", "g", "lb"), 1e-5, 2000.0,
              "The fish's mass as weighed ('2 kg', '450 g').", group="fish"),
    FieldSpec("water-temperature", "Water temperature", "water_temp_c", "degC", ("degC", "degF"), -2.0, 40.0,
              "Temperature of the fish's home water; the irrigation water must match it. "
              "Default: the group's usual value.", lo_open=False, group="water"),
    FieldSpec("salinity", "Salinity", "salinity", "g/kg", ("g/kg",), 0.0, 42.0,
              "Practical salinity of the home water, about g/kg: 0 fresh, about 35 sea water "
              "('35', '35 ppt', '35 psu'). Default: the group's usual water.", lo_open=False, group="water"),
    FieldSpec("altitude", "Altitude", "altitude_m", "m", ("m", "ft"), -500.0, 6000.0,
              "Clinic altitude; gives barometric pressure by the ISA standard atmosphere.", lo_open=False,
              group="water"),
    FieldSpec("barometric-pressure", "Barometric pressure", "barometric_mmhg", "mmHg", ("mmHg", "kPa"),
              300.0, 800.0, "Measured local barometric pressure; overrides altitude.", lo_open=False, group="water"),
    FieldSpec("saturation", "Supply oxygen", "saturation_percent", "percent", ("percent", "mg/L"), 0.0, 480.0,
              "Oxygen in the supply water: % of air saturation at local pressure (a DO meter's %) or a measured "
              "'mg/L'. Pure-oxygen equilibrium is about 477 %. Default: 100 %.", group="water"),
    FieldSpec("duration", "Planned duration", "duration_min", "min", ("min", "h"), 0.0, 1440.0,
              "How long the fish will be irrigated ('45 min', '1.5 h'). Default: 60 min.", group="plan"),
    FieldSpec("system-volume", "Recirculating volume", "system_volume_l", "L", ("L", "mL"), 0.0, 100000.0,
              "Water in a recirculating system (reservoir and lines). Leave empty for single-pass (gravity bag).",
              group="plan"),
    FieldSpec("vo2", "Resting VO2", "vo2_mg_kg_h", "mg/kg/h", ("mg/kg/h", "mL/kg/h"), 0.1, 5000.0,
              "A measured or preferred resting O2 consumption per kg; the demand factor is applied on top "
              "(enter demand factor 1 to use it as is). Default: the group's allometry.", group="plan"),
    FieldSpec("extraction", "Gill O2 extraction", "extraction", "", ("", "percent"), 0.05, 0.8,
              "Fraction of the inflowing O2 the gills remove while irrigated (0.3 or '30 %'). "
              "Default: the group's usual value.", lo_open=False, group="plan"),
    FieldSpec("demand-factor", "Demand factor", "demand_factor", "", ("",), 1.0, 3.0,
              "Multiplies resting VO2 for handling stress and recovery (routine ≈ 1.5-2 × standard). Default 1.5.",
              lo_open=False, group="plan"),
)}

_SALINITY_WORDS = re.compile(r"\s*(ppt|psu|‰|permil|per mil|pss|pss-78|g/l)\s*$", re.I)
_ML_O2 = re.compile(r"\s*ml\s*/\s*kg\s*/\s*h\s*$", re.I)
_MG_L = re.compile(r"\s*(mg/l|ppm)\s*$", re.I)


def _shown(unit: str) -> str:
    return {"degC": "°C", "percent": "%"}.get(unit, unit)


def parse_aquatic(key: str, text: object) -> float:
    """Parse and range-check one aquatic input by key; raises InputError naming the field (its label)."""
    spec = AQUATIC_FIELDS[key]
    raw = text if isinstance(text, int | float) and not isinstance(text, bool) else str(text or "")
    if key == "salinity" and isinstance(raw, str):
        raw = _SALINITY_WORDS.sub(" g/kg", raw)
    if key == "vo2" and isinstance(raw, str) and _ML_O2.search(raw):
        value = parse_quantity(_ML_O2.sub("", raw), "", spec.label) * MG_PER_ML_O2
    elif key == "extraction" and isinstance(raw, str) and "%" in raw:
        value = parse_quantity(raw, "percent", spec.label) / 100.0
    elif key == "saturation":
        value = parse_quantity(raw, "percent", spec.label)
    else:
        value = parse_quantity(raw, spec.unit, spec.label)
    return check_range(value, spec.lo, spec.hi, spec.label, _shown(spec.unit), lo_open=spec.lo_open)


def parse_supply_o2(text: object) -> tuple[float | None, float | None]:
    """The supply's O2 as (saturation %, None) or (None, measured mg/L); empty text gives (None, None)."""
    if text is None or (isinstance(text, str) and not text.strip()):
        return None, None
    if isinstance(text, str) and _MG_L.search(text):
        label = AQUATIC_FIELDS["saturation"].label
        value = parse_quantity(_MG_L.sub("", text), "", label)
        return None, check_range(value, 0.0, 80.0, label, "mg/L", lo_open=True)
    return parse_aquatic("saturation", text), None


def parse_optional(key: str, text: object) -> float | None:
    """Like parse_aquatic, but empty text (or None) means 'use the default' and gives None."""
    if text is None or (isinstance(text, str) and not text.strip()):
        return None
    return parse_aquatic(key, text)


def label_of(key: str) -> str:
    """The label an InputError for this input carries."""
    return AQUATIC_FIELDS[key].label


def key_of_label(label: str) -> str | None:
    """The input key whose label an InputError names (None if it is not an aquatic input)."""
    return next((k for k, s in AQUATIC_FIELDS.items() if s.label == label), None)


__all__ = ["AQUATIC_FIELDS", "InputError", "key_of_label", "label_of", "parse_aquatic", "parse_optional",
           "parse_supply_o2"]
