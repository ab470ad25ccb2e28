"""The aquatic groups in resources/aquatic.toml, read strictly (unknown keys refused, every number sourced).

The checks are declarative (:data:`DEFAULT_FIELDS`, :data:`GROUP_FIELDS`, :data:`TABLE_KEYS`) and applied in
one function, :func:`load_aquatic_data`, so they can move into a shared schema module unchanged. A bad file
gives one DataError line naming the file, the entry and the field.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from ventset.aquatic.metabolism import CLARKE_JOHNSTON, Reference, reference_from_clarke_johnston
from ventset.aquatic.water import MG_PER_ML_O2
from ventset.errors import DataError
from ventset.library import Note, Sourced, Span
from ventset.resources import resource_path

FILE = "aquatic.toml"
KINDS = ("teleost", "elasmobranch", "amphibian")
NOTE_SEVERITIES = ("info", "caution")  # "danger" is kept for the plan's own numbers

# Table shapes: keys allowed, keys required (besides "source", always required), and value bounds.
TABLE_KEYS: dict[str, tuple[frozenset[str], frozenset[str]]] = {
    "value": (frozenset({"value"}), frozenset({"value"})),
    "range": (frozenset({"min", "max"}), frozenset({"min", "max"})),
    "span": (frozenset({"min", "max", "value"}), frozenset({"min", "max", "value"})),
    "extraction": (frozenset({"conservative", "usual"}), frozenset({"conservative", "usual"})),
    "vo2": (frozenset({"model", "mg_kg_h", "ml_kg_h", "reference_mass_kg", "reference_temperature_c"}),
            frozenset({"reference_mass_kg", "reference_temperature_c"})),
    "gill": (frozenset({"mm2_per_g", "reference_mass_kg", "area_exponent"}),
             frozenset({"mm2_per_g", "reference_mass_kg", "area_exponent"})),
}
# field: (shape, required, lowest, highest) — bounds apply to every number in the table.
GROUP_FIELDS: dict[str, tuple[str, bool, float, float]] = {
    "label": ("text", True, 0, 0), "kind": ("text", True, 0, 0), "aliases": ("texts", True, 0, 0),
    "obligate_ram": ("flag", True, 0, 0), "notes": ("notes", False, 0, 0),
    "mass_kg": ("range", True, 1e-6, 5000), "water_temperature_c": ("span", True, -2, 40),
    "salinity": ("span", True, 0, 42), "resting_vo2": ("vo2", True, 1e-6, 5000),
    "mass_exponent": ("value", True, 0.5, 1.1), "q10": ("value", True, 1.0, 5.0),
    "anaesthesia_factor": ("value", True, 0.3, 1.5), "extraction": ("extraction", True, 0.01, 0.9),
    "clinical_flow_l_kg_min": ("range", False, 0.01, 50), "gill_area": ("gill", False, 1e-6, 5000),
    "barrier_um": ("value", False, 0.1, 50),
}
DEFAULT_FIELDS: dict[str, tuple[float, float]] = {
    "supply_saturation_percent": (1, 480), "planned_duration_min": (1, 1440), "demand_factor": (1, 3),
    "low_saturation_percent": (10, 100), "supersaturation_percent": (100, 200), "gas_bubble_percent": (100, 480),
    "high_flow_l_kg_min": (0.1, 50), "krogh_tissue_cm2_min_atm": (1e-7, 1e-3),
    "o2_diffusivity_water_cm2_s": (1e-6, 1e-4), "membrane_to_water_conductance": (0.1, 10),
    "diffusion_margin_fraction": (0.05, 1),
}
# Keys whose bounds differ from their field's.
KEY_BOUNDS: dict[str, tuple[float, float]] = {
    "reference_mass_kg": (1e-6, 5000), "reference_temperature_c": (-2, 40), "area_exponent": (0.5, 1.1),
}
NOTE_KEYS = frozenset({"code", "severity", "text", "source"})


@dataclass(frozen=True)
class Range:
    """A usual range with its source."""

    min: float
    max: float
    source: str


@dataclass(frozen=True)
class Extraction:
    """Fraction of the inflowing O2 the gills remove: conservative (low) to usual."""

    conservative: float
    usual: float
    source: str


@dataclass(frozen=True)
class GillArea:
    """Gill (lamellar) area, mm² per g at reference_mass_kg, whole-gill area ∝ M^area_exponent; barrier in µm."""

    mm2_per_g: float
    reference_mass_kg: float
    area_exponent: float
    source: str
    barrier_um: Sourced

    def area_cm2(self, mass_kg: float) -> float:
        """Whole-gill area (cm²) at mass_kg: A_ref·(M/M_ref)^a."""
        ref_cm2 = self.mm2_per_g * self.reference_mass_kg * 1000.0 / 100.0
        return ref_cm2 * float((mass_kg / self.reference_mass_kg) ** self.area_exponent)


@dataclass(frozen=True)
class AquaticGroup:
    """One group of fish or aquatic amphibians from aquatic.toml."""

    key: str
    label: str
    kind: str
    aliases: tuple[str, ...]
    obligate_ram: bool
    mass_kg: Range
    water_temperature_c: Span
    salinity: Span
    resting_vo2: Reference
    mass_exponent: Sourced
    q10: Sourced
    anaesthesia_factor: Sourced
    extraction: Extraction
    clinical_flow_l_kg_min: Range | None
    gill: GillArea | None
    notes: tuple[Note, ...]


@dataclass(frozen=True)
class AquaticData:
    """All groups and the shared defaults (each a Sourced)."""

    groups: dict[str, AquaticGroup]
    defaults: dict[str, Sourced]

    def find_group(self, text: str) -> AquaticGroup | None:
        """A group by key, label or alias (case-insensitive; exact match first, then a unique partial match)."""
        t = text.strip().lower()
        if t.replace(" ", "_").replace("-", "_") in self.groups:
            return self.groups[t.replace(" ", "_").replace("-", "_")]
        for g in self.groups.values():
            if t in (g.label.lower(), *(a.lower() for a in g.aliases)):
                return g
        hits = [g for g in self.groups.values() if t and any(t in s.lower() for s in (g.key, g.label, *g.aliases))]
        return hits[0] if len(hits) == 1 else None


def _checked(where: str, name: str, value: object, shape: str, lo: float, hi: float) -> object:
    """Check one field against its shape; returns it (tables as dicts of floats plus 'source')."""
    def fail(why: str) -> DataError:
        return DataError(f"{FILE} {where}: field '{name}' {why}")

    if shape == "text":
        if not isinstance(value, str) or not value.strip():
            raise fail("must be non-empty text")
        return value.strip()
    if shape == "flag":
        if not isinstance(value, bool):
            raise fail("must be true or false")
        return value
    if shape == "texts":
        if not isinstance(value, list) or not all(isinstance(v, str) and v.strip() for v in value):
            raise fail("must be a list of non-empty texts")
        return tuple(v.strip() for v in value)
    if shape == "notes":
        if not isinstance(value, list):
            raise fail("must be a list of { code, severity, text, source }")
        for i, n in enumerate(value):
            if not isinstance(n, dict) or set(n) != NOTE_KEYS or not all(isinstance(n[k], str) and n[k].strip()
                                                                          for k in NOTE_KEYS):
                raise fail(f"[{i}] needs exactly code, severity, text and source, each non-empty text")
            if n["severity"] not in NOTE_SEVERITIES:
                raise fail(f"[{i}] severity must be one of {', '.join(NOTE_SEVERITIES)}")
        return tuple(Note(n["severity"], n["code"], n["text"], n["source"]) for n in value)
    allowed, required = TABLE_KEYS[shape]
    if not isinstance(value, dict):
        raise fail("must be a table like { value = 1, source = \"...\" }")
    unknown = sorted(set(value) - allowed - {"source"})
    if unknown:
        raise fail(f"has unknown key(s) {', '.join(unknown)} (allowed: {', '.join(sorted(allowed | {'source'}))})")
    missing = sorted(required - set(value))
    if missing:
        raise fail(f"is missing {', '.join(missing)}")
    src = value.get("source")
    if not isinstance(src, str) or not src.strip():
        raise fail("has no source (cite it, or say 'common practice' or 'from memory')")
    out: dict[str, object] = {"source": src.strip()}
    for k, v in value.items():
        if k in ("source", "model"):
            continue
        k_lo, k_hi = KEY_BOUNDS.get(k, (lo, hi))
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v) or not k_lo <= v <= k_hi:
            raise fail(f"'{k}' must be a finite number between {k_lo:g} and {k_hi:g} (got {v!r})")
        out[k] = float(v)
    if "min" in out and not float(out["min"]) <= float(out.get("value", out["min"])) <= float(out["max"]):  # type: ignore[arg-type]
        raise fail("needs min <= value <= max")
    if shape == "extraction" and not float(out["conservative"]) <= float(out["usual"]):  # type: ignore[arg-type]
        raise fail("needs conservative <= usual")
    if shape == "vo2":
        given = [k for k in ("model", "mg_kg_h", "ml_kg_h") if k in value]
        if len(given) != 1 or ("model" in value and value["model"] != CLARKE_JOHNSTON):
            raise fail(f"needs exactly one of model = \"{CLARKE_JOHNSTON}\", mg_kg_h or ml_kg_h")
        out["model"] = value.get("model", "")
    return out


def load_aquatic_data(path: Path | None = None) -> AquaticData:
    """Read and check aquatic.toml (the shipped file unless ``path``); raises DataError naming file, entry, field."""
    try:
        doc = tomllib.loads((path or resource_path(FILE)).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise DataError(f"{FILE}: cannot be read ({exc})") from None
    if set(doc) - {"defaults", "groups"} or not isinstance(doc.get("defaults"), dict) \
            or not isinstance(doc.get("groups"), dict) or not doc["groups"]:
        raise DataError(f"{FILE}: needs exactly a [defaults] table and at least one [groups.<key>] table")
    defaults_t = doc["defaults"]
    odd = sorted(set(defaults_t) ^ set(DEFAULT_FIELDS))
    if odd:
        state = "unknown" if odd[0] in defaults_t else "missing"
        raise DataError(f"{FILE} [defaults]: field '{odd[0]}' is {state}")
    defaults = {}
    for name, (lo, hi) in DEFAULT_FIELDS.items():
        t = _checked("[defaults]", name, defaults_t[name], "value", lo, hi)
        defaults[name] = Sourced(t["value"], t["source"])  # type: ignore[index]
    groups = {}
    for key, t in doc["groups"].items():
        where = f"group '{key}'"
        if not isinstance(t, dict):
            raise DataError(f"{FILE} {where}: must be a table")
        unknown = sorted(set(t) - set(GROUP_FIELDS))
        if unknown:
            raise DataError(f"{FILE} {where}: field '{unknown[0]}' is unknown (known: {', '.join(GROUP_FIELDS)})")
        missing = [n for n, (_s, required, _lo, _hi) in GROUP_FIELDS.items() if required and n not in t]
        if missing:
            raise DataError(f"{FILE} {where}: field '{missing[0]}' is missing")
        if ("gill_area" in t) != ("barrier_um" in t):
            raise DataError(f"{FILE} {where}: field 'gill_area' and 'barrier_um' must be given together")
        v = {n: _checked(where, n, t[n], s, lo, hi) for n, (s, _r, lo, hi) in GROUP_FIELDS.items() if n in t}
        if v["kind"] not in KINDS:
            raise DataError(f"{FILE} {where}: field 'kind' must be one of {', '.join(KINDS)}")
        groups[key] = _group(key, v)
    return AquaticData(groups, defaults)


def _group(key: str, v: dict[str, Any]) -> AquaticGroup:
    def src(name: str) -> Sourced:
        return Sourced(v[name]["value"], v[name]["source"])

    def span(name: str) -> Span:
        return Span(v[name]["min"], v[name]["max"], v[name]["value"], v[name]["source"])

    def rng(name: str) -> Range | None:
        return Range(v[name]["min"], v[name]["max"], v[name]["source"]) if name in v else None

    r = v["resting_vo2"]
    if r["model"] == CLARKE_JOHNSTON:
        ref = reference_from_clarke_johnston(r["reference_mass_kg"], r["reference_temperature_c"], r["source"])
    else:
        rate = r["mg_kg_h"] if "mg_kg_h" in r else r["ml_kg_h"] * MG_PER_ML_O2
        ref = Reference(rate, r["reference_mass_kg"], r["reference_temperature_c"], r["source"])
    e, g = v["extraction"], v.get("gill_area")
    gill = None if g is None else GillArea(g["mm2_per_g"], g["reference_mass_kg"], g["area_exponent"], g["source"],
                                           src("barrier_um"))
    mass = rng("mass_kg")
    assert mass is not None
    return AquaticGroup(key, v["label"], v["kind"], v["aliases"], v["obligate_ram"], mass,
                        span("water_temperature_c"), span("salinity"), ref, src("mass_exponent"), src("q10"),
                        src("anaesthesia_factor"), Extraction(e["conservative"], e["usual"], e["source"]),
                        rng("clinical_flow_l_kg_min"), gill, v.get("notes", ()))


@lru_cache(maxsize=1)
def aquatic_data() -> AquaticData:
    """The shipped aquatic data, loaded once."""
    return load_aquatic_data()
