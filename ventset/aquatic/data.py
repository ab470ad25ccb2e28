"""The aquatic groups in resources/aquatic.toml, read through its declared schema (ventset/datafiles_aquatic.py).

The schema refuses unknown keys, checks every number's range and source, and names the file, the entry and
the field in one DataError line (``aquatic.toml: group 'koi': field 'q10' has no source ...``); this module
builds the dataclasses below from the checked values.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from ventset.aquatic.metabolism import CLARKE_JOHNSTON, Reference, reference_from_clarke_johnston
from ventset.aquatic.water import MG_PER_ML_O2
from ventset.datafiles_aquatic import AQUATIC_KINDS
from ventset.library import Note, Sourced, Span, load_resource_file
from ventset.resources import resource_path

FILE = "aquatic.toml"
KINDS = AQUATIC_KINDS


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


def load_aquatic_data(path: Path | None = None) -> AquaticData:
    """Read and check aquatic.toml (the shipped file unless ``path``); raises DataError naming file, entry, field."""
    v = load_resource_file(FILE, path or resource_path(FILE))
    groups = {key: _group(key, g) for key, g in v["groups"].items()}
    return AquaticData(groups, dict(v["defaults"]))


def _reference(r: dict[str, Any]) -> Reference:
    """The resting-rate reference point: the published model's, or the group's own measurement."""
    if r["model"] == CLARKE_JOHNSTON:
        return reference_from_clarke_johnston(r["reference_mass_kg"], r["reference_temperature_c"], r["source"])
    rate = r["mg_kg_h"] if r["mg_kg_h"] is not None else r["ml_kg_h"] * MG_PER_ML_O2
    return Reference(rate, r["reference_mass_kg"], r["reference_temperature_c"], r["source"])


def _range(span: Span | None) -> Range | None:
    return None if span is None else Range(span.min, span.max, span.source)


def _group(key: str, v: dict[str, Any]) -> AquaticGroup:
    e, g = v["extraction"], v["gill_area"]
    gill = None if g is None else GillArea(g["mm2_per_g"], g["reference_mass_kg"], g["area_exponent"], g["source"],
                                           v["barrier_um"])
    mass = _range(v["mass_kg"])
    assert mass is not None  # a required field
    return AquaticGroup(key, v["label"], v["kind"], v["aliases"], v["obligate_ram"], mass,
                        v["water_temperature_c"], v["salinity"], _reference(v["resting_vo2"]), v["mass_exponent"],
                        v["q10"], v["anaesthesia_factor"], Extraction(e["conservative"], e["usual"], e["source"]),
                        _range(v["clinical_flow_l_kg_min"]), gill, tuple(Note(**n) for n in v["notes"]))


@lru_cache(maxsize=1)
def aquatic_data() -> AquaticData:
    """The shipped aquatic data, loaded once."""
    return load_aquatic_data()
