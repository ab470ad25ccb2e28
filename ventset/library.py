"""Load the data in resources/ through its declared schema (ventset/datafiles.py) into frozen dataclasses.

Every number in those files is ``{ value = ..., source = "..." }`` (or a range with min/max/start);
a malformed file fails with one DataError line ``<file>: <entry>: field '<name>' <what is wrong>``.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from functools import lru_cache
from pathlib import Path
from typing import Any

from ventset.datafiles import FILES
from ventset.errors import DataError
from ventset.parsecache import built, core_sources, parse_toml
from ventset.resources import resource_dir, resource_path
from ventset.schema import Sourced, SourcedNumber, Span, Where
from ventset.situations import Situation, build_situation

__all__ = ["SEVERITIES", "GROUPS", "TAXON_PREFIX", "Sourced", "Span", "Note", "Group", "Species", "Part",
           "CircuitType", "Library", "load_library", "load_resource", "load_resource_file", "parse_species",
           "parse_apparatus", "parse_sourced_table"]

SEVERITIES = ("info", "caution", "danger")
# The key a taxon-only patient's entry carries (Resolved.species): the prefix and the metabolic group.
TAXON_PREFIX = "taxon:"
GROUPS = ("placental", "marsupial", "passerine", "non_passerine", "reptile")


@dataclass(frozen=True)
class Note:
    """A species-specific caution shown with every plan for that species."""

    severity: str
    code: str
    text: str
    source: str


@dataclass(frozen=True)
class Group:
    """Metabolic group: allometric constant K·M^b kcal/day at a reference temperature."""

    key: str
    label: str
    k_kcal_day: Sourced
    exponent: Sourced
    reference_temperature_c: Sourced
    q10: Sourced
    ectotherm: bool = False


@dataclass(frozen=True)
class Species:
    """One species or group entry from species.toml."""

    key: str
    label: str
    aliases: tuple[str, ...]
    group: Group
    mass_kg: Span
    body_temperature_c: Span
    tidal_volume_ml_kg: Span
    rate_per_min: Span
    pip_limit_cmh2o: Sourced
    peep_cmh2o: Sourced
    ie_expiratory_part: Sourced
    paco2_target_mmhg: Span
    gradient_mmhg: Sourced
    gradient_reliable: bool
    compliance_ml_cmh2o_kg: Sourced
    resistance_coefficient: float
    resistance_exponent: float
    resistance_source: str
    alveolar_dead_space_fraction: Sourced
    anatomical_coefficient_ml: float
    anatomical_exponent: float
    intubated_fraction: float
    anatomical_source: str
    rq: Sourced
    anaesthesia_factor: Sourced
    default_mode: str
    mechanics_reliable: bool
    notes: tuple[Note, ...]
    inspiratory_time_s: Sourced | None = None
    inspiratory_pause_s: Sourced | None = None
    rate_scaling: tuple[float, float, str] | None = None  # (reference mass kg, exponent, source)
    airway_dead_space_ml_kg: Sourced | None = None
    neonate_metabolic_factor: Sourced | None = None
    juvenile_metabolic_factor: Sourced | None = None
    neonate_below_kg: Sourced | None = None
    juvenile_below_kg: Sourced | None = None
    young_aliases: tuple[str, ...] = ()

    def rate_span_for(self, mass_kg: float) -> Span:
        """The usual rate range at this mass: the listed range × (M/M_ref)^b when the entry scales with mass."""
        r = self.rate_per_min
        if self.rate_scaling is None:
            return r
        ref, b, source = self.rate_scaling
        k = (mass_kg / ref) ** b
        at = f"at {mass_kg:.3g} kg" if isinstance(mass_kg, int | float) else "at each mass"  # arrays: a sweep
        return Span(r.min * k, r.max * k, r.start * k, f"{r.source}; {at} scaled by (M/{ref:g} kg)^{b:g}: {source}")

    def age_named(self, text: str, mass_kg: float) -> str | None:
        """The age a young alias (puppy, calf, ...) stands for: neonate below the species' neonate mass, else
        juvenile; None when ``text`` is not a young alias."""
        t = text.strip().lower()
        if not any(t == a.lower() for a in self.young_aliases):
            return None
        newborn = self.neonate_below_kg is not None and mass_kg < self.neonate_below_kg.value
        return "neonate" if newborn else "juvenile"

    def matches(self, text: str) -> bool:
        """True if ``text`` (case-insensitive) occurs in the key, label or an alias."""
        t = text.strip().lower()
        return any(t in s.lower() for s in (self.key, self.label, *self.aliases, *self.young_aliases))


@dataclass(frozen=True)
class Part:
    """A breathing-circuit part between the Y-piece and the incisors."""

    key: str
    label: str
    kind: str
    volume_ml: Sourced


@dataclass(frozen=True)
class CircuitType:
    """A kind of breathing system with its typical compressible volume."""

    key: str
    label: str
    rebreathing: bool
    compressible_ml_cmh2o: Sourced


@dataclass(frozen=True)
class Library:
    """All shipped data a plan may draw on."""

    species: dict[str, Species]
    groups: dict[str, Group]
    parts: dict[str, Part]
    circuits: dict[str, CircuitType]
    fresh_gas: dict[str, Sourced]
    species_version: str = ""
    cautions: dict[str, Sourced] = field(default_factory=dict)
    planning: dict[str, Sourced] = field(default_factory=dict)
    situations: dict[str, Situation] = field(default_factory=dict)
    co2_stores: dict[str, Sourced] = field(default_factory=dict)
    # Generic entries for a species not listed, by metabolic group key (species.toml [taxa.*]); each carries
    # the key TAXON_PREFIX + group, so it is never taken for a listed species.
    taxa: dict[str, Species] = field(default_factory=dict)

    def find_taxon(self, text: str) -> Species | None:
        """The taxon-only entry for a metabolic group, by group key ('non_passerine', 'non-passerine',
        'taxon:placental') or group label; None if there is none."""
        t = text.strip().lower().removeprefix(TAXON_PREFIX).replace(" ", "_").replace("-", "_")
        if t in self.taxa:
            return self.taxa[t]
        return next((tx for tx in self.taxa.values() if text.strip().lower() == tx.group.label.lower()), None)

    def entry(self, key: str) -> Species:
        """The entry a plan was made with (Resolved.species): a listed species or a taxon-only entry."""
        if key.startswith(TAXON_PREFIX):
            return self.taxa[key.removeprefix(TAXON_PREFIX)]
        return self.species[key]

    def find_species(self, text: str) -> Species | None:
        """Species by key, label or alias (exact first, then a unique partial match)."""
        t = text.strip().lower().replace(" ", "_").replace("-", "_")
        if t in self.species:
            return self.species[t]
        plain = text.strip().lower()
        for sp in self.species.values():
            if plain in (sp.label.lower(), *(a.lower() for a in (*sp.aliases, *sp.young_aliases))):
                return sp
        hits = [sp for sp in self.species.values() if sp.matches(plain)]
        return hits[0] if len(hits) == 1 else None


# Species fields whose TOML layout differs from the Species attributes; every other declared field fills the
# attribute of the same name (so a new optional field is one declaration plus one attribute with a default).
SPECIES_COMPOUND = ("group", "notes", "paco2_etco2_gradient_mmhg", "resistance_cmh2o_l_s", "anatomical_dead_space",
                    "rate_mass_scaling")


def _group(key: str, v: dict[str, Any]) -> Group:
    return Group(key, v["label"], v["metabolic_k_kcal_day"], v["metabolic_exponent"], v["reference_temperature_c"],
                 v["q10"], v["ectotherm"])


def _species(key: str, v: dict[str, Any], groups: dict[str, Group]) -> Species:
    same = {f.name: v[f.name] for f in fields(Species) if f.name in v and f.name not in SPECIES_COMPOUND}
    grad, res, ana = v["paco2_etco2_gradient_mmhg"], v["resistance_cmh2o_l_s"], v["anatomical_dead_space"]
    sc = v["rate_mass_scaling"]
    return Species(
        key=key, group=groups[v["group"]], notes=tuple(Note(**n) for n in v["notes"]),
        gradient_mmhg=Sourced(grad["value"], grad["source"]), gradient_reliable=grad["reliable"],
        resistance_coefficient=res["coefficient"], resistance_exponent=res["exponent"],
        resistance_source=res["source"],
        anatomical_coefficient_ml=ana["coefficient_ml"], anatomical_exponent=ana["exponent"],
        intubated_fraction=ana["intubated_fraction"], anatomical_source=ana["source"],
        rate_scaling=None if sc is None else (sc["reference_mass_kg"], sc["exponent"], sc["source"]),
        **same)


def _read_toml(path: Path) -> dict[str, Any]:
    """Parse one TOML file; a missing, unreadable or invalid file is one DataError line."""
    try:
        return parse_toml(path.name, path.read_bytes())
    except FileNotFoundError:
        raise DataError(f"{path.name}: data file not found at {path}") from None
    except UnicodeDecodeError as exc:
        raise DataError(f"{path.name}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
    except ValueError as exc:  # tomllib.TOMLDecodeError (tomllib is imported only when the cache misses)
        raise DataError(f"{path.name}: not valid TOML ({exc})") from None
    except OSError as exc:
        raise DataError(f"{path.name}: cannot be read ({exc.strerror or exc})") from None


def _load_toml(path: Path) -> dict[str, Any]:
    """Parse a TOML file and check ``schema_version = 1`` (kept for callers not yet on load_resource)."""
    data = _read_toml(path)
    if data.get("schema_version") != 1 or isinstance(data.get("schema_version"), bool):
        raise DataError(f"{path.name}: field 'schema_version' must be 1 (got {data.get('schema_version')!r})")
    return data


def load_resource(name: str, folder: Path | None = None) -> dict[str, Any]:
    """Read ``name`` (e.g. "titration.toml") from resources/ (or ``folder``) and check it against its schema.

    Returns the declared values: ``Sourced`` for ``{value, source}``, ``Span`` for ranges, and plain
    floats, text, booleans, tuples (lists) and dicts (tables). Raises DataError (one line) if malformed.
    """
    return load_resource_file(name, resource_path(name, folder))


def load_resource_file(name: str, path: Path) -> dict[str, Any]:
    """Read the file at ``path`` and check it against the schema of ``name`` (e.g. a copy under review)."""
    if name not in FILES:
        raise DataError(f"{name}: no schema is declared for this file (ventset/datafiles.py)")
    return FILES[name].read(_read_toml(path))


def _build_species(v: dict[str, Any]) -> tuple[dict[str, Group], dict[str, Species]]:
    groups = {k: _group(k, g) for k, g in v["groups"].items()}
    return groups, {k: _species(k, sp, groups) for k, sp in v["species"].items()}


def _build_taxa(v: dict[str, Any], groups: dict[str, Group]) -> dict[str, Species]:
    return {k: _species(TAXON_PREFIX + k, tx, groups) for k, tx in (v.get("taxa") or {}).items()}


def _build_apparatus(v: dict[str, Any]) -> tuple[dict[str, Part], dict[str, CircuitType], dict[str, Sourced]]:
    parts = {k: Part(k, p["label"], p["kind"], p["volume_ml"]) for k, p in v["parts"].items()}
    circuits = {k: CircuitType(k, c["label"], c["rebreathing"], c["compressible_volume_ml_cmh2o"])
                for k, c in v["circuits"].items()}
    return parts, circuits, dict(v["fresh_gas"])


def parse_species(data: dict[str, Any]) -> tuple[dict[str, Group], dict[str, Species]]:
    """Validate a parsed species.toml document; raises DataError naming species and field."""
    return _build_species(FILES["species.toml"].read(data))


def parse_apparatus(data: dict[str, Any]) -> tuple[dict[str, Part], dict[str, CircuitType], dict[str, Sourced]]:
    """Validate a parsed apparatus.toml document; raises DataError naming entry and field."""
    return _build_apparatus(FILES["apparatus.toml"].read(data))


def parse_sourced_table(data: dict[str, Any], file: str, table: str,
                        required: tuple[str, ...] = ()) -> dict[str, Sourced]:
    """A table of ``name = { value, source }`` entries: the declared schema when ``file`` has one, else strict
    sourced numbers without ranges (kept for callers not yet on load_resource)."""
    if file in FILES:
        out = dict(FILES[file].read(data)[table])
    else:
        body = data.get(table)
        at = Where(file, f"[{table}]")
        if not isinstance(body, dict):
            raise Where(file).at(table).fail("must be a table of { value, source } entries")
        out = {k: SourcedNumber(k).read(v, at.at(k)) for k, v in body.items()}
    for need in required:
        if need not in out:
            raise Where(file, f"[{table}]").at(need).fail("is missing")
    return out


def load_library(folder: Path | None = None) -> Library:
    """Load and check species, apparatus, cautions and planning data from resources/ (or ``folder``), cached.

    ``folder`` defaults to the shipped data, or $VENTSET_RESOURCES_DIR when that is set (ventset.resources).
    """
    return _load_library(resource_dir(folder))


# The files the library is built from (and nothing else): its cache entry is stamped with their bytes.
LIBRARY_FILES = ("species.toml", "apparatus.toml", "cautions.toml", "planning.toml", "situations.toml")


@lru_cache(maxsize=4)
def _load_library(folder: Path) -> Library:
    """Built, or the library built before from the same bytes of the same files and code (parsecache.built)."""
    return built("library", [*(resource_path(n, folder) for n in LIBRARY_FILES), *core_sources()],
                 lambda: _build_library(folder))


def _build_library(folder: Path) -> Library:
    sp = load_resource("species.toml", folder)
    groups, species = _build_species(sp)
    parts, circuits, fresh = _build_apparatus(load_resource("apparatus.toml", folder))
    return Library(species=species, groups=groups, parts=parts, circuits=circuits, fresh_gas=fresh,
                   species_version=sp["data_version"],
                   cautions=dict(load_resource("cautions.toml", folder)["thresholds"]),
                   planning=dict(load_resource("planning.toml", folder)["defaults"]),
                   taxa=_build_taxa(sp, groups), **_situations(load_resource("situations.toml", folder)))


def _situations(v: dict[str, Any]) -> dict[str, Any]:
    return {"situations": {k: build_situation(k, s) for k, s in v["situations"].items()},
            "co2_stores": dict(v["co2_stores"])}


# Tests and the GUI clear the cache through the public function; mypy has no way to declare an attribute set on
# a plain function, hence the ignore.
load_library.cache_clear = _load_library.cache_clear  # type: ignore[attr-defined]
