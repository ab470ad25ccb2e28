"""The validation set: published observations the model is checked against (resources/validation.toml).

Read through the file's declared schema (``ventset/datafiles_validation.py``, documented in resources/SCHEMA.md):
an unknown key, a missing field or a value of the wrong kind or out of range raises one DataError naming the
row by its id and the field. ``docs/validation.md`` explains the tolerance rule.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from ventset.datafiles import FILES
from ventset.datafiles_validation import OBSERVATION_KINDS, QUANTITIES, SEEN
from ventset.library import load_resource_file
from ventset.resources import resource_path
from ventset.schema import TableList, Where

FILE = "validation.toml"
KINDS = OBSERVATION_KINDS
__all__ = ["FILE", "KINDS", "QUANTITIES", "SEEN", "Published", "Conditions", "Observation", "parse_observation",
           "parse_validation", "load_file", "load_validation"]


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
        limit = self.low if self.low is not None else self.high
        if limit is None:  # the schema refuses a published value with neither a mean nor a band
            raise ValueError("a published value needs a mean or a low/high band")
        return limit

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


def _observation(v: dict[str, Any]) -> Observation:
    """One checked row → Observation."""
    p, assumed = v["published"], v["assumed"] or {}
    return Observation(
        id=v["id"], species=v["species"], kind=v["kind"], quantity=v["quantity"],
        published=Published(p["mean"], p["sd"], p["low"], p["high"]), conditions=Conditions(**v["conditions"]),
        source=v["source"], seen=v["seen"], quote=v["quote"], where=v["where"],
        assumed=tuple((k, why) for k, why in assumed.items() if why is not None),
        known_disagreement=v["known_disagreement"], note=v["note"])


def parse_observation(raw: object, index: int) -> Observation:
    """One row of the file (``index`` from 0) → Observation; DataError names the row and the field."""
    rows = FILES[FILE].fields[0]
    assert isinstance(rows, TableList)  # the file's one top-level field, [[observation]]
    return _observation(rows.read_item(raw, index, Where(FILE)))


def _checked(values: dict[str, Any], species_keys: frozenset[str] | None) -> tuple[Observation, ...]:
    out = tuple(_observation(row) for row in values["observation"])
    for obs in out:
        if species_keys is not None and obs.species not in species_keys:
            raise Where(FILE, f"observation {obs.id!r}").at("species").fail(
                f"'{obs.species}' is not a species key (see 'ventset species')")
    return out


def parse_validation(data: dict[str, Any], species_keys: frozenset[str] | None = None) -> tuple[Observation, ...]:
    """Check a parsed validation file; ``species_keys`` (if given) must contain every row's species."""
    return _checked(FILES[FILE].read(data), species_keys)


def load_file(path: Path, species_keys: frozenset[str] | None = None) -> tuple[Observation, ...]:
    """Load and check a validation file at ``path``."""
    return _checked(load_resource_file(FILE, path), species_keys)


@lru_cache(maxsize=1)
def load_validation() -> tuple[Observation, ...]:
    """The shipped validation set, checked against the species library."""
    from ventset.library import load_library

    keys = frozenset(load_library().species)
    return load_file(resource_path(FILE), keys)
