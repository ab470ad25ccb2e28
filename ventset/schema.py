"""Declarative schema for the data files in resources/: field descriptors, strict checking, SCHEMA.md text.

Every file's layout is declared once with the descriptors below (``ventset/datafiles.py``).
``FileSchema.read`` checks a parsed TOML document against it and returns plain values (``Sourced``,
``Span``, float, str, bool, tuples and dicts); anything wrong raises one ``DataError`` line
``<file>: <entry>: field '<name>' <what is wrong>``. The checks are strict: a boolean is not a number,
text is not a number, only TOML ``true``/``false`` are booleans, numbers are finite and inside their
declared range, every source is non-empty, and an unknown key is refused by name (with the nearest
known key when it looks like a misspelling). ``ventset.schema_doc`` writes the reference (SCHEMA.md).
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Sequence
from dataclasses import KW_ONLY, dataclass
from functools import cached_property
from typing import Any, NamedTuple

from ventset.errors import DataError

SOURCE_HELP = ('a citation ("Authors Year"), "common practice" for a rule of thumb of the trade, '
               'or "from memory" when that is all it is')
UPPER_SNAKE = r"[A-Z][A-Z0-9]*(_[A-Z0-9]+)*"
LOWER_SNAKE = r"[a-z][a-z0-9]*(_[a-z0-9]+)*"
LOWER_KEBAB = r"[a-z][a-z0-9]*(-[a-z0-9]+)*"
_PATTERN_WORDS = {UPPER_SNAKE: "UPPER_SNAKE", LOWER_SNAKE: "lower_snake", LOWER_KEBAB: "lower-kebab"}


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


class Where(NamedTuple):
    """Where a value sits: the file, the entry (``species 'dog'``, ``[fresh_gas]``) and the key path in it."""

    file: str
    entry: str = ""
    path: tuple[str, ...] = ()

    def at(self, key: str) -> Where:
        return Where(self.file, self.entry, (*self.path, key))

    def up(self) -> Where:
        return Where(self.file, self.entry, self.path[:-1])

    def enter(self, entry: str) -> Where:
        return Where(self.file, entry)

    def fail(self, why: str) -> DataError:
        """The one-line error ``<file>: <entry>: field '<name>' <why>``."""
        if self.path:
            rest = ".".join(self.path[1:])
            why = f"field '{self.path[0]}'{' ' + rest if rest else ''} {why}"
        text = ": ".join([self.file, *([self.entry] if self.entry else []), why])
        return DataError(" ".join(text.splitlines()))


def shown(value: object) -> str:
    """A short description of a TOML value for an error message."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return f"text {value[:40]!r}" + ("..." if len(value) > 40 else "")
    if isinstance(value, int | float):
        return f"{value:g}"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return "a list"
    return f"a {type(value).__name__}"


def _g(x: float) -> str:
    return f"{x:g}"


Check = Callable[[dict[str, Any], Where], None]


@dataclass(frozen=True, eq=False)
class Field:
    """One key of a table: its name, help text, and whether it may be left out (then ``default``).

    Descriptors are compared by identity (``eq=False``: fewer generated methods, a cheaper import).
    """

    name: str
    _: KW_ONLY
    help: str = ""
    required: bool = True
    default: Any = None

    def read(self, raw: object, at: Where) -> Any:
        raise NotImplementedError

    def missing(self, at: Where) -> DataError:
        return at.fail("is missing")

    def type_text(self) -> str:
        return "value"

    def unit_text(self) -> str:
        return str(getattr(self, "unit", ""))

    def allowed_text(self) -> str:
        return ""

    def doc_rows(self, prefix: str = "") -> list[tuple[str, ...]]:
        """Rows (key, type, unit, allowed, required, meaning) for the SCHEMA.md table."""
        need = "yes" if self.required else f"no (default {default_text(self.default)})"
        return [(f"`{prefix}{self.name}`", self.type_text(), self.unit_text(), self.allowed_text(), need, self.help)]


def default_text(value: object) -> str:
    if value is None:
        return "none"
    if isinstance(value, bool):
        return "true" if value else "false"
    if value in ((), ""):
        return "empty"
    return str(value)


@dataclass(frozen=True, eq=False)
class Number(Field):
    """A plain finite number (TOML integer or float, never a boolean), optionally bounded."""

    unit: str = ""
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    integer: bool = False

    def read(self, raw: object, at: Where) -> float:
        if isinstance(raw, bool) or not isinstance(raw, int | float):
            raise at.fail(f"must be a number (got {shown(raw)})")
        x = float(raw)
        if not math.isfinite(x):
            raise at.fail(f"must be a finite number (got {shown(raw)})")
        if self.integer and not isinstance(raw, int):
            raise at.fail(f"must be a whole number (got {shown(raw)})")
        if not self.inside(x):
            closed = self.lo is not None and self.hi is not None and not (self.lo_open or self.hi_open)
            raise at.fail(f"must be {'from ' if closed else ''}{self.allowed_text()} "
                          f"(got {_g(x)}{' ' + self.unit if self.unit else ''})")
        return x

    def inside(self, x: float) -> bool:
        lo_ok = self.lo is None or (x > self.lo if self.lo_open else x >= self.lo)
        hi_ok = self.hi is None or (x < self.hi if self.hi_open else x <= self.hi)
        return lo_ok and hi_ok

    def type_text(self) -> str:
        return "whole number" if self.integer else "number"

    def allowed_text(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        if self.lo is not None and self.hi is not None and not (self.lo_open or self.hi_open):
            return f"{_g(self.lo)}{unit}" if self.lo == self.hi else f"{_g(self.lo)} to {_g(self.hi)}{unit}"
        bits = []
        if self.lo is not None:
            bits.append(f"{'above' if self.lo_open else 'at least'} {_g(self.lo)}")
        if self.hi is not None:
            bits.append(f"{'below' if self.hi_open else 'at most'} {_g(self.hi)}")
        return (" and ".join(bits) + unit) if bits else "any finite number"


@dataclass(frozen=True, eq=False)
class Text(Field):
    """Non-empty text, optionally matching a pattern (``UPPER_SNAKE``, ``LOWER_SNAKE`` or a regex)."""

    pattern: str = ""

    def read(self, raw: object, at: Where) -> str:
        if not isinstance(raw, str):
            raise at.fail(f"must be text in quotes (got {shown(raw)})")
        if not raw.strip():
            raise at.fail("must not be empty")
        if self.pattern and not re.fullmatch(self.pattern, raw):
            raise at.fail(f"must be {self._pattern_word()} (got {raw!r})")
        return raw

    def _pattern_word(self) -> str:
        return _PATTERN_WORDS.get(self.pattern, f"text matching {self.pattern}")

    def type_text(self) -> str:
        return "text"

    def allowed_text(self) -> str:
        return self._pattern_word() if self.pattern else "non-empty"


@dataclass(frozen=True, eq=False)
class Source(Text):
    """The source of a number: a citation, "common practice" or "from memory"; never empty."""

    name: str = "source"
    help: str = f"where it comes from: {SOURCE_HELP}"

    def read(self, raw: object, at: Where) -> str:
        if not isinstance(raw, str) or not raw.strip():
            raise self.missing(at)
        return raw.strip()

    def missing(self, at: Where) -> DataError:
        if len(at.path) > 1:
            return at.up().fail("has no source (cite it, or say 'common practice' or 'from memory')")
        return at.fail(f"is missing or empty (give {SOURCE_HELP})")


@dataclass(frozen=True, eq=False)
class Choice(Field):
    """One of a fixed set of words."""

    choices: tuple[str, ...] = ()

    def read(self, raw: object, at: Where) -> str:
        if not isinstance(raw, str) or raw not in self.choices:
            raise at.fail(f"must be one of {', '.join(self.choices)} (got {shown(raw)})")
        return raw

    def type_text(self) -> str:
        return "choice"

    def allowed_text(self) -> str:
        return ", ".join(f'"{c}"' for c in self.choices)


@dataclass(frozen=True, eq=False)
class Flag(Field):
    """A TOML boolean (``true``/``false`` unquoted); "yes", "no", 0 and 1 are refused."""

    def read(self, raw: object, at: Where) -> bool:
        if not isinstance(raw, bool):
            raise at.fail(f"must be true or false, unquoted (got {shown(raw)})")
        return raw

    def type_text(self) -> str:
        return "true/false"


@dataclass(frozen=True, eq=False)
class TextList(Field):
    """A list of non-empty text items."""

    def read(self, raw: object, at: Where) -> tuple[str, ...]:
        if not isinstance(raw, list):
            raise at.fail(f"must be a list of text like [\"a\", \"b\"] (got {shown(raw)})")
        for i, item in enumerate(raw):
            if not isinstance(item, str) or not item.strip():
                raise at.fail(f"item {i + 1} must be non-empty text (got {shown(item)})")
        return tuple(raw)

    def type_text(self) -> str:
        return "list of text"


def _unknown(key: str, known: Sequence[str], at: Where) -> DataError:
    import difflib  # only when a file is wrong

    close = difflib.get_close_matches(key, known, n=1, cutoff=0.6)
    if close:
        hint = f" (did you mean {close[0]!r}?)"
    elif len(known) <= 8:
        hint = f" (known: {', '.join(known)})"
    else:
        hint = " (see resources/SCHEMA.md)"
    if at.path:
        return at.fail(f"has unknown key {key!r}{hint}")
    return at.fail(f"unknown {'field' if at.entry else 'key'} {key!r}{hint}")


@dataclass(frozen=True, eq=False)
class Table(Field):
    """A table of declared fields (unknown keys refused), cross-field ``checks``, and an optional ``build``."""

    fields: tuple[Field, ...] = ()
    checks: tuple[Check, ...] = ()
    build: Callable[[dict[str, Any]], Any] | None = None

    def read(self, raw: object, at: Where) -> Any:
        if not isinstance(raw, dict):
            raise at.fail(f"must be a table like {self.type_text()} (got {shown(raw)})")
        return self.read_table(raw, at)

    @cached_property
    def _names(self) -> frozenset[str]:
        return frozenset(f.name for f in self.fields)

    def read_table(self, raw: dict[str, Any], at: Where) -> Any:
        for key in raw:
            if key not in self._names:
                raise _unknown(key, [f.name for f in self.fields], at)
        out: dict[str, Any] = {}
        for f in self.fields:
            if f.name in raw:
                out[f.name] = f.read(raw[f.name], at.at(f.name))
            elif f.required:
                raise f.missing(at.at(f.name))
            else:
                out[f.name] = f.default
        for check in self.checks:
            check(out, at)
        return self.build(out) if self.build else out

    def type_text(self) -> str:
        return "{ " + ", ".join(f.name for f in self.fields) + " }"

    def check_texts(self) -> list[str]:
        return [" ".join((c.__doc__ or c.__name__).split()) for c in self.checks]

    def doc_rows(self, prefix: str = "") -> list[tuple[str, ...]]:
        rows = super().doc_rows(prefix)
        if self.check_texts():
            row = list(rows[0])
            row[3] = "; ".join(self.check_texts())
            rows[0] = tuple(row)
        for f in self.fields:
            rows += f.doc_rows(f"{prefix}{self.name}{'[]' if isinstance(self, TableList) else ''}.")
        return rows


@dataclass(frozen=True, eq=False)
class SourcedNumber(Table):
    """``{ value = ..., source = "..." }`` (plus any ``extra`` keys); becomes ``Sourced`` when there are none."""

    unit: str = ""
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    extra: tuple[Field, ...] = ()

    def __post_init__(self) -> None:
        value = Number("value", unit=self.unit, lo=self.lo, hi=self.hi, lo_open=self.lo_open, hi_open=self.hi_open)
        object.__setattr__(self, "fields", (value, *self.extra, Source()))
        if not self.extra:
            object.__setattr__(self, "build", lambda v: Sourced(v["value"], v["source"]))

    def allowed_text(self) -> str:
        return self.fields[0].allowed_text()

    def doc_rows(self, prefix: str = "") -> list[tuple[str, ...]]:
        rows = Field.doc_rows(self, prefix)
        for f in self.extra:
            rows += f.doc_rows(f"{prefix}{self.name}.")
        return rows


@dataclass(frozen=True, eq=False)
class SpanField(Table):
    """``{ min, max, start, source }``: min < max (a zero-width range divides by zero), min <= start <= max.

    ``start_key`` names the starting value (``"value"`` for a normal value); ``None`` means there is none and
    the middle of the range is used.
    """

    unit: str = ""
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    start_key: str | None = "start"

    def __post_init__(self) -> None:
        def num(key: str) -> Number:
            return Number(key, unit=self.unit, lo=self.lo, hi=self.hi, lo_open=self.lo_open, hi_open=self.hi_open)
        keys = ("min", "max", *((self.start_key,) if self.start_key else ()))
        object.__setattr__(self, "fields", (*(num(k) for k in keys), Source()))
        object.__setattr__(self, "checks", (self._ordered,))
        object.__setattr__(self, "build", self._span)

    def _ordered(self, v: dict[str, Any], at: Where) -> None:
        if not v["min"] < v["max"]:
            zero = " (a zero-width range)" if v["min"] == v["max"] else ""
            raise at.fail(f"min {_g(v['min'])} must be below max {_g(v['max'])}{zero}")
        if self.start_key and not v["min"] <= v[self.start_key] <= v["max"]:
            raise at.fail(f"{self.start_key} {_g(v[self.start_key])} is outside min..max "
                          f"{_g(v['min'])}..{_g(v['max'])}")

    def _span(self, v: dict[str, Any]) -> Span:
        start = v[self.start_key] if self.start_key else (v["min"] + v["max"]) / 2
        return Span(v["min"], v["max"], start, v["source"])

    def allowed_text(self) -> str:
        order = f"min < max; min <= {self.start_key} <= max" if self.start_key else "min < max"
        return f"each {self.fields[0].allowed_text()}; {order}"

    def doc_rows(self, prefix: str = "") -> list[tuple[str, ...]]:
        return Field.doc_rows(self, prefix)


@dataclass(frozen=True, eq=False)
class Section(Table):
    """A top-level ``[name]`` table read as one entry (errors name ``[name]``)."""

    def read(self, raw: object, at: Where) -> Any:
        if not isinstance(raw, dict):
            raise at.fail(f"must be a table [{self.name}] (got {shown(raw)})")
        return self.read_table(raw, at.enter(f"[{self.name}]"))

    def type_text(self) -> str:
        return "table"


@dataclass(frozen=True, eq=False)
class Entries(Table):
    """Named entries ``[name.<key>]``, each a table of ``fields``; errors name ``<label> '<key>'``."""

    label: str = "entry"
    key_pattern: str = LOWER_SNAKE
    min_entries: int = 1
    entry_build: Callable[[str, dict[str, Any]], Any] | None = None

    def read(self, raw: object, at: Where) -> dict[str, Any]:
        if not isinstance(raw, dict):
            raise at.fail(f"must be tables [{self.name}.<key>] (got {shown(raw)})")
        if len(raw) < self.min_entries:
            raise at.fail(f"needs at least {self.min_entries} [{self.name}.<key>] table")
        out = {}
        for key, body in raw.items():
            where = at.enter(f"{self.label} {key!r}")
            if not re.fullmatch(self.key_pattern, key):
                raise where.fail(f"the key must be {_PATTERN_WORDS.get(self.key_pattern, self.key_pattern)}")
            if not isinstance(body, dict):
                raise where.fail(f"must be a table [{self.name}.{key}] (got {shown(body)})")
            values = self.read_table(body, where)
            out[key] = self.entry_build(key, values) if self.entry_build else values
        return out

    def type_text(self) -> str:
        return f"tables [{self.name}.<key>]"


@dataclass(frozen=True, eq=False)
class TableList(Table):
    """A list of tables (``[[name]]`` at the top level, ``name = [ {...}, ... ]`` inside an entry)."""

    min_items: int = 0
    label_key: str = ""  # errors name an item by this text field (``observation 'x1'``), else ``observation #1``

    def read(self, raw: object, at: Where) -> tuple[Any, ...]:
        if not isinstance(raw, list):
            raise at.fail(f"must be a list of tables (got {shown(raw)})")
        if len(raw) < self.min_items:
            raise at.fail(f"needs at least {self.min_items} entr{'y' if self.min_items == 1 else 'ies'}")
        return tuple(self.read_item(item, i, at) for i, item in enumerate(raw))

    def read_item(self, item: object, index: int, at: Where) -> Any:
        """Check item ``index`` (from 0) of the list; errors name it by ``label_key`` or by its number."""
        label = item.get(self.label_key) if self.label_key and isinstance(item, dict) else None
        tag = repr(label) if isinstance(label, str) and label.strip() else f"#{index + 1}"
        where = at.enter(f"{at.entry + ' ' if at.entry else ''}{self.name} {tag}")
        if not isinstance(item, dict):
            raise where.fail(f"must be a table (got {shown(item)})")
        return self.read_table(item, where)

    def type_text(self) -> str:
        return "list of tables"


@dataclass(frozen=True, eq=False)
class FileSchema:
    """One file in resources/: its top-level fields, cross-field checks, and the prose for SCHEMA.md."""

    name: str
    title: str
    fields: tuple[Field, ...]
    doc: str = ""
    checks: tuple[Check, ...] = ()
    version: int | None = 1  # the schema_version the file starts with; None for a file that carries none

    def read(self, document: dict[str, Any]) -> dict[str, Any]:
        """Check a parsed TOML document; return its values or raise one DataError line."""
        at = Where(self.name)
        if self.version is None:
            return Table(self.name, fields=self.fields, checks=self.checks).read_table(document, at)
        if "schema_version" not in document:
            raise at.at("schema_version").fail(f"is missing (must be {self.version})")
        if isinstance(version := document["schema_version"], bool) or version != self.version:
            raise at.at("schema_version").fail(f"must be {self.version} (got {shown(version)})")
        body = {k: v for k, v in document.items() if k != "schema_version"}
        return Table(self.name, fields=self.fields, checks=self.checks).read_table(body, at)
