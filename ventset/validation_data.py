"""The validation set: published observations the model is checked against (resources/validation.toml).

Strict loader: every row is checked against the schema below; an unknown key, a missing field or a value
of the wrong kind raises one DataError naming the row and the field. The file's own header documents the
schema for people editing it; ``docs/validation.md`` explains the tolerance rule.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

from ventset.errors import DataError
from ventset.resources import resource_path

FILE = "validation.toml"
KINDS = ("input", "outcome")
SEEN = ("abstract", "full text", "from memory")

# quantity -> (kind, unit, label)
QUANTITIES: dict[str, tuple[str, str, str]] = {
    "vo2_ml_kg_min": ("input", "mL/kg/min", "O2 consumption per kg"),
    "vo2_ml_kg_h": ("input", "mL/kg/h", "O2 consumption per kg (standard metabolic rate)"),
    "vco2_ml_kg_min": ("input", "mL/kg/min", "CO2 output per kg"),
    "vco2_ml_kg075_min": ("input", "mL/kg^0.75/min", "CO2 output per kg^0.75"),
    "rq": ("input", "", "respiratory quotient"),
    "q10": ("input", "", "temperature coefficient of metabolic rate"),
    "mass_exponent": ("input", "", "mass exponent b of metabolic rate (K·M^b)"),
    "vd_vt": ("input", "", "physiological dead space / tidal volume"),
    "alveolar_vd_of_alveolar_vt": ("input", "", "alveolar dead space / alveolar tidal volume"),
    "gradient_mmhg": ("input", "mmHg", "PaCO2 − EtCO2"),
    "compliance_ml_cmh2o_kg": ("input", "mL/cmH2O/kg", "respiratory-system compliance per kg"),
    "paco2_mmhg": ("outcome", "mmHg", "arterial PCO2"),
    "etco2_mmhg": ("outcome", "mmHg", "end-tidal PCO2"),
    "venous_pco2_mmhg": ("outcome", "mmHg", "venous PCO2 (compared with the predicted arterial value)"),
}

ROW_KEYS = {"id", "species", "kind", "quantity", "published", "conditions", "source", "seen", "where", "quote",
            "assumed", "known_disagreement", "note"}
REQUIRED_KEYS = ("id", "species", "kind", "quantity", "published", "conditions", "source", "seen", "quote")
PUBLISHED_KEYS = {"mean", "sd", "low", "high"}
NUMERIC_CONDITIONS = {"mass_kg", "body_temp_c", "vt_ml_kg", "rate_per_min", "rate_min", "rate_max", "peep_cmh2o",
                      "pip_cmh2o", "fio2", "tube_id_mm", "tube_length_cm", "minutes", "n"}
TEXT_CONDITIONS = {"circuit", "anaesthetic", "recumbency", "ventilation", "animals", "state"}


@dataclass(frozen=True)
class Published:
    """The published value: a mean (± SD), or a band low–high (either end may be open)."""

    mean: float | None = None
    sd: float | None = None
    low: float | None = None
    high: float | None = None

    @property
    def is_band(self) -> bool:
        return self.mean is None

    @property
    def centre(self) -> float:
        """The mean, the middle of a closed band, or the one published limit."""
        if self.mean is not None:
            return self.mean
        if self.low is not None and self.high is not None:
            return (self.low + self.high) / 2.0
        return float(self.low if self.low is not None else self.high)  # type: ignore[arg-type]

    def as_dict(self) -> dict[str, float]:
        return {k: v for k, v in (("mean", self.mean), ("sd", self.sd), ("low", self.low), ("high", self.high))
                if v is not None}

    def text(self) -> str:
        if self.mean is not None:
            return f"{self.mean:g}" + (f" ± {self.sd:g}" if self.sd is not None else "")
        if self.low is not None and self.high is not None:
            return f"{self.low:g}–{self.high:g}"
        return f"< {self.high:g}" if self.high is not None else f"> {self.low:g}"


@dataclass(frozen=True)
class Conditions:
    """The study's settings and patient (plain floats, units in the names); None = not published."""

    mass_kg: float
    body_temp_c: float | None = None
    vt_ml_kg: float | None = None
    rate_per_min: float | None = None
    rate_min: float | None = None
    rate_max: float | None = None
    peep_cmh2o: float | None = None
    pip_cmh2o: float | None = None
    fio2: float | None = None
    tube_id_mm: float | None = None
    tube_length_cm: float | None = None
    minutes: float | None = None
    n: float | None = None
    circuit: str | None = None
    anaesthetic: str | None = None
    recumbency: str | None = None
    ventilation: str | None = None
    animals: str | None = None
    state: str | None = None


@dataclass(frozen=True)
class Observation:
    """One published observation and where it was seen."""

    id: str
    species: str
    kind: str
    quantity: str
    published: Published
    conditions: Conditions
    source: str
    seen: str
    quote: str
    where: str = ""
    assumed: tuple[tuple[str, str], ...] = ()
    known_disagreement: str = ""
    note: str = ""

    @property
    def unit(self) -> str:
        return QUANTITIES[self.quantity][1]


def _fail(row: str, name: str, why: str) -> DataError:
    return DataError(f"{FILE}: observation '{row}' field '{name}' {why}")


def _number(row: str, name: str, value: object) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise _fail(row, name, f"must be a finite number (got {value!r})")
    return float(value)


def _text(row: str, name: str, value: object, choices: tuple[str, ...] | None = None) -> str:
    if not isinstance(value, str) or not value.strip():
        raise _fail(row, name, "must be non-empty text")
    if choices is not None and value not in choices:
        raise _fail(row, name, f"must be one of {', '.join(choices)} (got {value!r})")
    return value


def _published(row: str, raw: object) -> Published:
    if not isinstance(raw, dict):
        raise _fail(row, "published", "must be a table such as { mean = 34.6, sd = 2.7 } or { low = 35, high = 45 }")
    unknown = set(raw) - PUBLISHED_KEYS
    if unknown:
        raise _fail(row, f"published.{sorted(unknown)[0]}", "is not a known key (mean, sd, low, high)")
    vals = {k: _number(row, f"published.{k}", v) for k, v in raw.items()}
    if "mean" in vals and ("low" in vals or "high" in vals):
        raise _fail(row, "published", "give a mean (± sd) or a band (low/high), not both")
    if "mean" not in vals and "low" not in vals and "high" not in vals:
        raise _fail(row, "published", "needs a mean or a low/high band")
    if "sd" in vals and "mean" not in vals:
        raise _fail(row, "published.sd", "needs a mean")
    if "low" in vals and "high" in vals and vals["low"] > vals["high"]:
        raise _fail(row, "published", "low must not exceed high")
    return Published(vals.get("mean"), vals.get("sd"), vals.get("low"), vals.get("high"))


def _conditions(row: str, raw: object) -> Conditions:
    if not isinstance(raw, dict):
        raise _fail(row, "conditions", "must be a table")
    values: dict[str, object] = {}
    for key, value in raw.items():
        if key in NUMERIC_CONDITIONS:
            values[key] = _number(row, f"conditions.{key}", value)
        elif key in TEXT_CONDITIONS:
            values[key] = _text(row, f"conditions.{key}", value)
        else:
            raise _fail(row, f"conditions.{key}", "is not a known condition")
    if "mass_kg" not in values or values["mass_kg"] <= 0:  # type: ignore[operator]
        raise _fail(row, "conditions.mass_kg", "is required and must be above 0")
    if ("rate_min" in values) != ("rate_max" in values):
        raise _fail(row, "conditions.rate_min", "give both rate_min and rate_max, or neither")
    if ("tube_id_mm" in values) != ("tube_length_cm" in values):
        raise _fail(row, "conditions.tube_id_mm", "give both tube_id_mm and tube_length_cm, or neither")
    return Conditions(**values)  # type: ignore[arg-type]


def _check_outcome(row: str, published: Published, c: Conditions) -> None:
    has_rate = c.rate_per_min is not None or c.rate_min is not None
    if not has_rate:
        raise _fail(row, "conditions.rate_per_min", "an outcome needs the rate used (rate_per_min or rate_min/max)")
    if c.vt_ml_kg is None and c.pip_cmh2o is None:
        raise _fail(row, "conditions.vt_ml_kg",
                    "an outcome needs the tidal volume (vt_ml_kg) or the pressure (pip_cmh2o)")
    if c.rate_min is not None and not published.is_band:
        raise _fail(row, "published", "a rate range goes with a published band (low/high)")
    if c.rate_min is not None and c.rate_max is not None and c.rate_min > c.rate_max:
        raise _fail(row, "conditions.rate_min", "must not exceed rate_max")


def parse_observation(raw: object, index: int) -> Observation:
    """One row of the file → Observation; DataError names the row and the field."""
    if not isinstance(raw, dict):
        raise DataError(f"{FILE}: observation #{index + 1} must be a table")
    row = str(raw.get("id", f"#{index + 1}"))
    unknown = set(raw) - ROW_KEYS
    if unknown:
        raise _fail(row, sorted(unknown)[0], "is not a known field")
    for key in REQUIRED_KEYS:
        if key not in raw:
            raise _fail(row, key, "is required")
    kind = _text(row, "kind", raw["kind"], KINDS)
    quantity = _text(row, "quantity", raw["quantity"], tuple(QUANTITIES))
    if QUANTITIES[quantity][0] != kind:
        raise _fail(row, "quantity", f"'{quantity}' is an {QUANTITIES[quantity][0]}, not an {kind}")
    published = _published(row, raw["published"])
    conditions = _conditions(row, raw["conditions"])
    if kind == "outcome":
        _check_outcome(row, published, conditions)
    assumed_raw = raw.get("assumed", {})
    if not isinstance(assumed_raw, dict):
        raise _fail(row, "assumed", "must be a table of condition = reason")
    for key, why in assumed_raw.items():
        if key not in NUMERIC_CONDITIONS | TEXT_CONDITIONS:
            raise _fail(row, f"assumed.{key}", "is not a known condition")
        _text(row, f"assumed.{key}", why)
    disagreement = raw.get("known_disagreement", "")
    if disagreement:
        _text(row, "known_disagreement", disagreement)
        if kind != "input":
            raise _fail(row, "known_disagreement", "is for inputs only (an outcome is judged as published)")
    return Observation(
        id=_text(row, "id", raw["id"]), species=_text(row, "species", raw["species"]), kind=kind,
        quantity=quantity, published=published, conditions=conditions, source=_text(row, "source", raw["source"]),
        seen=_text(row, "seen", raw["seen"], SEEN), quote=_text(row, "quote", raw["quote"]),
        where=_text(row, "where", raw["where"]) if "where" in raw else "",
        assumed=tuple((k, str(v)) for k, v in assumed_raw.items()), known_disagreement=str(disagreement),
        note=_text(row, "note", raw["note"]) if "note" in raw else "")


def parse_validation(data: dict, species_keys: frozenset[str] | None = None) -> tuple[Observation, ...]:
    """Check a parsed validation file; ``species_keys`` (if given) must contain every row's species."""
    unknown = set(data) - {"schema_version", "observation"}
    if unknown:
        raise DataError(f"{FILE}: top-level key '{sorted(unknown)[0]}' is not known")
    if data.get("schema_version") != 1:
        raise DataError(f"{FILE}: schema_version must be 1 (got {data.get('schema_version')!r})")
    rows = data.get("observation")
    if not isinstance(rows, list) or not rows:
        raise DataError(f"{FILE}: needs [[observation]] rows")
    out = tuple(parse_observation(r, i) for i, r in enumerate(rows))
    seen_ids: set[str] = set()
    for obs in out:
        if obs.id in seen_ids:
            raise _fail(obs.id, "id", "is used twice")
        seen_ids.add(obs.id)
        if species_keys is not None and obs.species not in species_keys:
            raise _fail(obs.id, "species", f"'{obs.species}' is not a species key (see 'ventset species')")
    return out


def load_file(path: Path, species_keys: frozenset[str] | None = None) -> tuple[Observation, ...]:
    """Load and check a validation file at ``path``."""
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise DataError(f"{FILE}: data file not found at {path}") from None
    except tomllib.TOMLDecodeError as exc:
        raise DataError(f"{FILE}: not valid TOML ({exc})") from None
    return parse_validation(data, species_keys)


@lru_cache(maxsize=1)
def load_validation() -> tuple[Observation, ...]:
    """The shipped validation set, checked against the species library."""
    from ventset.library import load_library

    keys = frozenset(load_library().species)
    return load_file(resource_path(FILE), keys)
