"""Load and validate the species and apparatus data in resources/.

Every number in those files is ``{ value = ..., source = "..." }`` (or a range with
min/max/start); loading fails with a DataError naming the entry and field.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

from ventset.errors import DataError
from ventset.resources import resource_path

SEVERITIES = ("info", "caution", "danger")
GROUPS = ("placental", "marsupial", "passerine", "non_passerine", "reptile")


@dataclass(frozen=True)
class Sourced:
    """A default number with its source."""

    value: float
    source: str


@dataclass(frozen=True)
class Span:
    """A usual range with a starting value, and its source."""

    min: float
    max: float
    start: float
    source: str


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
    rate_scaling: tuple[float, float, str] | None = None  # (reference mass kg, exponent, source)

    def rate_span_for(self, mass_kg: float) -> Span:
        """The usual rate range at this mass: the listed range × (M/M_ref)^b when the entry scales with mass."""
        r = self.rate_per_min
        if self.rate_scaling is None:
            return r
        ref, b, source = self.rate_scaling
        k = (mass_kg / ref) ** b
        return Span(r.min * k, r.max * k, r.start * k,
                    f"{r.source}; at {mass_kg:.3g} kg scaled by (M/{ref:g} kg)^{b:g}: {source}")

    def matches(self, text: str) -> bool:
        """True if ``text`` (case-insensitive) occurs in the key, label or an alias."""
        t = text.strip().lower()
        return any(t in s.lower() for s in (self.key, self.label, *self.aliases))


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

    def find_species(self, text: str) -> Species | None:
        """Species by key, label or alias (exact first, then a unique partial match)."""
        t = text.strip().lower().replace(" ", "_").replace("-", "_")
        if t in self.species:
            return self.species[t]
        plain = text.strip().lower()
        for sp in self.species.values():
            if plain in (sp.label.lower(), *(a.lower() for a in sp.aliases)):
                return sp
        hits = [sp for sp in self.species.values() if sp.matches(plain)]
        return hits[0] if len(hits) == 1 else None


class _Reader:
    def __init__(self, where: str, table: dict) -> None:
        self.where = where
        self.t = table

    def fail(self, name: str, why: str) -> DataError:
        return DataError(f"{self.where}: field '{name}' {why}")

    def raw(self, name: str) -> object:
        if name not in self.t:
            raise self.fail(name, "is missing")
        return self.t[name]

    def number(self, table: dict, name: str, key: str) -> float:
        v = table.get(key)
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
            raise self.fail(name, f"needs a finite number '{key}' (got {v!r})")
        return float(v)

    def source(self, table: dict, name: str) -> str:
        s = table.get("source")
        if not isinstance(s, str) or not s.strip():
            raise self.fail(name, "has no source (cite it, or say 'common practice' or 'from memory')")
        return s.strip()

    def table(self, name: str) -> dict:
        v = self.raw(name)
        if not isinstance(v, dict):
            raise self.fail(name, "must be a table like { value = 1, source = \"...\" }")
        return v

    def sourced(self, name: str, lo: float | None = None, hi: float | None = None) -> Sourced:
        t = self.table(name)
        v = self.number(t, name, "value")
        if (lo is not None and v < lo) or (hi is not None and v > hi):
            raise self.fail(name, f"value {v} is outside {lo}..{hi}")
        return Sourced(v, self.source(t, name))

    def span(self, name: str, lo: float = 0.0, need_start: bool = True, start_key: str = "start") -> Span:
        t = self.table(name)
        a, b = self.number(t, name, "min"), self.number(t, name, "max")
        s = self.number(t, name, start_key) if need_start else (a + b) / 2
        if not lo <= a <= b:
            raise self.fail(name, f"needs {lo} <= min <= max (got min {a}, max {b})")
        if need_start and not a <= s <= b:
            raise self.fail(name, f"{start_key} {s} is outside min..max {a}..{b}")
        return Span(a, b, s, self.source(t, name))

    def text(self, name: str, choices: tuple[str, ...] | None = None) -> str:
        v = self.raw(name)
        if not isinstance(v, str) or not v.strip():
            raise self.fail(name, "must be non-empty text")
        if choices and v not in choices:
            raise self.fail(name, f"must be one of {', '.join(choices)} (got {v!r})")
        return v

    def flag(self, name: str) -> bool:
        v = self.raw(name)
        if not isinstance(v, bool):
            raise self.fail(name, "must be true or false")
        return v


def _group(key: str, t: dict) -> Group:
    r = _Reader(f"species.toml group '{key}'", t)
    return Group(key, r.text("label"), r.sourced("metabolic_k_kcal_day", 0.01, 1000),
                 r.sourced("metabolic_exponent", 0.3, 1.2), r.sourced("reference_temperature_c", 0, 45),
                 r.sourced("q10", 1.0, 5.0))


def _rate_scaling(r: _Reader, t: dict) -> tuple[float, float, str] | None:
    if "rate_mass_scaling" not in t:
        return None
    sc = r.table("rate_mass_scaling")
    ref = r.number(sc, "rate_mass_scaling", "reference_mass_kg")
    b = r.number(sc, "rate_mass_scaling", "exponent")
    if ref <= 0 or not -1.0 <= b <= 0.0:
        raise r.fail("rate_mass_scaling", "needs reference_mass_kg > 0 and -1 <= exponent <= 0")
    return ref, b, r.source(sc, "rate_mass_scaling")


def _species(key: str, t: dict, groups: dict[str, Group]) -> Species:
    r = _Reader(f"species.toml species '{key}'", t)
    gkey = r.text("group")
    if gkey not in groups:
        raise r.fail("group", f"names unknown group {gkey!r} (known: {', '.join(groups)})")
    temp_t = r.table("body_temperature_c")
    temp = Span(r.number(temp_t, "body_temperature_c", "min"), r.number(temp_t, "body_temperature_c", "max"),
                r.number(temp_t, "body_temperature_c", "value"), r.source(temp_t, "body_temperature_c"))
    if not (0 < temp.min <= temp.start <= temp.max <= 45):
        raise r.fail("body_temperature_c", "needs 0 < min <= value <= max <= 45")
    grad_t = r.table("paco2_etco2_gradient_mmhg")
    grad = Sourced(r.number(grad_t, "paco2_etco2_gradient_mmhg", "value"),
                   r.source(grad_t, "paco2_etco2_gradient_mmhg"))
    reliable = grad_t.get("reliable", True)
    if not isinstance(reliable, bool):
        raise r.fail("paco2_etco2_gradient_mmhg", "'reliable' must be true or false")
    res_t = r.table("resistance_cmh2o_l_s")
    ana_t = r.table("anatomical_dead_space")
    intub = r.number(ana_t, "anatomical_dead_space", "intubated_fraction")
    if not 0 <= intub <= 1:
        raise r.fail("anatomical_dead_space", "intubated_fraction must be 0..1")
    notes = []
    raw_notes = t.get("notes", [])
    if not isinstance(raw_notes, list):
        raise r.fail("notes", "must be a list of tables")
    for i, n in enumerate(raw_notes):
        nr = _Reader(f"species.toml species '{key}' notes[{i}]", n if isinstance(n, dict) else {})
        # Species notes are standing facts about the species: at most "caution", so that "danger" always
        # means this plan's own numbers are dangerous.
        notes.append(Note(nr.text("severity", ("info", "caution")), nr.text("code"), nr.text("text"),
                          nr.source(n if isinstance(n, dict) else {}, "source")))
    aliases = t.get("aliases", [])
    if not isinstance(aliases, list) or not all(isinstance(a, str) for a in aliases):
        raise r.fail("aliases", "must be a list of text")
    sp = Species(
        key=key, label=r.text("label"), aliases=tuple(aliases), group=groups[gkey],
        mass_kg=r.span("mass_kg", need_start=False), body_temperature_c=temp,
        tidal_volume_ml_kg=r.span("tidal_volume_ml_kg"), rate_per_min=r.span("rate_per_min"),
        pip_limit_cmh2o=r.sourced("pip_limit_cmh2o", 1, 80), peep_cmh2o=r.sourced("peep_cmh2o", 0, 30),
        ie_expiratory_part=r.sourced("ie_expiratory_part", 0.25, 20),
        paco2_target_mmhg=r.span("paco2_target_mmhg"), gradient_mmhg=grad, gradient_reliable=reliable,
        compliance_ml_cmh2o_kg=r.sourced("compliance_ml_cmh2o_kg", 0.01, 100),
        resistance_coefficient=r.number(res_t, "resistance_cmh2o_l_s", "coefficient"),
        resistance_exponent=r.number(res_t, "resistance_cmh2o_l_s", "exponent"),
        resistance_source=r.source(res_t, "resistance_cmh2o_l_s"),
        alveolar_dead_space_fraction=r.sourced("alveolar_dead_space_fraction", 0, 0.8),
        anatomical_coefficient_ml=r.number(ana_t, "anatomical_dead_space", "coefficient_ml"),
        anatomical_exponent=r.number(ana_t, "anatomical_dead_space", "exponent"),
        intubated_fraction=intub, anatomical_source=r.source(ana_t, "anatomical_dead_space"),
        rq=r.sourced("rq", 0.6, 1.3), anaesthesia_factor=r.sourced("anaesthesia_factor", 0.3, 1.5),
        default_mode=r.text("default_mode", ("volume", "pressure")),
        mechanics_reliable=r.flag("mechanics_reliable"), notes=tuple(notes),
        inspiratory_time_s=r.sourced("inspiratory_time_s", 0.05, 10) if "inspiratory_time_s" in t else None,
        rate_scaling=_rate_scaling(r, t),
    )
    if sp.resistance_coefficient <= 0:
        raise r.fail("resistance_cmh2o_l_s", "coefficient must be positive")
    if sp.anatomical_coefficient_ml <= 0:
        raise r.fail("anatomical_dead_space", "coefficient_ml must be positive")
    return sp


def _load_toml(path: Path) -> dict:
    try:
        with path.open("rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        raise DataError(f"{path.name}: data file not found at {path}") from None
    except tomllib.TOMLDecodeError as exc:
        raise DataError(f"{path.name}: not valid TOML ({exc})") from None
    if data.get("schema_version") != 1:
        raise DataError(f"{path.name}: schema_version must be 1 (got {data.get('schema_version')!r})")
    return data


def parse_species(data: dict) -> tuple[dict[str, Group], dict[str, Species]]:
    """Validate a parsed species.toml document; raises DataError naming species and field."""
    groups_t = data.get("groups")
    species_t = data.get("species")
    if not isinstance(groups_t, dict) or not isinstance(species_t, dict):
        raise DataError("species.toml: needs [groups.*] and [species.*] tables")
    groups = {k: _group(k, v) for k, v in groups_t.items()}
    species = {k: _species(k, v, groups) for k, v in species_t.items()}
    return groups, species


def parse_apparatus(data: dict) -> tuple[dict[str, Part], dict[str, CircuitType], dict[str, Sourced]]:
    """Validate a parsed apparatus.toml document; raises DataError naming entry and field."""
    parts = {}
    for k, v in (data.get("parts") or {}).items():
        r = _Reader(f"apparatus.toml part '{k}'", v)
        parts[k] = Part(k, r.text("label"), r.text("kind"), r.sourced("volume_ml", 0, 5000))
    circuits = {}
    for k, v in (data.get("circuits") or {}).items():
        r = _Reader(f"apparatus.toml circuit '{k}'", v)
        circuits[k] = CircuitType(k, r.text("label"), r.flag("rebreathing"),
                                  r.sourced("compressible_volume_ml_cmh2o", 0, 200))
    fg = data.get("fresh_gas") or {}
    r = _Reader("apparatus.toml [fresh_gas]", fg)
    fresh = {k: r.sourced(k, 0) for k in fg}
    for need in ("non_rebreathing_minute_volume_multiple", "non_rebreathing_floor_ml_min",
                 "non_rebreathing_below_kg", "rebreathing_maintenance_ml_kg_min",
                 "rebreathing_induction_ml_kg_min", "rebreathing_floor_ml_min",
                 "large_animal_circle_above_kg", "sidestream_sampling_ml_min",
                 "large_animal_maintenance_ml_kg_min", "large_animal_induction_ml_kg_min",
                 "direct_small_patient_below_kg"):
        if need not in fresh:
            raise r.fail(need, "is missing")
    for need in ("direct_small_patient", "non_rebreathing", "rebreathing_small_animal", "rebreathing_large_animal"):
        if need not in circuits:
            raise DataError(f"apparatus.toml: circuit '{need}' is missing")
    return parts, circuits, fresh


def parse_sourced_table(data: dict, file: str, table: str, required: tuple[str, ...] = ()) -> dict[str, Sourced]:
    """Validate a table of ``name = { value, source }`` entries (cautions.toml, planning.toml)."""
    body = data.get(table) or {}
    r = _Reader(f"{file} [{table}]", body)
    out = {k: r.sourced(k) for k in body}
    for need in required:
        if need not in out:
            raise r.fail(need, "is missing")
    return out


@lru_cache(maxsize=1)
def load_library() -> Library:
    """Load and validate species.toml, apparatus.toml, cautions.toml and planning.toml (cached)."""
    sp_data = _load_toml(resource_path("species.toml"))
    groups, species = parse_species(sp_data)
    parts, circuits, fresh = parse_apparatus(_load_toml(resource_path("apparatus.toml")))
    cautions = parse_sourced_table(_load_toml(resource_path("cautions.toml")), "cautions.toml", "thresholds")
    planning = parse_sourced_table(_load_toml(resource_path("planning.toml")), "planning.toml", "defaults",
                                   ("fio2", "ti_reference_s", "ti_reference_mass_kg", "ti_mass_exponent",
                                    "reservoir_bag_vt_multiple"))
    return Library(species=species, groups=groups, parts=parts, circuits=circuits, fresh_gas=fresh,
                   species_version=str(sp_data.get("data_version", "1")), cautions=cautions, planning=planning)
